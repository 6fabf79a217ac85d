"""The forecast report: the JSON-ready dict, the terminal table and the picture.

Formatting only: every figure comes from `pipeline.forecast.run_forecast`. The dict is
what `embedcheck forecast --format json` prints (`schemas/forecast-report.schema.json`);
the text and the picture are drawn from that dict, so all three say the same. The picture
is drawn on its own `matplotlib.figure.Figure` (the global backend is left alone, so a
notebook's own plots keep working).

    >>> row = _point_row({"errors": 3, "shots": 1000, "per_round": 0.0015,
    ...                   "per_round_low": 0.0005, "per_round_high": 0.0044})
    >>> row
    '1.50e-03 [5.0e-04, 4.4e-03]'
"""
from __future__ import annotations

import math
from typing import Any

from ..pipeline.forecast import Forecast, ForecastPoint
from ..score.cost import CAUTION
from ..version import __version__
from .data import PLACEHOLDER_WARNING, family_hint

__all__ = ["draw_forecast", "forecast_dict", "render_forecast_text"]

Json = dict[str, Any]

FORECAST_CAUTION = (CAUTION + " A forecast samples a model of the chip built from that "
                    "calibration (depolarizing gates, readout flips, idling from T1/T2); the "
                    "scaled curves assume every figure moves together.")


def forecast_dict(forecast: Forecast, *, chip_file: str | None = None,
                  samples_file: str | None = None, executor: str | None = None) -> Json:
    """The forecast as JSON-ready data (non-finite numbers become null)."""
    searches = []
    for s in forecast.searches:
        row: Json = {"distance": s.distance, "rounds": s.rounds, "patch": s.patch.name,
                     "patch_qubits": s.patch.num_qubits, "placements": s.placements,
                     "search_complete": s.search_complete, "skipped": s.skipped,
                     "best": None, "median": None}
        for which in ("best", "median"):
            placement = getattr(s, which)
            if placement is not None:
                row[which] = {"placement": placement.as_dict(s.patch),
                              "region": sorted(placement.physical)}
        searches.append(row)
    return {
        "tool": "embedcheck", "version": __version__, "command": "forecast",
        "chip": {"name": forecast.chip, "file": chip_file,
                 "calibration_timestamp": forecast.calibration_timestamp,
                 "median_two_qubit_error": _num(forecast.median_two_qubit_error),
                 "placeholder_calibration": forecast.placeholder_calibration},
        "family": forecast.family, "basis": forecast.basis, "ranking": forecast.ranking,
        "scales": list(forecast.scales),
        "sampling": {"shots": forecast.shots, "max_errors": forecast.max_errors,
                     "seed": forecast.seed, "samples_file": samples_file,
                     "executor": executor, "reused_shots": forecast.reused_shots,
                     "new_shots": forecast.new_shots,
                     "stopped_by_budget": forecast.stopped_by_budget,
                     "complete": forecast.complete},
        "distances": searches,
        "points": [_point(p) for p in forecast.points],
        "suppression": [{"smaller": s.smaller, "larger": s.larger, "scale": s.scale,
                         "factor": _num(s.factor), "low": _num(s.low), "high": _num(s.high),
                         "verdict": s.verdict, "sentence": s.sentence}
                        for s in forecast.suppression],
        "crossings": [{"smaller": c.smaller, "larger": c.larger, "scale": _num(c.scale),
                       "between": list(c.between) if c.between else None,
                       "resolved": c.resolved, "two_qubit_error": _num(c.two_qubit_error),
                       "note": c.note} for c in forecast.crossings],
        "caution": FORECAST_CAUTION,
        **_hint(forecast),
    }


def _point(p: ForecastPoint) -> Json:
    shot_low, shot_high = p.per_shot_interval
    round_low, round_high = p.per_round_interval
    return {"distance": p.distance, "placement": p.placement, "scale": p.scale,
            "rounds": p.rounds, "shots": p.shots, "errors": p.errors, "done": p.done,
            "per_shot": _num(p.per_shot), "per_shot_low": _num(shot_low),
            "per_shot_high": _num(shot_high), "per_round": _num(p.per_round),
            "per_round_low": _num(round_low), "per_round_high": _num(round_high)}


def _num(value: float | None) -> float | None:
    return None if value is None or not math.isfinite(value) else float(value)


def _points(payload: Json, distance: int, placement: str = "best") -> list[Json]:
    return sorted((p for p in payload["points"] if p["distance"] == distance
                   and p["placement"] == placement), key=lambda p: p["scale"])


def _point_row(p: Json | None) -> str:
    if p is None or not p["shots"]:
        return "not sampled"
    if not p["errors"]:
        return f"< {p['per_round_high']:.1e} (0 errors)"
    return f"{p['per_round']:.2e} [{p['per_round_low']:.1e}, {p['per_round_high']:.1e}]"


