"""The sweep report: terminal text, Markdown, and a picture of the best figure over time.

Input is the JSON-ready dict of `embedcheck.sweep.summarise` plus the run's outcome; this
module only formats. The picture is drawn on its own `matplotlib.figure.Figure` (no global
backend change, so a notebook's own plots keep working).
"""
from __future__ import annotations

from typing import Any

__all__ = ["draw_sweep", "render_sweep_markdown", "render_sweep_text"]

_LABELS = {"decoded": "decoded logical error per shot (sampled)",
           "undetected": "undetected logical error (lowest order)",
           "fidelity_product": "fidelity product"}


def _value(value, figure: str) -> str:
    if value is None:
        return "none"
    if figure == "fidelity_product":
        return f"{value:.4f}"
    return f"{value:.2e}" if value else "0"


def _region(best: dict) -> str:
    qubits = best["region"]
    return ",".join(map(str, qubits)) if len(qubits) <= 12 else \
        f"{len(qubits)} qubits {min(qubits)}..{max(qubits)}"


def render_sweep_text(payload: dict[str, Any]) -> str:
    """The sweep report for a terminal."""
    run = payload.get("run") or {}
    lines = [f"Sweep '{payload['name']}': {payload['units']} unit(s) (chip snapshot x patch) "
             f"in {payload['database']}"]
    if run:
        lines.append(f"  this run: {run['computed']} task(s) computed, {run['skipped']} already "
                     f"stored (resumed), on {run['executor']}")
    for patch in payload["patches"]:
        lines += ["", f"{patch['patch']}: ranked by {_LABELS[patch['figure']]} "
                      f"({patch['better']} is better)",
                  *([f"  why: {patch['ranking_note']}"] if patch.get("ranking_note") else []),
                  f"  {'snapshot':<12} {'best chip':<22} {'figure':>10}  region (chip qubits)"]
        for day in patch["snapshots"]:
            best = day["best"]
            if best is None:
                lines.append(f"  {day['snapshot']:<12} {'(no swap-free placement)':<22}")
                continue
            lines.append(f"  {day['snapshot']:<12} {best['chip']:<22} "
                         f"{_value(best['value'], patch['figure']):>10}  {_region(best)}")
        lines.append(f"  the winning chip changed {patch['winner_changes']} time(s) and the "
                     f"winning region {patch['region_changes']} time(s) over "
                     f"{patch['days_compared']} snapshot day(s)")
    if payload["failed"]:
        lines += ["", f"{len(payload['failed'])} unit(s) failed (their errors are stored):"]
        lines += [f"  {f['unit']}: {f['error']}" for f in payload["failed"][:20]]
        if len(payload["failed"]) > 20:
            lines.append(f"  ... {len(payload['failed']) - 20} more (see --format json)")
    lines += ["", payload["caution"]]
    return "\n".join(lines)


def render_sweep_markdown(payload: dict[str, Any]) -> str:
    """The sweep report as Markdown (a table per patch)."""
    out = [f"## embedcheck sweep: {payload['name']}", "",
           f"{payload['units']} unit(s) (chip snapshot x patch); "
           f"{len(payload['failed'])} failed.", ""]
    for patch in payload["patches"]:
        out += [f"### {patch['patch']}", "",
                f"Ranked by {_LABELS[patch['figure']]} ({patch['better']} is better). The "
                f"winning chip changed {patch['winner_changes']} time(s), the region "
                f"{patch['region_changes']} time(s), over {patch['days_compared']} day(s)."
                + (f" Why: {patch['ranking_note']}." if patch.get("ranking_note") else ""), "",
                "| snapshot | best chip | figure | region |", "| --- | --- | --- | --- |"]
        for day in patch["snapshots"]:
            best = day["best"]
            if best is None:
                out.append(f"| {day['snapshot']} | no swap-free placement | | |")
            else:
                out.append(f"| {day['snapshot']} | {best['chip']} | "
                           f"{_value(best['value'], patch['figure'])} | {_region(best)} |")
        out.append("")
    if payload["failed"]:
        out += ["### Failed units", ""] + [f"- `{f['unit']}`: {f['error']}"
                                           for f in payload["failed"]] + [""]
    out.append(f"_{payload['caution']}_")
    return "\n".join(out) + "\n"


def draw_sweep(payload: dict[str, Any]):
    """One panel per patch: each chip's best figure per snapshot day (a `Figure`)."""
    from matplotlib.figure import Figure
    patches = payload["patches"] or [None]
    fig = Figure(figsize=(7.5, 2.6 * len(patches)), dpi=100, layout="constrained")
    axes = fig.subplots(len(patches), 1, squeeze=False)[:, 0]
    for ax, patch in zip(axes, patches, strict=True):
        if patch is None:
            ax.text(0.5, 0.5, "nothing stored yet", ha="center", va="center")
            ax.set_axis_off()
            continue
        days = [d["snapshot"] for d in patch["snapshots"]]
        for chip, points in patch["series"].items():
            where = {day: (value, low, high) for day, value, low, high in points}
            xs = [i for i, day in enumerate(days) if where.get(day, (None,))[0] is not None]
            ys = [where[days[i]][0] for i in xs]
            line, = ax.plot(xs, ys, marker="o", label=chip, gid=f"chip {chip}")
            bands = [(i, where[days[i]][1], where[days[i]][2]) for i in xs
                     if where[days[i]][1] is not None]
            if bands:                           # sampled figures: their Wilson intervals
                ax.fill_between([b[0] for b in bands], [b[1] for b in bands],
                                [b[2] for b in bands], color=line.get_color(), alpha=0.15)
        ax.set_xticks(range(len(days)), days, rotation=20, fontsize=7)
        ax.set_title(patch["patch"], fontsize=9)
        ax.set_ylabel(_LABELS[patch["figure"]].split(" (")[0], fontsize=8)
        if patch["figure"] != "fidelity_product" and any(
                p[1] for pts in patch["series"].values() for p in pts if p[1]):
            ax.set_yscale("log")
        ax.legend(fontsize=7)
    fig.suptitle(f"Sweep '{payload['name']}': best figure per chip and day "
                 "(model estimates from the calibration supplied)", fontsize=9)
    return fig
