"""`embedcheck show FILE`: summarise a chip file (or a folder of snapshots) or a patch file."""
from __future__ import annotations

import argparse
from typing import Any

from .options import emit, kind_of

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    show = sub.add_parser("show", help="summarise a chip or patch file")
    show.add_argument("file", metavar="FILE",
                      help="chip file, folder of chip snapshots, or patch file")
    show.add_argument("--format", choices=("text", "json"), default="text")
    show.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from ..io.chipfile import load_snapshots
    from ..io.patchfile import load_patch
    from ..report import data as report_data
    from ..report.text import render_chip, render_patch

    kind = "chip" if Path(args.file).is_dir() else kind_of(args.file)
    if kind == "chip":
        payload = report_data.chip_details(load_snapshots(args.file))
        text = render_chip(payload)
    else:
        payload = report_data.patch_details(load_patch(args.file))
        text = render_patch(payload)
    emit(args, payload, text)
    return 0
