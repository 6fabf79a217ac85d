"""`embedcheck forecast CHIP --family F`: logical error per round per code distance on this
chip's calibration, whether a bigger code pays, and the scaled curves with their crossings.

Exit codes: 0 answered (an incomplete forecast, stopped by its budget, included: it says
so); 2 a bad chip or option; 3 a bug of ours; 130 interrupted (finished chunks are stored
in the samples file; rerun to resume).
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from ..io.limits import MAX_CODE_DISTANCE, MAX_CODE_ROUNDS, MAX_SHOTS
from .options import (
    add_executor_options,
    bounded_int,
    executor_from,
    executor_label,
    positive_float,
    positive_int,
    resumable,
    seed_value,
)

MAX_SCALES = 64          # scaled calibrations per forecast (each one samples every distance)

__all__ = ["add_parser", "default_samples_file", "run"]


def add_parser(sub: Any) -> None:
    """Register the `forecast` command on the command line's subparsers."""
    from ..model.codes import FAMILIES
    p = sub.add_parser("forecast", help="logical error per round per code distance on this "
                       "chip, whether a bigger code pays, and where distances cross")
    p.add_argument("chip", metavar="CHIP", help="chip file (YAML) or folder of snapshots "
                   "(the newest is used)")
    p.add_argument("--family", required=True,
                   choices=tuple(f for f in FAMILIES if f != "flagged"),
                   help="the built-in code family")
    p.add_argument("--distances", metavar="LIST",
                   help="code distances, e.g. 3,5,7 (default: 3, 5, ... up to --max-distance, "
                        "stopping at the first that does not fit)")
    p.add_argument("--max-distance", type=bounded_int(MAX_CODE_DISTANCE), default=9, metavar="D",
                   help="largest distance tried when --distances is not given (default 9)")
    p.add_argument("--rounds", type=bounded_int(MAX_CODE_ROUNDS), metavar="R",
                   help="check rounds of every patch (default: the distance)")
    p.add_argument("--basis", choices=("z", "x"), default="z",
                   help="memory basis (repetition code only; default z)")
    p.add_argument("--scales", metavar="LIST",
                   help="calibration scale factors for the curves (every error x s, T1 and "
                        "T2 / s), e.g. 0.25,0.5,1,2 (default 0.1,0.2,0.35,0.5,0.7,1,1.4,2; "
                        "1 is always included)")
    p.add_argument("--shots", type=bounded_int(MAX_SHOTS), default=20_000, metavar="N",
                   help="shots per point (default 20000)")
    p.add_argument("--max-errors", type=bounded_int(MAX_SHOTS), default=200, metavar="N",
                   help="stop a point once it has this many logical errors (default 200)")
    p.add_argument("--budget-s", type=positive_float, metavar="S",
                   help="stop sampling after this many seconds (default: no limit); the "
                        "report then says INCOMPLETE and a rerun adds to it")
    p.add_argument("--seed", type=seed_value, default=1, help="sampling seed (default 1)")
    p.add_argument("--samples", metavar="FILE",
                   help="SQLite file of finished sampling chunks, the resume (default: "
                        "CHIPNAME-FAMILY.forecast.sqlite beside --json or --picture, else in "
                        "the current folder)")
    p.add_argument("--limit", type=positive_int, default=10_000, metavar="N",
                   help="placements the search keeps per distance (default 10000)")
    p.add_argument("--search-budget-s", type=positive_float, default=60.0, metavar="S",
                   help="seconds for each distance's search (default 60)")
    add_executor_options(p, serial_help="sample in this process (no Dask)")
    p.add_argument("--json", metavar="FILE", help="also write the report as JSON here")
    p.add_argument("--picture", metavar="FILE",
                   help="draw logical error per round against the scale (.png or .svg)")
    p.add_argument("--format", choices=("text", "json"), default="text")
    p.set_defaults(run=run)


def default_samples_file(chip_name: str, family: str, beside: str | None) -> str:
    """CHIPNAME-FAMILY.forecast.sqlite in the folder of `beside` (an output), else here.

    >>> default_samples_file("grid 7x7", "surface", "out/report.json")
    'out/grid_7x7-surface.forecast.sqlite'
    """
    import re
    name = re.sub(r"[^A-Za-z0-9_.-]+", "_", f"{chip_name}-{family}") + ".forecast.sqlite"
    folder = Path(beside).parent if beside else Path(".")
    return str(folder / name)


