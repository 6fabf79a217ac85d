"""`embedcheck validate FILE...`: check chip and patch files and say what is wrong."""
from __future__ import annotations

import argparse
import sys
from typing import Any

from ..errors import InputError
from .options import emit, kind_of

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    valid = sub.add_parser("validate", help="check chip and patch files and say what is wrong")
    valid.add_argument("files", nargs="+", metavar="FILE")
    valid.add_argument("--format", choices=("text", "json"), default="text")
    valid.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Every file is checked (not only up to the first bad one): valid ones on stdout,
    each bad one as its one-line error on stderr; exit 2 if any is bad."""
    from ..io.chipfile import load_device
    from ..io.patchfile import load_patch
    from ..model.patch import Patch
    from ..pipeline.requests import require_sound_detectors
    from ..version import __version__

    results: list[dict[str, Any]] = []
    bad = 0
    for path in args.files:
        try:
            kind = kind_of(path)
            obj = load_device(path) if kind == "chip" else load_patch(path)
            if isinstance(obj, Patch) and obj.detectors:
                require_sound_detectors(obj, path)
        except InputError as err:
            bad += 1
            print(f"embedcheck: error: {err}", file=sys.stderr)
            results.append({"file": path, "valid": False, "error": str(err)})
            continue
        results.append({"file": path, "kind": kind, "name": obj.name,
                        "qubits": obj.num_qubits, "valid": True})
    text = "\n".join(f"{r['file']}: valid {r['kind']} file '{r['name']}' ({r['qubits']} qubits)"
                     for r in results if r["valid"])
    if text or args.format == "json":
        emit(args, {"tool": "embedcheck", "version": __version__, "command": "validate",
                    "files": results}, text)
    return 2 if bad else 0
