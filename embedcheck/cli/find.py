"""`embedcheck find CHIP PATCH`: find, audit and rank every swap-free placement."""
from __future__ import annotations

import argparse
import re
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..io.limits import MAX_SHOTS
from .options import (
    add_common,
    add_constraint_options,
    add_html_option,
    add_search_options,
    announce_written,
    bounded_int,
    emit,
    max_processes,
    picture_bytes_for,
    progress_printer,
    request_constraints,
    require_html_path,
    require_picture_path,
    top_count,
)

__all__ = ["add_parser", "run"]

# The same as pipeline.vet.DEFAULT_BUDGET_WORK (a test compares them): written out here so
# that `--help` imports no scientific library.
DEFAULT_BUDGET_WORK = 50_000_000


def add_parser(sub: Any) -> None:
    find = sub.add_parser("find", help="find, audit and rank every swap-free placement")
    add_common(find)
    add_search_options(find)
    find.add_argument("--budget-work", type=bounded_int(10**12), default=DEFAULT_BUDGET_WORK,
                      metavar="UNITS",
                      help="stop the search after this much work: partial placements tried "
                           f"(default {DEFAULT_BUDGET_WORK:.0e}, some 20 s); unlike "
                           "--budget-s it stops identical runs at the same place")
    add_constraint_options(find)
    find.add_argument("--top", type=top_count, default=10,
                      help="placements to list (default 10; 'all' lists every one, e.g. "
                           "for --format json)")
    find.add_argument("--strict", action="store_true",
                      help="exit 1 unless every circuit is swap-free on the best placement")
    find.add_argument("--over-snapshots", default="worst", metavar="HOW",
                      help="with several calibration snapshots, rank by 'worst' (default), "
                           "'mean' or a quantile such as 'q0.25' of the per-snapshot score")
    find.add_argument("--draw", metavar="FILE", help="draw the best placement on the chip "
                      "(.png or .svg)")
    find.add_argument("--score-map", metavar="FILE", help="draw every qubit shaded by the best "
                      "score of any placement that uses it (.png or .svg)")
    find.add_argument("--figure", choices=("auto", "estimate", "undetected", "kept",
                                           "fidelity_product"),
                      default="auto",
                      help="what ranks the placements: 'estimate' (leading-order decoded "
                           "logical error from stim's detector error model and matching's "
                           "own decisions), 'undetected' (lowest-order rate of logical errors "
                           "no detector sees), 'kept' (fraction of shots kept by "
                           "post-selection) or 'fidelity_product'; 'auto' (default) takes "
                           "'undetected' for codes of fault distance 1 or 2 and 'estimate' for "
                           "larger ones when the patch declares detectors and an observable "
                           "and every circuit is swap-free, else 'fidelity_product'")
    find.add_argument("--monte-carlo", type=bounded_int(MAX_SHOTS), metavar="SHOTS",
                      help="also sample up to SHOTS noisy shots of each listed placement with "
                           "stim")
    find.add_argument("--decode", action="store_true",
                      help="with --monte-carlo, decode by matching (pymatching); with "
                           "--figure auto, the listed placements are then sampled adaptively "
                           "and ranked by their decoded logical error")
    find.add_argument("--processes", type=bounded_int(max_processes()), default=1,
                      help="worker processes for the placement search, the logical scores "
                           "and the sampling (default 1)")
    find.add_argument("--compare-sdk", action="store_true",
                      help="also run qiskit's VF2Layout on the whole experiment and say where "
                           "its choice ranks under our model")
    add_html_option(find)
    find.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    import numpy as np

    from ..io.chipfile import load_snapshots
    from ..io.files import Outputs
    from ..io.patchfile import load_patch
    from ..pipeline.find import run_find
    from ..report.data import find_dict
    from ..report.picture import draw_placement, draw_score_map
    from ..report.text import render_find

    snapshots, patch = load_snapshots(args.chip), load_patch(args.patch)
    device = snapshots[-1]
    by = args.over_snapshots
    if by not in ("worst", "mean") and not re.fullmatch(r"q(0(\.\d+)?|1(\.0*)?)", by):
        raise InputError(f"--over-snapshots: '{by}' should be worst, mean or q<fraction> "
                         "such as q0.25")
    outputs = Outputs()
    for target, option in ((args.draw, "--draw"), (args.score_map, "--score-map")):
        if target:
            require_picture_path(target, option)
            outputs.claim(target, option=option)
    if args.html:
        require_html_path(args.html)
        outputs.claim(args.html, option="--html")
    constraints = request_constraints(args, patch, device)
    if args.decode and not args.monte_carlo:
        raise InputError("--decode decodes sampled shots: give --monte-carlo SHOTS too")
    progress = progress_printer()
    try:
        result = run_find(snapshots, patch, limit=args.limit, budget_s=args.budget_s,
                          constraints=constraints, processes=args.processes, top=args.top,
                          figure=args.figure, monte_carlo=args.monte_carlo or 0,
                          decode=args.decode, over_snapshots=by,
                          compare_sdk=args.compare_sdk, progress=progress,
                          budget_work=args.budget_work,
                          on_effort=getattr(progress, "effort", None))
    finally:
        if progress is not None:
            progress.done()           # type: ignore[attr-defined]
    payload = find_dict(result)
    vetting, logical = result.vetting, result.logical
    pictures: dict[str | Path, str | bytes] = {}
    if args.draw and vetting.ranking.placements:
        best = result.best or vetting.ranking.placements[0]
        pictures[args.draw] = picture_bytes_for(args.draw, draw_placement(
            device, None, patch=patch, placement=best,
            title=f"{patch.name} on {device.name}: best placement"))
        payload["pictures"] = {**payload.get("pictures", {}), "placement": args.draw}
    elif args.draw:                          # nothing to place: the chip alone, titled so
        pictures[args.draw] = picture_bytes_for(args.draw, draw_placement(
            device, None, title=f"{device.name}: no placement of {patch.name} to draw"))
        payload["pictures"] = {**payload.get("pictures", {}), "placement": args.draw}
    if args.score_map and not vetting.ranking.placements:
        payload["logical_note"] = (payload.get("logical_note", "") + "; " if
                                   payload.get("logical_note") else "") + \
            f"no placement to shade, so --score-map wrote nothing to {args.score_map}"
    if args.score_map and vetting.ranking.placements:
        if logical is not None:
            deterministic = logical.estimate if logical.estimate is not None else \
                logical.undetected
            if logical.figure == "kept" and logical.kept is not None:
                values, label = logical.kept, "kept fraction"
            else:
                assert deterministic is not None
                values = -np.log10(np.maximum(deterministic, 1e-12))
                label = ("-log10 decoded estimate" if logical.estimate is not None
                         else "-log10 undetected rate")
            figure = draw_score_map(device, patch, logical.placements, values, None,
                                    label=f"best {label} using it (higher is better)")
        else:
            figure = draw_score_map(device, patch, vetting.ranking.placements,
                                    vetting.ranking.success, None)
        pictures[args.score_map] = picture_bytes_for(args.score_map, figure)
        payload["pictures"] = {**payload.get("pictures", {}), "score_map": args.score_map}
    if args.html:
        from ..report.html import render_html
        from ..report.svg import placement_svg
        svgs = {}
        if vetting.ranking.placements:
            best = result.best or vetting.ranking.placements[0]
            gates = [g for c in (payload.get("best_audit") or {}).get("circuits", [])
                     for g in c["off_coupler"]]
            svgs["best placement"] = placement_svg(device, patch, best.as_dict(patch), gates,
                                                   title=f"{patch.name} on {device.name}")
        else:
            svgs["the chip (no placement)"] = placement_svg(device, patch, None,
                                                            title=device.name)
        pictures[args.html] = render_html(payload, pictures=svgs)
    outputs.commit(pictures)
    labels = {args.draw: "the best placement drawn on the chip",
              args.score_map: "every qubit shaded by its best score",
              args.html: "the HTML report"}
    announce_written({path: labels[path] for path in pictures})
    emit(args, payload, render_find(payload))
    return 1 if args.strict and not vetting.all_swap_free else 0
