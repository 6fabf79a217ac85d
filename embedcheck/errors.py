"""Error types, one per exit code of the command line, and the one-line message format.

- `InputError`: bad input from a user file, argument or API call (exit 2). Its `str` is
  the one line the command line prints: file:line: key: what is wrong.
- `InternalError`: a bug of ours found while running, such as the exact audit and
  qiskit's transpiler disagreeing (exit 3).

Findings are neither: a command that answered returns its answer (exit 0, or 1 where it
was asked to be strict or a CI rule fails). Any other exception reaching the command
line is a bug of ours too (exit 3).

An `InputError` is always one printable line (line breaks and control characters in a
file name are escaped), and names the file, line and key, never text found in the file:
`without_quotes` leaves the quoted input out of a third-party parser's message.

    >>> str(InputError("lost coupler", file="chip.yaml", line=7, key="couplers[3]"))
    'chip.yaml:7: couplers[3]: lost coupler'
    >>> did_you_mean("prepp", ["prep", "round"])
    " (did you mean 'prep'?)"
    >>> str(InputError("bad name", file="a\\nb.yaml"))
    'a\\\\nb.yaml: bad name'
"""
from __future__ import annotations

import difflib
import re
from collections.abc import Iterable

__all__ = ["InputError", "InternalError", "did_you_mean", "without_quotes"]


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
        return _one_line(f"{where}{key}{self.message}")


class InternalError(RuntimeError):
    """A bug of ours, found while running (the command line prints it and exits 3)."""


def did_you_mean(word: str, choices: Iterable[object]) -> str:
    """A ' (did you mean 'x'?)' hint, or '' when nothing is close."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


def without_quotes(message: str) -> str:
    """A third-party parser's message with every quoted piece of the input left out.

    Error messages are printed to CI logs, which are often public, and an input may be
    a file that should never have been read (a secret beside the patch file): messages
    name the file, line and key, never the text found there.

    >>> without_quotes("Gate not found: 'API_KEY=abc123'")
    'Gate not found: (text left out)'
    """
    return _QUOTED.sub(_leave_out, message).strip()


_QUOTED = re.compile(r"'[^'\n]*'|\"[^\"\n]*\"|`[^`\n]*`")


def _leave_out(match) -> str:
    """Quoted text goes; a quoted symbol of up to three characters (the ':' or ']' a YAML
    parser expected) stays, since it cannot carry a secret and says what is missing."""
    return match.group() if len(match.group()) <= 5 else "(text left out)"


def _one_line(text: str) -> str:
    """Line breaks and other unprintable characters (in a file name, say) escaped, so
    the message stays one line and cannot drive a terminal."""
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)