def _factor(value: float | None) -> str:
    return "inf" if value is None else f"{value:.3g}"


def _ranking_words(ranking: str) -> str:
    if ranking == "estimate":         # what pipeline.forecast.rank_by_estimate does
        return ("the decoded-logical estimate (leading order: ceil(d/2) faults, from the "
                "detector error model; at distance 3 to 5 and up to 1000 placements, else "
                "the fidelity product)")
    return ranking.replace("_", " ")


def _hint(forecast: Forecast) -> Json:
    """The family to try instead when a distance was skipped for want of couplers."""
    family = next((s.fitting_family for s in forecast.searches if s.fitting_family), None)
    if family is None:
        return {}
    return {"fitting_family": family, "hint": family_hint(family, how=f"--family {family}")}


def render_forecast_text(payload: Json) -> str:
    """The forecast for a terminal: per distance today, the verdicts, the scaled table."""
    chip, sampling = payload["chip"], payload["sampling"]
    median = chip["median_two_qubit_error"]
    lines = [f"Forecast: {payload['family']} code ({payload['basis'].upper()} memory) on chip "
             f"'{chip['name']}'" + (f", calibration of {chip['calibration_timestamp']}"
                                    if chip["calibration_timestamp"] else ""),
             f"  placements ranked by {_ranking_words(payload['ranking'])}; up to "
             f"{sampling['shots']} shots or {sampling['max_errors']} logical errors per point; "
             f"{sampling['new_shots']} shots sampled now, {sampling['reused_shots']} reused"
             + (f" from {sampling['samples_file']}" if sampling["samples_file"] else ""),
             *([PLACEHOLDER_WARNING + "."] if chip.get("placeholder_calibration") else []),
             "", "Logical error per round at today's calibration (decoded by matching; 95% "
             "interval):",
             f"  {'d':>2} {'rounds':>6} {'qubits':>6} {'placements':>10}  "
             f"{'best placement':<32} {'median placement':<32}"]
    for s in payload["distances"]:
        if s["skipped"] is not None:
            lines.append(f"  {s['distance']:>2} {s['rounds']:>6} {s['patch_qubits']:>6} "
                         f"{s['placements']:>10}  skipped: {s['skipped']}")
            continue
        today = {p["placement"]: p for p in payload["points"]
                 if p["distance"] == s["distance"] and p["scale"] == 1.0}
        found = f"{s['placements']}" + ("" if s["search_complete"] else "+")
        lines.append(f"  {s['distance']:>2} {s['rounds']:>6} {s['patch_qubits']:>6} "
                     f"{found:>10}  {_point_row(today.get('best')):<32} "
                     f"{_point_row(today.get('median')):<32}")
    if payload.get("hint"):
        lines.append(f"  {payload['hint']}")
    for s in payload["distances"]:
        if s["best"] is not None:
            region = s["best"]["region"]
            shown = "chip qubits " + ",".join(map(str, region)) if len(region) <= 16 else \
                f"{len(region)} chip qubits, numbered {region[0]} to {region[-1]}"
            lines.append(f"  best region for d={s['distance']}: {shown}")
    verdicts = [v for v in payload["suppression"] if v["scale"] == 1.0]
    if verdicts:
        lines += ["", "Does a bigger code pay? Suppression factor Lambda = eps_d / eps_(d+2) per "
                  "round (interval from the two 95% intervals):"]
        for v in verdicts:
            lines.append(f"  {v['smaller']} -> {v['larger']}: Lambda {_factor(v['factor'])} "
                         f"[{_factor(v['low'])}, {_factor(v['high'])}]: {v['sentence']}")
    distances = [s["distance"] for s in payload["distances"] if s["skipped"] is None]
    if distances:
        lines += ["", "Scaled calibration (every error x s, T1 and T2 / s): logical error per "
                  "round of the best placement"]
        header = f"  {'scale':>6} {'2q error':>9}" + "".join(f"  {'d=' + str(d):<30}"
                                                          for d in distances)
        lines.append(header)
        for scale in payload["scales"]:
            error = f"{scale * median:.2%}" if median is not None else "-"
            row = f"  {scale:>6g} {error:>9}"
            for d in distances:
                point = next((p for p in _points(payload, d) if p["scale"] == scale), None)
                row += f"  {_point_row(point):<30}"
            lines.append(row + ("   <- today" if scale == 1.0 else ""))
        for c in payload["crossings"]:
            where = ""
            if c["scale"] is not None:
                where = f"at scale {c['scale']:.3g}" + (
                    f" (median two-qubit error {c['two_qubit_error']:.2%})"
                    if c["two_qubit_error"] is not None else "") + (
                    f", between the sampled scales {c['between'][0]:g} and "
                    f"{c['between'][1]:g}: ")
            lines.append(f"  crossing {c['smaller']}/{c['larger']}: {where}{c['note']}")
    if not sampling["complete"]:
        why = ("the time budget stopped the sampling" if sampling["stopped_by_budget"]
               else "a search or a point did not finish")
        lines += ["", f"INCOMPLETE: {why}; rerun (same samples file) to add to it."]
    lines += ["", payload["caution"]]
    return "\n".join(lines)