def run(args: argparse.Namespace) -> int:
    import json

    from ..errors import InputError
    from ..io.chipfile import load_device
    from ..io.files import Outputs
    from ..pipeline.forecast import DEFAULT_SCALES, run_forecast
    from ..report.forecast import draw_forecast, forecast_dict, render_forecast_text
    from ..score.sampling import SampleStore
    from .options import announce_written, emit, finite, picture_bytes_for, require_picture_path

    distances = _distances(args.distances) if args.distances else None
    if args.distances is not None and not distances:
        raise InputError("--distances: give at least one distance, e.g. 3,5,7")
    scales = _scales(args.scales) if args.scales else DEFAULT_SCALES
    device = load_device(args.chip)
    outputs = Outputs(inputs=[args.chip])
    if args.json:
        outputs.claim(args.json, option="--json")
    if args.picture:
        require_picture_path(args.picture, "--picture")
        outputs.claim(args.picture, option="--picture")
    samples = args.samples or default_samples_file(device.name, args.family,
                                                   args.json or args.picture)
    outputs.vet_database(samples, option="--samples")
    bar = _Bar() if sys.stderr.isatty() else None
    store = SampleStore(samples)
    try:
        with resumable(bar, f"finished samples are stored in {samples}"), \
                executor_from(args) as executor:
            forecast = run_forecast(
                device, args.family, distances=distances, max_distance=args.max_distance,
                rounds=args.rounds, basis=args.basis, scales=scales, shots=args.shots,
                max_errors=args.max_errors, budget_s=args.budget_s, search_limit=args.limit,
                search_budget_s=args.search_budget_s, executor=executor, store=store,
                progress=bar, seed=args.seed)
    finally:
        store.close()
    payload = forecast_dict(forecast, chip_file=args.chip, samples_file=samples,
                            executor=executor_label(args))
    files: dict[str | Path, str | bytes] = {}
    if args.json:
        files[args.json] = json.dumps(finite(payload), indent=2, allow_nan=False) + "\n"
    if args.picture:
        files[args.picture] = picture_bytes_for(args.picture, draw_forecast(payload))
    outputs.commit(files)
    announce_written({path: "the forecast as JSON" if path == args.json else
                      "the forecast drawn" for path in files})
    emit(args, payload, render_forecast_text(payload))
    return 0


def _distances(text: str) -> list[int]:
    """'3,5,7' or '3-9' as sorted distances, each at most MAX_CODE_DISTANCE."""
    import re

    from ..errors import InputError
    from .options import int_list
    for number in re.findall(r"\d+", text):
        if int(number) > MAX_CODE_DISTANCE:
            raise InputError(f"--distances: {int(number)} is above the limit of "
                             f"{MAX_CODE_DISTANCE}")
    return int_list(text, "--distances", noun="distance")


def _scales(text: str) -> list[float]:
    import math

    from ..errors import InputError
    out = []
    for part in filter(None, (t.strip() for t in text.split(","))):
        try:
            value = float(part)
        except ValueError:
            raise InputError(f"--scales: '{part}' is not a number") from None
        if not math.isfinite(value) or value <= 0:
            raise InputError(f"--scales: '{part}' must be a positive number")
        out.append(value)
        if len(out) > MAX_SCALES:
            raise InputError(f"--scales: more than {MAX_SCALES} scales")
    if not out:
        raise InputError("--scales: give at least one scale, e.g. 0.5,1,2")
    return out



class _Bar:
    """Progress on stderr: a status line while searching, a tqdm bar of shots while sampling."""

    def __init__(self) -> None:
        self.bar: Any = None

    def __call__(self, stage: str, done: int, total: int) -> None:
        if stage == "search":
            if done < total:
                print(f"\r  searching distance {done + 1} of {total} ...", end="",
                      file=sys.stderr, flush=True)
            else:
                print("\r" + " " * 40 + "\r", end="", file=sys.stderr, flush=True)
            return
        if self.bar is None:
            from tqdm import tqdm
            self.bar = tqdm(total=total, unit="shot", unit_scale=True, file=sys.stderr,
                            leave=False, desc="  sampling")
        self.bar.total = total
        self.bar.n = done
        self.bar.refresh()

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
