"""`embedcheck sweep FILE`: run (or resume) a fleet sweep and report it.

Exit codes: 0 every unit done; 1 some units failed (each error is stored and listed);
2 a bad sweep file or option; 3 a bug of ours; 130 interrupted (finished tasks are
stored; rerun to resume).
"""
from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from .options import (
    add_executor_options,
    announce_written,
    executor_from,
    executor_label,
    resumable,
)

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    """Register the `sweep` command on the command line's subparsers."""
    sweep = sub.add_parser("sweep", help="run chips x snapshots x patches on Dask and store the "
                           "results in a database (a rerun resumes)")
    sweep.add_argument("file", metavar="SWEEP", help="sweep file (YAML)")
    add_executor_options(sweep, serial_help="run every task in this process (no Dask; for "
                                            "debugging)")
    sweep.add_argument("--database", metavar="FILE",
                       help="SQLite results file (default: the sweep file's 'database', else "
                            "<sweep>.sqlite beside it)")
    sweep.add_argument("--report-only", action="store_true",
                       help="run nothing: report what the database holds")
    sweep.add_argument("--json", metavar="FILE", help="also write the report as JSON here")
    sweep.add_argument("--markdown", metavar="FILE", help="also write the report as Markdown here")
    sweep.add_argument("--picture", metavar="FILE",
                       help="draw the best figure per chip and day (.png or .svg)")
    sweep.add_argument("--format", choices=("text", "json"), default="text")
    sweep.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from ..errors import InputError
    from ..io.files import Outputs
    from ..io.sweepfile import load_sweep
    from ..report.sweep import draw_sweep, render_sweep_markdown, render_sweep_text
    from ..score.cost import CAUTION
    from ..sweep import ResultStore, run_sweep, summarise
    from ..version import __version__

    sweep = load_sweep(args.file)
    database = args.database or sweep.database
    outputs = Outputs(inputs=[c for c, _ in sweep.chips] + [p.file for p in sweep.patches
                                                           if p.file])
    _check_database(database, outputs)
    for option, target in (("--json", args.json), ("--markdown", args.markdown),
                           ("--picture", args.picture)):
        if target:
            if option == "--picture" and Path(target).suffix.lower() not in (".png", ".svg"):
                raise InputError(f"{option}: pictures are written as .png or .svg", file=target)
            outputs.claim(target, option=option)
    run = None
    if not args.report_only:
        run = _run(args, sweep, database, run_sweep)
    store = ResultStore(database)
    try:
        summary = summarise(store)
    finally:
        store.close()
    payload = {"tool": "embedcheck", "version": __version__, "command": "sweep",
               "name": sweep.name, "file": sweep.file, "database": database, **summary,
               "run": run, "caution": CAUTION}
    files: dict = {}
    if args.json:
        files[args.json] = json.dumps(payload, indent=2) + "\n"
    if args.markdown:
        files[args.markdown] = render_sweep_markdown(payload)
    if args.picture:
        import io
        buffer = io.BytesIO()
        draw_sweep(payload).savefig(buffer, format=Path(args.picture).suffix.lower()[1:])
        files[args.picture] = buffer.getvalue()
    outputs.commit(files)
    announce_written({path: {args.json: "the sweep report as JSON",
                             args.markdown: "the sweep report as Markdown"}.get(
                                 path, "the sweep drawn") for path in files})
    if args.format == "json":
        json.dump(payload, sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        print(render_sweep_text(payload))
    return 1 if summary["failed"] or (run and run["failed_samples"]) else 0


def _run(args, sweep, database, run_sweep) -> dict:
    bar = _progress_bar()
    with resumable(bar, f"finished tasks are stored in {database}"), \
            executor_from(args) as executor:
        outcome = run_sweep(sweep, executor=executor, database=database,
                            progress=bar.update if bar else None)
    return {"executor": executor_label(args),
        "computed": outcome.computed, "skipped": outcome.skipped, "units": outcome.units,
        "failed_units": len(outcome.failed_units), "failed_samples": outcome.failed_samples}


class _Bar:
    """A progress bar on stderr (tqdm) whose total grows as sampling tasks are added."""

    def __init__(self):
        from tqdm import tqdm
        self.bar = tqdm(total=0, unit="task", file=sys.stderr, leave=False,
                        desc="  sweeping")

    def update(self, done: int, total: int) -> None:
        self.bar.total = total
        self.bar.n = done
        self.bar.refresh()

    def close(self) -> None:
        self.bar.close()


def _progress_bar():
    return _Bar() if sys.stderr.isatty() else None


def _check_database(database: str, outputs) -> None:
    """The results file must not be an input, and if it exists it must be an SQLite file."""
    outputs.vet_database(database, option="database")
