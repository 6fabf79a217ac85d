"""`embedcheck draw CHIP [PATCH] -o FILE`: a picture of the chip, optionally with a placement
or a score map."""
from __future__ import annotations

import argparse
from typing import Any

from ..errors import InputError
from .options import emit, parse_placement, picture_bytes_for, positive_int, require_picture_path

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    draw = sub.add_parser("draw", help="draw a chip, optionally with a placement of a patch")
    draw.add_argument("chip", help="chip file (YAML)")
    draw.add_argument("patch", nargs="?", help="patch file (optional)")
    draw.add_argument("--output", "-o", required=True, help="picture file (.png or .svg)")
    pick = draw.add_mutually_exclusive_group()
    pick.add_argument("--placement", help="patch qubit=physical qubit pairs")
    pick.add_argument("--pick", type=positive_int, help="the placement ranked N by 'find'")
    pick.add_argument("--score-map", action="store_true",
                      help="shade qubits by the best score of any placement that uses them")
    draw.add_argument("--format", choices=("text", "json"), default="text")
    draw.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from ..io.chipfile import load_device
    from ..io.files import Outputs
    from ..io.patchfile import load_patch
    from ..pipeline.vet import vet_patch
    from ..report.picture import draw_placement, draw_score_map
    from ..version import __version__

    require_picture_path(args.output, "--output")
    device = load_device(args.chip)
    patch = load_patch(args.patch) if args.patch is not None else None
    outputs = Outputs()
    outputs.claim(args.output, option="--output")
    if patch is None:
        if args.placement or args.pick or args.score_map:
            raise InputError("--placement, --pick and --score-map need a patch file")
        figure = draw_placement(device, None)
        text = f"wrote {args.output}: chip '{device.name}'"
    else:
        if args.placement is not None:
            placement = parse_placement(args.placement, patch, device)
        else:
            vetting = vet_patch(device, patch)
            if not vetting.ranking.placements:
                raise InputError(f"patch '{patch.name}' has no placement on chip "
                                 f"'{device.name}' to draw (see 'embedcheck find')")
            if args.score_map:
                figure = draw_score_map(device, patch, vetting.ranking.placements,
                                        vetting.ranking.success, None)
                outputs.commit({args.output: picture_bytes_for(args.output, figure)})
                emit(args, {"tool": "embedcheck", "command": "draw", "file": args.output},
                     f"wrote {args.output}: where '{patch.name}' does best on '{device.name}'")
                return 0
            k = args.pick or 1
            if k > len(vetting.ranking.placements):
                raise InputError(f"--pick {k}: 'find' ranks only "
                                 f"{len(vetting.ranking.placements)} placement(s)")
            placement = vetting.ranking.placements[k - 1]
        figure = draw_placement(device, None, patch=patch, placement=placement)
        text = f"wrote {args.output}: '{patch.name}' on '{device.name}'"
    outputs.commit({args.output: picture_bytes_for(args.output, figure)})
    emit(args, {"tool": "embedcheck", "version": __version__, "command": "draw",
                "file": args.output}, text)
    return 0
