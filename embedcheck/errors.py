"""Error types, one per exit code of the command line, and the one-line message format.

- `InputError`: bad input from a user file, argument or API call (exit 2). Its `str` is
  the one line the command line prints: file:line: key: what is wrong.
- `InternalError`: a bug of ours found while running, such as the exact audit and
  qiskit's transpiler disagreeing (exit 3).

Findings are neither: a command that answered returns its answer (exit 0, or 1 where it
was asked to be strict or a CI rule fails). Any other exception reaching the command
line is a bug of ours too (exit 3).

    >>> str(InputError("lost coupler", file="chip.yaml", line=7, key="couplers[3]"))
    'chip.yaml:7: couplers[3]: lost coupler'
    >>> did_you_mean("prepp", ["prep", "round"])
    " (did you mean 'prep'?)"
"""
from __future__ import annotations

import difflib
from collections.abc import Iterable

__all__ = ["InputError", "InternalError", "did_you_mean"]


class InputError(ValueError):
    """Bad input from a user file or argument. The command line prints `str(err)` and exits 2.

    A `ValueError`, so callers written for the library's older bare `ValueError`s keep working.
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


class InternalError(RuntimeError):
    """A bug of ours, found while running (the command line prints it and exits 3)."""


def did_you_mean(word: str, choices: Iterable[object]) -> str:
    """A ' (did you mean 'x'?)' hint, or '' when nothing is close."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
