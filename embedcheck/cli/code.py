"""`embedcheck code FAMILY`: write a patch file for a built-in code family, checked."""
from __future__ import annotations

import argparse
import sys
from typing import Any

from ..errors import InputError, InternalError
from ..io.limits import MAX_CODE_DISTANCE, MAX_CODE_ROUNDS
from .options import bounded_int, emit, stage_printer

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    code = sub.add_parser("code", help="write a patch file for a built-in code family")
    code.add_argument("family", choices=("repetition", "flagged", "surface", "heavy-hex",
                                         "heavy-hex-chipfit"),
                      help="the code family (see the README: 'embedcheck code')")
    code.add_argument("--distance", type=bounded_int(MAX_CODE_DISTANCE), default=3,
                      help="code distance (default 3; odd for surface and heavy-hex, at least 2 "
                           f"for repetition; at most {MAX_CODE_DISTANCE}; ignored by flagged)")
    code.add_argument("--rounds", type=bounded_int(MAX_CODE_ROUNDS), default=2,
                      help="check rounds the experiment runs between prep and readout "
                           f"(default 2, at most {MAX_CODE_ROUNDS})")
    code.add_argument("--basis", choices=("z", "x"), default="z",
                      help="repetition code: z (bit-flip) or x (phase-flip)")
    code.add_argument("--prep", choices=("unitary", "naive", "product"),
                      help="flagged unit: cat state over its couplers (default), the naive "
                           "chain, or a product state")
    code.add_argument("--output", "-o", help="file to write (default: standard output)")
    code.add_argument("--format", choices=("text", "json"), default="text",
                      help="json: one object with the patch file's text")
    code.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from ..io.files import Outputs
    from ..pipeline.codes import build_code
    from ..version import __version__

    outputs = Outputs()
    if args.output:
        outputs.claim(args.output, option="--output", overwrite=False)
    stages = stage_printer("code")
    try:
        code = build_code(args.family, distance=args.distance, rounds=args.rounds,
                          basis=args.basis, prep=args.prep, progress=stages)
    except InputError as err:      # a limit of the loader: name the options, not a temp file
        raise InputError(f"code {args.family} --distance {args.distance} --rounds "
                         f"{args.rounds}: {err.message}") from None
    finally:
        if stages is not None:
            stages.done()
    if code.problems:                # our own family failing is a bug, never a user error
        raise InternalError(code.problems[0].message)
    patch, text = code.patch, code.text
    distance, bound = code.fault_distance, code.fault_distance_at_most
    if args.output:
        outputs.commit({args.output: text})
        if bound is not None:
            shown: object = (f"at most {bound} (graphlike faults only: the exhaustive search is "
                             f"skipped above 150 detectors)")
        else:
            shown = "infinite" if distance == float("inf") else distance
        print(f"wrote {args.output}: patch '{patch.name}', {patch.num_qubits} qubits, "
              f"{len(patch.detectors)} detectors (all deterministic without noise), "
              f"circuit-level fault distance {shown}", file=sys.stderr)
        low = distance if isinstance(distance, int) else bound
        if args.family != "flagged" and isinstance(low, int) and low < args.distance:
            print(f"embedcheck: warning: fault distance {'' if low == distance else 'at most '}"
                  f"{low} is below the code distance {args.distance}", file=sys.stderr)
    if args.format == "json":
        emit(args, {"tool": "embedcheck", "version": __version__, "command": "code",
                    "name": patch.name, "file": args.output, "text": text,
                    "fault_distance": "infinite" if distance == float("inf") else distance,
                    "fault_distance_at_most": bound}, "")
    elif not args.output:
        sys.stdout.write(text)
    return 0
