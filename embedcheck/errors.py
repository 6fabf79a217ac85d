"""One error type for every bad input, printed as one line: file:line: key: what is wrong."""
from __future__ import annotations

import difflib


class InputError(ValueError):
    """Bad input from a user file or argument. The command line prints `str(err)` and exits 2.

    >>> str(InputError("lost coupler", file="chip.yaml", line=7, key="couplers[3]"))
    'chip.yaml:7: couplers[3]: lost coupler'
    """

    def __init__(self, message: str, *, file: str | None = None, line: int | None = None,
                 key: str | None = None):
        self.message, self.file, self.line, self.key = message, file, line, key
        super().__init__(self.__str__())

    def __str__(self) -> str:
        where = ""
        if self.file:
            where = f"{self.file}:{self.line}: " if self.line else f"{self.file}: "
        key = f"{self.key}: " if self.key else ""
        return f"{where}{key}{self.message}"


def did_you_mean(word: str, choices) -> str:
    """A ' (did you mean 'x'?)' hint, or '' when nothing is close."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
