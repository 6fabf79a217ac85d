"""`embedcheck generate FAMILY`: a chip file for a lattice family, with a placeholder
calibration that says so."""
from __future__ import annotations

import argparse
import sys
from typing import Any

from ..errors import InputError
from .options import emit, positive_int

__all__ = ["CHIP_FAMILIES", "add_parser", "run"]

# Lattice families and their size options (`embedcheck.model.lattices.FAMILIES`, listed
# here so that building the parser does not import the model; a test keeps them equal).
CHIP_FAMILIES = {"heavy-hex": ("rows", "columns"), "hexagonal": ("rows", "columns"),
                 "line": ("size",), "ring": ("size",), "square-grid": ("rows", "columns")}


def add_parser(sub: Any) -> None:
    gen = sub.add_parser("generate", help="write a chip file for a lattice family "
                         "(placeholder calibration)")
    gen.add_argument("family", choices=sorted(CHIP_FAMILIES))
    gen.add_argument("--rows", type=positive_int)
    gen.add_argument("--columns", type=positive_int)
    gen.add_argument("--size", type=positive_int, help="qubits, for line and ring")
    gen.add_argument("--name", help="chip name (default: from the family and size)")
    gen.add_argument("--output", "-o", help="file to write (default: standard output); an "
                     "existing file is kept unless --force")
    gen.add_argument("--force", action="store_true", help="replace an existing --output file")
    gen.add_argument("--format", choices=("text", "json"), default="text",
                     help="json: one object with the chip file's text")
    gen.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from ..io.files import Outputs
    from ..io.limits import check_count, family_qubits, max_qubits
    from ..io.writers import family_chip_yaml
    from ..model.lattices import build_family
    from ..version import __version__

    params = CHIP_FAMILIES[args.family]
    size = {p: getattr(args, p) for p in params}
    missing = [f"--{p}" for p, v in size.items() if v is None]
    if missing:
        raise InputError(f"family '{args.family}' needs {' and '.join(missing)}")
    extra = [f"--{p}" for p in ("rows", "columns", "size") if p not in params
             and getattr(args, p) is not None]
    if extra:
        raise InputError(f"family '{args.family}' does not take {', '.join(extra)}")
    name = args.name or f"{args.family}-" + "x".join(str(v) for v in size.values())
    check_count(family_qubits(args.family, **size), max_qubits(), what="qubits",
                setting="EMBEDCHECK_MAX_QUBITS",
                detail=" ".join(f"--{p} {v}" for p, v in size.items()) + ": ")
    build_family(args.family, **size)            # refuses sizes the family cannot take
    text = family_chip_yaml(args.family, name, **size)
    if args.output:
        outputs = Outputs()
        outputs.claim(args.output, option="--output", overwrite=args.force,
                      force_option="--force")
        outputs.commit({args.output: text})
        print(f"wrote {args.output}: chip '{name}' with PLACEHOLDER calibration", file=sys.stderr)
    if args.format == "json":
        emit(args, {"tool": "embedcheck", "version": __version__, "command": "generate",
                    "name": name, "file": args.output, "text": text}, "")
    elif not args.output:
        sys.stdout.write(text)
    return 0
