"""The `embedcheck` command line: build the parser, run a command, map errors to exit codes.

Exit codes: 0 answered (findings included); 1 a finding the command was asked to fail on
(`--strict`, a failed CI rule; `repair --strict` that found no rewrite); 2 bad input or usage
(`InputError`: one line on stderr, no traceback, nothing written); 3 a bug of ours
(`InternalError`, or any other exception: one line, `EMBEDCHECK_TRACEBACK=1` shows the
traceback). Each command lives in a module of its own (`add_parser` and `run`).

    >>> main(["--version"])
    Traceback (most recent call last):
    ...
    SystemExit: 0
"""
from __future__ import annotations

import argparse
import os
import sys

from ..errors import InputError, InternalError
from ..version import __version__
from . import audit, check, code, draw, find, forecast, generate, repair, show, sweep, validate
from .options import Parser

__all__ = ["COMMANDS", "build_parser", "main"]

COMMANDS = (find, draw, audit, validate, check, repair, code, show, generate, sweep, forecast)


def build_parser() -> argparse.ArgumentParser:
    top = Parser(prog="embedcheck", description="Check that a QEC code patch sits on a chip's "
                 "fixed couplers with no added two-qubit gates, circuit by circuit.")
    top.add_argument("--version", action="version", version=f"embedcheck {__version__}")
    sub = top.add_subparsers(dest="command", parser_class=Parser)
    for command in COMMANDS:
        command.add_parser(sub)
    return top


def main(argv: list[str] | None = None) -> int:
    from ..io.files import forget_inputs

    forget_inputs()
    try:
        args = build_parser().parse_args(argv)
        if not getattr(args, "command", None):
            raise InputError("give a command: find, audit, check, repair, draw, code, validate, "
                             "show, generate, sweep or forecast (see 'embedcheck --help')")
        code: int = args.run(args)
        return code
    except InputError as err:
        print(f"embedcheck: error: {err}", file=sys.stderr)
        return 2
    except InternalError as err:
        print(f"embedcheck: internal error: {err}", file=sys.stderr)
        return 3
    except KeyboardInterrupt:
        print("embedcheck: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as err:                 # a bug of ours: one line, exit 3
        if os.environ.get("EMBEDCHECK_TRACEBACK"):
            raise
        message = " ".join(str(err).split())          # one line, whatever the message
        print(f"embedcheck: internal error: {type(err).__name__}: {message} (please report "
              "it; set EMBEDCHECK_TRACEBACK=1 for the traceback)", file=sys.stderr)
        return 3
