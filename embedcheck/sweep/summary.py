"""What a sweep's database says: per patch, the best chip and region per snapshot, and drift.

Snapshots are grouped by the day they were taken (the calibration timestamp's date), so
chips calibrated on the same morning are compared. Each unit is judged by the best figure
stored for it: the sampled `decoded` logical error when the sweep sampled it, else the
fast `undetected` figure, else the fidelity product (a figure that is equal on every
placement, such as the decoded error of a patch whose detectors fix the observable, does
not rank, and the next one is used); a unit whose best placement needs
routing counts as no swap-free placement. When a figure the sweep asked for does not rank
a patch, `ranking_note` says why: the notes its units recorded (sampling skipped because
it could say nothing), else that the figure was equal on every placement.
The winner of a day is the chip whose best
placement has the best figure; `winner_changes` counts the days on which it differs from
the day before (and `region_changes` the days on which the winning qubits differ).

    >>> from embedcheck.sweep.store import ResultStore
    >>> summarise(ResultStore(":memory:"))["patches"]
    []
"""
from __future__ import annotations

from collections import defaultdict
from typing import Any

from .store import ResultStore

__all__ = ["LOWER_IS_BETTER", "summarise"]

LOWER_IS_BETTER = {"decoded": True, "undetected": True, "fidelity_product": False}
_PREFERENCE = ("decoded", "undetected", "fidelity_product")


def summarise(store: ResultStore) -> dict[str, Any]:
    """The sweep report as JSON-ready data (see the module docstring)."""
    units = store.units()
    rows_by_unit: dict[str, list[dict]] = defaultdict(list)
    for row in store.results():
        rows_by_unit[row["unit"]].append(row)
    patches = []
    for patch in sorted({u["patch"] for u in units}):
        mine = [u for u in units if u["patch"] == patch and u["status"] == "done"]
        values: dict[str, set] = defaultdict(set)
        for unit in mine:
            for row in rows_by_unit[unit["unit"]]:
                values[row["figure"]].add(row["value"])
        # A figure equal on every placement (the decoded error of a code whose observable
        # the detectors fix, say) does not rank them: the next one is used.
        figure = next((f for f in _PREFERENCE if len(values.get(f, ())) > 1),
                      next((f for f in _PREFERENCE if f in values), "fidelity_product"))
        summary = _patch_summary(patch, figure, mine, rows_by_unit)
        note = _ranking_note(figure, mine, values)
        if note:
            summary["ranking_note"] = note
        patches.append(summary)
    return {"units": len(units), "patches": patches,
            "failed": [{"unit": u["unit"], "error": u["error"]} for u in units
                       if u["status"] == "failed"]}


def _patch_summary(patch: str, figure: str, units: list[dict], rows_by_unit) -> dict:
    lower = LOWER_IS_BETTER[figure]
    days: dict[str, list[tuple[dict, dict | None]]] = defaultdict(list)
    for unit in units:
        day = (unit["taken_at"] or "")[:10] or unit["snapshot"]
        days[day].append((unit, _unit_best(rows_by_unit[unit["unit"]], figure, lower)))
    out_days, series = [], defaultdict(list)
    winners: list[tuple[str, tuple[int, ...]] | None] = []
    for day in sorted(days):
        scored = [(u, b) for u, b in days[day] if b is not None]
        for unit, best in days[day]:
            series[unit["chip"]].append([day] + ([best["value"], best["low"], best["high"]]
                                                 if best else [None, None, None]))
        if not scored:
            empty: dict[str, Any] = {"snapshot": day, "best": None,
                                     "chips": {u["chip"]: None for u, _ in days[day]}}
            out_days.append(empty)
            winners.append(None)
            continue
        unit, best = sorted(scored, key=lambda ub: (_key(ub[1]["value"], lower), ub[0]["chip"]))[0]
        region = tuple(sorted(best["placement"].values()))
        winners.append((unit["chip"], region))
        out_days.append({"snapshot": day, "best": {
            "chip": unit["chip"], "value": best["value"], "low": best["low"], "high": best["high"],
            "region": list(region), "placement": best["placement"], "rank": best["rank"]},
            "chips": {u["chip"]: (b["value"] if b else None) for u, b in days[day]}})
    pairs = [(a, b) for a, b in zip(winners[:-1], winners[1:], strict=True) if a and b]
    return {"patch": patch, "figure": figure, "better": "lower" if lower else "higher",
            "snapshots": out_days, "days_compared": len(winners),
            "winner_changes": sum(a[0] != b[0] for a, b in pairs),
            "region_changes": sum(a != b for a, b in pairs),
            "series": {chip: points for chip, points in sorted(series.items())}}


def _ranking_note(figure: str, units: list[dict], values: dict[str, set]) -> str | None:
    """Why a figure preferred to `figure` does not rank the patch, in a sentence, or None."""
    notes = sorted({u["note"] for u in units if u.get("note")})
    if notes:
        counted = [f"{note} ({sum(u.get('note') == note for u in units)} unit(s))"
                   for note in notes]
        return "; ".join(counted) + f"; ranked by {figure}"
    better = _PREFERENCE[:_PREFERENCE.index(figure)]
    flat = [f for f in better if len(values.get(f, ())) == 1]
    if flat:
        value = next(iter(values[flat[0]]))
        return (f"{flat[0]} is {value:g} on every placement stored, so it ranks none; "
                f"ranked by {figure}")
    return None


def _unit_best(rows: list[dict], figure: str, lower: bool) -> dict | None:
    """The unit's best swap-free row of `figure`, or None."""
    candidates = [r for r in rows if r["figure"] == figure and r["off_coupler"] == 0
                  and r["value"] is not None]
    if not candidates:
        return None
    return sorted(candidates, key=lambda r: (_key(r["value"], lower), r["rank"]))[0]


def _key(value: float, lower: bool) -> float:
    return value if lower else -value