# Okabe & Ito, "Color Universal Design" (2008): readable with colour-vision deficiency.
_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
_MARKERS = ("o", "s", "D", "^", "v", "P", "X")


def draw_forecast(payload: "Json | Forecast"):
    """Logical error per round against the calibration scale, one curve per distance
    (best placement; bands: 95% intervals; the median placement hollow at today's
    calibration; zero-error points as upper bounds). Takes a `Forecast` or its
    `forecast_dict` document (a saved JSON report read back). Returns a `Figure`."""
    if not isinstance(payload, dict):
        payload = forecast_dict(payload)
    from matplotlib.figure import Figure
    from matplotlib.ticker import NullFormatter
    fig = Figure(figsize=(7.0, 4.8), dpi=100, layout="constrained")
    ax = fig.add_subplot()
    distances = [s["distance"] for s in payload["distances"] if s["skipped"] is None]
    drawn = bounded = False
    for i, d in enumerate(distances):
        colour, marker = _COLOURS[i % len(_COLOURS)], _MARKERS[i % len(_MARKERS)]
        points = [p for p in _points(payload, d) if p["shots"]]
        seen = [p for p in points if p["errors"]]
        if seen:
            ax.plot([p["scale"] for p in seen], [p["per_round"] for p in seen], color=colour,
                    marker=marker, label=f"d = {d}", gid=f"distance {d}")
            ax.fill_between([p["scale"] for p in seen], [p["per_round_low"] for p in seen],
                            [p["per_round_high"] for p in seen], color=colour, alpha=0.18,
                            linewidth=0)
            drawn = True
        bounds = [p for p in points if not p["errors"]]
        if bounds:
            ax.plot([p["scale"] for p in bounds], [p["per_round_high"] for p in bounds],
                    linestyle="none", marker="v", color=colour, alpha=0.6,
                    label=None if seen else f"d = {d}")
            drawn = bounded = True
        median = next((p for p in _points(payload, d, "median") if p["errors"]), None)
        if median is not None:
            ax.errorbar([1.0], [median["per_round"]],
                        yerr=[[median["per_round"] - median["per_round_low"]],
                              [median["per_round_high"] - median["per_round"]]],
                        color=colour, marker=marker, markerfacecolor="white", capsize=3,
                        linestyle="none")
    if drawn:
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.axvline(1.0, color="0.4", linestyle=":", linewidth=1)
        ax.annotate("today", (1.0, 1.0), xycoords=("data", "axes fraction"),
                    xytext=(3, -12), textcoords="offset points", fontsize=8, color="0.3")
        found = [c for c in payload["crossings"] if c["scale"] is not None]
        for k, c in enumerate(found):
            ax.axvline(c["scale"], color="0.6", linestyle="--", linewidth=0.8)
            ax.annotate(f"{c['smaller']}/{c['larger']}", (c["scale"], 0.0),
                        xycoords=("data", "axes fraction"), xytext=(3, 4 + 10 * k),
                        textcoords="offset points", fontsize=7, color="0.35")
        scales = payload["scales"]
        ax.set_xticks(scales, [f"{s:g}" for s in scales], fontsize=7)
        ax.xaxis.set_minor_formatter(NullFormatter())
        median_error = payload["chip"]["median_two_qubit_error"]
        if median_error:
            top = ax.secondary_xaxis("top", functions=(lambda s: s * median_error * 100,
                                                       lambda e: e / (median_error * 100)))
            top.set_xlabel("median two-qubit error (%) at each scale", fontsize=8)
            top.set_xticks([s * median_error * 100 for s in scales],
                           [f"{s * median_error * 100:.2g}" for s in scales], fontsize=7)
            top.xaxis.set_minor_formatter(NullFormatter())
        if bounded:
            ax.plot([], [], linestyle="none", marker="v", color="0.5",
                    label="no error seen: upper bound")
        ax.legend(fontsize=8, title="best placement (hollow: median, today)",
                  title_fontsize=7)
    else:
        ax.text(0.5, 0.5, "nothing sampled", ha="center", va="center", transform=ax.transAxes)
    ax.set_xlabel("calibration scale s (errors x s, T1 and T2 / s; 1 = today)", fontsize=8)
    ax.set_ylabel("logical error per round", fontsize=8)
    fig.suptitle(f"{payload['family']} code on '{payload['chip']['name']}': logical error per "
                 "round\n(model estimate from the calibration supplied, which drifts)",
                 fontsize=9)
    return fig
