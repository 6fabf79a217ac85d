"""Plain JSON-ready dictionaries of results; the text renderer and `--format json` share them.

Formatting only: every figure here was computed by an earlier stage. The shape is
described by `embedcheck/schemas/find-report.schema.json`, `audit-report.schema.json` and
`check-report.schema.json`.

    >>> from embedcheck.model.device import Device
    >>> chip_summary(Device(name="pair", qubits=(0, 1), couplers=((0, 1),)))["live_couplers"]
    1
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..audit.exact import AuditReport, OffCouplerGate
from ..model.device import Device
from ..model.patch import Patch
from ..pipeline.checks import CheckResult
from ..pipeline.find import FindResult, LogicalNote
from ..pipeline.sdk import SdkComparison
from ..place.graphs import degree_histogram, shortest_cycle
from ..place.near_misses import NearMiss
from ..place.reasons import Reason
from ..score.best_placements import BestPlacements
from ..score.cost import CAUTION, Ranking, Sensitivity, SnapshotRanking
from ..score.logical import LogicalRanking
from ..score.sampling import per_round
from ..version import __version__

__all__ = ["PLACEHOLDER_WARNING", "audit_dict", "family_hint", "calibration_summary", "check_dict",
           "chip_details", "chip_summary", "compare_to_baseline", "find_dict",
           "logical_dict", "logical_note", "patch_details",
           "patch_summary", "placement_rows", "sdk_dict", "sensitivity_rows", "snapshot_dict"]
__all__ += ["best_first_dict"]

Json = dict[str, Any]


def chip_summary(device: Device) -> Json:
    return {"name": device.name, "file": device.source, "qubits": device.num_qubits,
            "couplers": len(device.couplers), "live_couplers": len(device.live_couplers),
            "dead_qubits": sorted(device.dead_qubits),
            "dead_couplers": [list(c) for c in sorted(device.dead_couplers)],
            "calibration_timestamp": device.calibration_timestamp,
            "placeholder_calibration": device.placeholder_calibration}


def family_hint(family: str, *, how: str) -> str:
    """One line: the chip's qubits have too few couplers for the patch; try `family`.

    >>> family_hint("heavy-hex-chipfit", how="--family heavy-hex-chipfit")[:31]
    'hint: this chip has at most 3 c'
    """
    return (f"hint: this chip has at most 3 couplers per qubit and the patch needs 4 (as the "
            f"surface code does); the built-in family {family} is made for such chips "
            f"(try '{how}')")


# One line for the text reports of find, check and forecast on a placeholder chip.
PLACEHOLDER_WARNING = ("Warning: PLACEHOLDER calibration (the same figures everywhere): the "
                       "ranking carries no information on this chip")


def patch_summary(patch: Patch) -> Json:
    roles = {r: list(patch.qubits_with_role(r)) for r in ("data", "flag", "ancilla")}
    return {"name": patch.name, "file": patch.source, "qubits": patch.num_qubits,
            "roles": roles, "rounds": patch.rounds, "roles_inferred": patch.roles_inferred}


def placement_rows(patch: Patch, ranking: Ranking, off: np.ndarray,
                   top: int | None) -> list[Json]:
    names = list(patch.circuits)
    rows = []
    count = len(ranking.placements) if top is None else min(top, len(ranking.placements))
    for i in range(count):
        rows.append({
            "rank": i + 1,
            "qubits": ranking.placements[i].as_dict(patch),
            "figure": ranking.figure,
            "success": float(ranking.success[i]),
            "log_success": float(ranking.log_success[i]),
            "terms": {k: float(v[i]) for k, v in ranking.terms.items()},
            "off_coupler_gates": {n: int(off[i, j]) for j, n in enumerate(names)},
            "unscored_gates": int(ranking.unscored_gates[i]),
        })
    return rows


def audit_dict(patch: Patch, report: AuditReport) -> Json:
    circuits = []
    for c in report.circuits:
        circuits.append({
            "circuit": c.circuit, "times_run": c.times_run,
            "two_qubit_gates": c.two_qubit_gates, "measurements": c.measurements,
            "swap_free": c.swap_free, "off_coupler_count": len(c.off_coupler),
            "off_coupler": [{
                "gate_index": g.gate_index, "patch_qubits": list(g.patch_qubits),
                "physical_qubits": list(g.physical_qubits), "written": g.written,
                "text": g.text, "file": g.file, "line": g.line, "reason": g.reason,
            } for g in c.off_coupler],
            "router_estimate": c.router_estimate,
            "direction_fixes": c.direction_fixes,
            "depth": c.depth, "duration_ns": c.duration_ns,
            "missing_durations": list(c.missing_durations),
        })
    return {"placement": report.placement.as_dict(patch), "swap_free": report.swap_free,
            "experiment": report.experiment_totals(), "circuits": circuits}


def find_dict(result: FindResult) -> Json:
    """The `find` report (what `find --format json` prints)."""
    v, top = result.vetting, result.top
    names = list(v.patch.circuits)
    times = dict(v.patch.experiment())
    circuits = []
    for j, fit in enumerate(v.fits):
        col = v.off_coupler[:, j] if len(v.ranking.placements) else None
        circuits.append({
            "circuit": fit.circuit, "times_run": times.get(fit.circuit, 0),
            "two_qubit_gates": fit.two_qubit_gates,
            "measurements": len(v.patch.circuits[fit.circuit].measurements),
            "fits_alone": fit.fits_alone, "in_core": fit.circuit in v.core,
            "off_coupler_min": int(col.min()) if col is not None else None,
            "off_coupler_max": int(col.max()) if col is not None else None,
            "reasons": list(fit.reasons),
            "culprits": _culprit_rows(fit.culprits),
        })
    s = v.search
    out = {
        "tool": "embedcheck", "version": __version__, "command": "find",
        "chip": chip_summary(v.device), "patch": patch_summary(v.patch),
        "circuits": circuits,
        "all_swap_free": v.all_swap_free,
        "complete": v.complete,
        "inconclusive_circuits": list(v.inconclusive),
        "search": {"circuits": list(s.circuits), "distinct_placements": len(s.placements),
                   "raw_maps": s.raw_maps, "symmetry_order": s.symmetry_order,
                   "complete": s.complete, "stop_reason": s.stop_reason.value,
                   "elapsed_s": round(s.elapsed_s, 4), "reasons": list(s.reasons),
                   "culprits": _culprit_rows(s.culprits), "notes": list(s.notes),
                   "work": s.work, "timed_out": s.timed_out},
        "best_first": best_first_dict(v.patch, v.best),
        "unconstrained_qubits": list(v.unconstrained),
        "constraints": v.constraints.describe() if v.constraints is not None else [],
        "near_misses": _near_miss_rows(v.patch, v.near_misses),
        "figure": v.ranking.figure,
        "placements": placement_rows(v.patch, v.ranking, v.off_coupler, top),
        "best_audit": audit_dict(v.patch, result.best_audit) if result.best_audit else None,
        "sensitivity": sensitivity_rows(result.sensitivity),
        "caution": CAUTION,
        "circuit_order": names,
    }
    if result.logical is not None:
        out["logical"] = logical_dict(v.patch, result.logical, top,
                                      sampled=result.sampled)
        out["ranked_by"] = result.logical.figure
        if result.logical.estimate_order is not None:
            out["estimate_order"] = result.logical.estimate_order
    if result.logical_note is not None:
        out["logical_note"] = logical_note(result.logical_note, decoded=result.decoded,
                                           skipped_sampling=result.sampled
                                           and result.logical is None)
    if result.fitting_family is not None:
        out["fitting_family"] = result.fitting_family
        out["hint"] = family_hint(result.fitting_family, how=f"embedcheck code "
                                  f"{result.fitting_family}")
    if result.snapshots is not None:
        out["snapshots"] = snapshot_dict(v.patch, result.snapshots, top=min(top, 5))
    if result.sdk is not None:
        out["sdk_choice"] = sdk_dict(v.patch, result.sdk)
    return out


_NOTES = {
    LogicalNote.NO_DETECTORS:
        "the patch declares no detectors or no logical observable, so the placements are "
        "ranked by fidelity_product; declare 'detectors:' (measurement parities fixed without "
        "noise) and 'observable:' (the measurements whose parity is the logical result) to rank "
        "them by logical error",
    LogicalNote.UNDETECTED_ALL_ZERO:
        "every placement scores 0 on 'undetected' (no one or two faults flip the observable "
        "unseen), so that column does not rank them; ties are broken by 'kept'",
    LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY:
        "the logical observable is a parity of the declared detectors, so no fault flips it "
        "unseen and the logical figures are 0 everywhere; ranked by fidelity_product",
    LogicalNote.NOT_MATCHABLE:
        "no one or two faults flip the logical observable unseen, and some faults flip more "
        "than two detectors in a way stim cannot split into graph-like pieces, so neither "
        "'undetected' nor the decoded estimate can rank the placements, and sampled shots "
        "cannot be decoded; ranked by fidelity_product without --monte-carlo, by 'kept' (how "
        "often no detector fires, sampled on the placements listed) with it",
    LogicalNote.ESTIMATE_INCOMPLETE:
        "an enumeration budget cut the decoded estimate short on some placements: it is a "
        "partial sum there (a lower bound of the leading order)",
    LogicalNote.NOTHING_TO_SAMPLE:
        "--monte-carlo needs a patch with detectors and an observable on which every circuit "
        "is swap-free; nothing sampled",
}


# Said when --monte-carlo was asked for but not run, for the notes that mean it cannot say
# anything (the others already say what happened to the shots).
_SAMPLING_SKIPPED = {
    LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY:
        "The --monte-carlo sampling asked for was not run: with the observable a parity of "
        "detectors, no fault can flip it unseen, so every shot would count 0 logical errors",
}


def logical_note(note: LogicalNote, *, decoded: bool = False,
                 skipped_sampling: bool = False) -> str:
    """The words for a `LogicalNote`; with `skipped_sampling` (Monte Carlo shots were asked
    for and none was sampled) also the sentence that says so and why.

    >>> logical_note(LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY,
    ...              skipped_sampling=True).split(". ")[-1][:42]
    'The --monte-carlo sampling asked for was n'
    """
    words = _NOTES[note]
    if skipped_sampling and note in _SAMPLING_SKIPPED:
        words += ". " + _SAMPLING_SKIPPED[note]
    return words


_WORST_IS_LOW = {"t1_us", "t2_us"}


def _figure_summary(values: dict[Any, float | None]) -> Json | None:
    """Median and worst of {where: value} (worst = highest error, lowest T1/T2)."""
    given = {k: v for k, v in values.items() if v is not None}
    if not given:
        return None
    return {"given": len(given), "median": float(np.median(list(given.values())))}


def calibration_summary(device: Device) -> Json:
    """Per figure: how many entries give it, the median, the worst value and where."""
    out = {}
    fields = ("readout_error", "single_qubit_error", "reset_error", "t1_us", "t2_us",
              "single_qubit_duration_ns", "measurement_duration_ns")
    live_q = device.live_qubits
    for f in fields:
        vals: dict[Any, float | None] = {q: getattr(device.qubit_calibration[q], f)
                                         for q in live_q if q in device.qubit_calibration}
        summary = _figure_summary(vals)
        if summary:
            given = {k: v for k, v in vals.items() if v is not None}
            pick = min if f in _WORST_IS_LOW else max
            where = pick(given, key=given.__getitem__)
            summary.update(worst=float(given[where]), worst_at=f"qubit {where}")
            out[f] = summary
    for f in ("two_qubit_error", "duration_ns"):
        vals = {c: getattr(device.coupler_calibration[c], f) for c in device.live_couplers
                if c in device.coupler_calibration}
        summary = _figure_summary(vals)
        if summary:
            given = {k: v for k, v in vals.items() if v is not None}
            worst = max(given, key=given.__getitem__)
            summary.update(worst=float(given[worst]), worst_at=f"coupler {list(worst)}")
            out["two_qubit_duration_ns" if f == "duration_ns" else f] = summary
    return out


def _box(device: Device) -> list[float] | None:
    """[x0, y0, x1, y1] of the drawing positions (what --region-box selects in), or None."""
    if not device.positions:
        return None
    xs = [xy[0] for xy in device.positions.values()]
    ys = [xy[1] for xy in device.positions.values()]
    return [min(xs), min(ys), max(xs), max(ys)]


def chip_details(snapshots: Sequence[Device]) -> Json:
    """What `show` prints for a chip: graph facts, dead parts, calibration per snapshot."""
    device = snapshots[-1]
    live = device.live_couplers
    return {
        "tool": "embedcheck", "version": __version__, "command": "show", "kind": "chip",
        **chip_summary(device),
        "native_two_qubit_gate": device.native_two_qubit_gate,
        "directed_couplers": [list(device.directed[c]) for c in sorted(device.directed)],
        "degree_histogram": {str(k): v for k, v in
                             degree_histogram(device.live_qubits, live).items()},
        "shortest_cycle": shortest_cycle(device.live_qubits, live),
        "drawing_box": _box(device),
        "snapshots": [{"timestamp": d.calibration_timestamp,
                       "dead_qubits": sorted(d.dead_qubits),
                       "dead_couplers": [list(c) for c in sorted(d.dead_couplers)],
                       "calibration": calibration_summary(d)} for d in snapshots],
    }


def patch_details(patch: Patch) -> Json:
    """What `show` prints for a patch: roles, circuits, interaction graph facts."""
    counts = patch.interaction_counts()
    degree = {q: 0 for q in patch.qubits}
    for a, b in counts:
        degree[patch.qubits[a]] += 1
        degree[patch.qubits[b]] += 1
    return {
        "tool": "embedcheck", "version": __version__, "command": "show", "kind": "patch",
        **patch_summary(patch),
        "circuits": [{"circuit": name, "times_run": dict(patch.experiment()).get(name, 0),
                      "two_qubit_gates": len(c.two_qubit_gates),
                      "measurements": len(c.measurements), "file": c.file}
                     for name, c in patch.circuits.items()],
        "interaction_degrees": degree,
        "interacting_pairs": [{"qubits": [patch.qubits[a], patch.qubits[b]], "gates": n}
                              for (a, b), n in counts.items()],
        "shortest_cycle": shortest_cycle(range(patch.num_qubits), list(counts)),
        "roles_inferred": patch.roles_inferred,
        "detectors": len(patch.detectors), "observable_size": len(patch.observable),
    }


def _gate_dict(g: OffCouplerGate) -> Json:
    return {"gate_index": g.gate_index, "patch_qubits": list(g.patch_qubits),
            "physical_qubits": list(g.physical_qubits), "written": g.written, "text": g.text,
            "file": g.file, "line": g.line, "reason": g.reason}


def _near_miss_rows(patch: Patch, misses: Sequence[NearMiss]) -> list[Json]:
    return [{"qubits": m.placement.as_dict(patch), "off_coupler_gates": m.off_coupler_gates,
             "missing_pairs": [list(p) for p in m.missing_pairs],
             "method": "heuristic (greedy pair removal), not exhaustive"} for m in misses]


def _culprit_rows(reasons: Sequence[Reason]) -> list[Json]:
    return [{"reason": r.text, "qubits": list(r.qubits), "pairs": [list(p) for p in r.pairs]}
            for r in reasons]


def check_dict(result: CheckResult, baseline: Json | None = None) -> Json:
    """The `check` report: one entry per chip x patch, rules judged, gates named."""
    entries = []
    for pair in result.pairs:
        v = pair.vetting
        chosen = pair.audit
        fits = {f.circuit: f for f in v.fits}
        circuits = []
        for name in pair.patch.circuits:
            c = next((c for c in chosen.circuits if c.circuit == name), None) if chosen else None
            fit = fits.get(name)
            circuits.append({
                "circuit": name,
                "two_qubit_gates": len(pair.patch.circuits[name].two_qubit_gates),
                "off_coupler_count": len(c.off_coupler) if c else None,
                "allowed": pair.rules.allowed(name),
                "direction_fixes": c.direction_fixes if c else None,
                "depth": c.depth if c else None,
                "duration_ns": c.duration_ns if c else None,
                "gates": [_gate_dict(g) for g in c.off_coupler] if c else [],
                "fits_alone": fit.fits_alone if fit else None,
                "reasons": list(fit.reasons) if fit else [],
                "culprits": _culprit_rows(fit.culprits) if fit else [],
            })
        entries.append({
            "chip": pair.device.name, "chip_file": pair.device.source,
            "placeholder_calibration": pair.device.placeholder_calibration,
            "patch": pair.patch.name, "patch_file": pair.patch.source,
            "passed": pair.passed,
            "placements_within_allowance": pair.allowed_placements,
            "search": {"circuits": list(v.search.circuits),
                       "distinct_placements": len(v.search.placements),
                       "complete": v.complete,
                       "stop_reason": v.search.stop_reason.value if not v.search.complete else
                       ("budget" if v.inconclusive else "complete"),
                       "inconclusive_circuits": list(v.inconclusive)},
            "chosen_placement": chosen.placement.as_dict(pair.patch) if chosen else None,
            "chosen_from": pair.chosen_from,
            "blamed_circuits": list(pair.blamed),
            "near_misses": _near_miss_rows(pair.patch, v.near_misses),
            "cross_checked": {"placements": pair.cross_checked,
                              "cut_by_budget": pair.cross_check_cut},
            "figure": v.ranking.figure, "best_score": pair.chosen_score,
            "circuits": circuits,
            "outcomes": [{"rule": o.rule, "circuit": o.circuit, "passed": o.passed,
                          "message": o.message,
                          "locations": [{"file": at.file, "line": at.line, "text": at.text}
                                        for at in o.locations]} for o in pair.outcomes],
        })
    out = {"tool": "embedcheck", "version": __version__, "command": "check",
           "project": {"name": result.project.name, "file": result.project.file},
           "passed": result.passed, "internal_errors": list(result.internal_errors),
           "results": entries, "baseline": None, "caution": CAUTION}
    if baseline is not None:
        out["baseline"] = compare_to_baseline(out, baseline)
    return out


def compare_to_baseline(current: Json, baseline: Json) -> Json:
    """What got worse and what got better since a previous `check` JSON report.

    Per chip x patch: off-coupler gates per circuit on the chosen placement, placements
    within the allowances, whether the search was complete, pass or fail, and the best
    score. A score leaves off-coupler gates out, so scores are compared only between
    chosen placements with the same off-coupler counts in every circuit; a count of
    placements rises only against a complete baseline search (a cut-short one is a
    lower bound); and nothing about a chip x patch is called better while anything about
    it got worse. What is left out goes to `not_compared`, with why.

        >>> old = {"results": [{"chip": "c", "patch": "p", "passed": True, "figure": "f",
        ...        "placements_within_allowance": 5, "best_score": 0.47,
        ...        "search": {"complete": True},
        ...        "circuits": [{"circuit": "prep", "off_coupler_count": 0}]}]}
        >>> new = {"results": [{**old["results"][0], "best_score": 0.48,
        ...        "circuits": [{"circuit": "prep", "off_coupler_count": 1}]}]}
        >>> diff = compare_to_baseline(new, old)
        >>> diff["worse"], diff["better"]
        (['p on c, prep: off-coupler gates 0 -> 1'], [])
        >>> diff["not_compared"][0].split(":")[1]
        ' best f 0.4700 -> 0.4800 not compared'
    """
    old = {(e["chip"], e["patch"]): e for e in baseline.get("results", [])}
    worse: list[str] = []
    better: list[str] = []
    skipped: list[str] = []
    for e in current["results"]:
        where = f"{e['patch']} on {e['chip']}"
        before = old.get((e["chip"], e["patch"]))
        if before is None:
            better.append(f"{where}: new in this report") if e["passed"] else \
                worse.append(f"{where}: new in this report, and it fails")
            continue
        w, b, n = _entry_changes(where, before, e)
        if w and b:
            n += [f"{line} (not called better: something else about {where} got worse)"
                  for line in b]
            b = []
        worse += w
        better += b
        skipped += n
    return {"worse": worse, "better": better, "not_compared": skipped}


def _entry_changes(where: str, before: Json, now: Json) -> tuple[list[str], list[str],
                                                                  list[str]]:
    """(worse, better, not compared) for one chip x patch."""
    worse: list[str] = []
    better: list[str] = []
    skipped: list[str] = []
    complete0 = before.get("search", {}).get("complete", True)
    complete1 = now.get("search", {}).get("complete", True)
    if complete0 and not complete1:
        worse.append(f"{where}: the search was complete, now cut short "
                     f"({now['search'].get('stop_reason', 'budget')})")
    elif complete1 and not complete0:
        better.append(f"{where}: the search is complete now (it was cut short)")
    old_off = {c["circuit"]: c.get("off_coupler_count") for c in before.get("circuits", [])}
    new_off = {c["circuit"]: c.get("off_coupler_count") for c in now.get("circuits", [])}
    for name, count in new_off.items():
        prev = old_off.get(name)
        if name not in old_off or prev == count:
            continue
        if count is None:
            worse.append(f"{where}, {name}: off-coupler gates {prev} -> none judged (no "
                         "placement)")
        elif prev is None:
            better.append(f"{where}, {name}: off-coupler gates none judged -> {count}")
        else:
            (worse if count > prev else better).append(
                f"{where}, {name}: off-coupler gates {prev} -> {count}")
    p0, p1 = before["placements_within_allowance"], now["placements_within_allowance"]
    if p1 < p0:
        worse.append(f"{where}: placements within allowance {p0} -> {p1}"
                     + ("" if complete1 else " (search cut short)"))
    elif p1 > p0 and complete0:
        better.append(f"{where}: placements within allowance {p0} -> {p1}")
    elif p1 > p0:
        skipped.append(f"{where}: placements within allowance {p0} -> {p1} not compared: the "
                       "baseline's search was cut short, so its count was a lower bound")
    s0, s1 = before.get("best_score"), now.get("best_score")
    if s0 is not None and s1 is not None and abs(s1 - s0) > 1e-9:
        line = f"{where}: best {now['figure']} {s0:.4f} -> {s1:.4f}"
        same_off = old_off.keys() == new_off.keys() and old_off == new_off and \
            before.get("chosen_from", "ranking") == now.get("chosen_from", "ranking")
        if same_off:
            (worse if s1 < s0 else better).append(line)
        else:
            changed = ", ".join(f"{c} {old_off.get(c)} -> {new_off.get(c)}"
                                for c in sorted(set(old_off) | set(new_off))
                                if old_off.get(c) != new_off.get(c))
            skipped.append(f"{line} not compared: the chosen placements differ in off-coupler "
                           f"gates ({changed or 'how they were chosen'}), which the score "
                           "leaves out")
    if before["passed"] and not now["passed"]:
        worse.append(f"{where}: passed before, fails now")
    elif not before["passed"] and now["passed"]:
        better.append(f"{where}: failed before, passes now")
    return worse, better, skipped


def sensitivity_rows(rows: Sequence[Sensitivity]) -> list[Json]:
    """The calibration figures that move the best placement's score most."""
    return [{"item": s.item, "figure": s.figure, "value": float(s.value),
             "log_contribution": float(s.log_contribution), "derivative": float(s.derivative)}
            for s in rows]


def snapshot_dict(patch: Patch, robust: SnapshotRanking, top: int = 5) -> Json:
    """Ranking over calibration snapshots: the top placements, the winner's stability."""
    rows = []
    for i in range(min(top, len(robust.placements))):
        logs = robust.per_snapshot[:, i]
        rows.append({"rank": i + 1, "qubits": robust.placements[i].as_dict(patch),
                     "aggregate_log": float(robust.aggregate[i]),
                     "per_snapshot_success": [float(np.exp(x)) for x in logs]})
    return {"figure": robust.figure, "by": robust.by, "count": len(robust.timestamps),
            "timestamps": list(robust.timestamps), "top": rows,
            "winner_ranks": list(robust.winner_ranks), "top_k": robust.top_k,
            "stability": robust.stability, "newest_winner_rank": robust.newest_winner_rank,
            "placements": len(robust.placements), "unscored_placements": robust.unscored}


def sdk_dict(patch: Patch, sdk: SdkComparison) -> Json:
    """qiskit's VF2Layout choice and where it ranks under our model."""
    if not sdk.found or sdk.placement is None:
        return {"found": False, "status": sdk.status}
    return {"found": True, "status": sdk.status, "qubits": sdk.placement.as_dict(patch),
            "success": sdk.success, "our_rank": sdk.our_rank, "of": sdk.of,
            "figure": sdk.figure}


def logical_dict(patch: Patch, logical: LogicalRanking, top: int = 10,
                 sampled: bool = False) -> Json:
    """The ranking by a logical figure, with its deterministic figures per placement and
    Monte Carlo results where sampled."""
    rows = []
    for i in range(min(top, len(logical.placements))):
        row: Json = {"rank": i + 1, "qubits": logical.placements[i].as_dict(patch)}
        if logical.undetected is not None and logical.kept is not None:
            row.update(undetected=float(logical.undetected[i]), kept=float(logical.kept[i]))
        if logical.estimate is not None:
            row["estimate"] = float(logical.estimate[i])
        mc = logical.monte_carlo[i] if i < len(logical.monte_carlo) else None
        if mc is not None:
            row["monte_carlo"] = {
                "shots": mc.shots, "kept_fraction": mc.kept_fraction,
                "kept_fraction_interval": list(mc.interval("kept")),
                "raw_logical_error": mc.raw_error,
                "raw_logical_error_interval": list(mc.interval("raw")),
                "post_selected_logical_error": mc.post_selected_error,
                "post_selected_interval": list(mc.interval("post_selected")),
                "decoded_logical_error": None if mc.decoded_errors is None
                else mc.decoded_errors / mc.shots,
                "decoded_interval": None if mc.decoded_errors is None
                else list(mc.interval("decoded"))}
        stats = logical.decoded[i] if i < len(logical.decoded) else None
        if stats is not None:
            low, high = stats.interval()
            row["decoded"] = {
                "shots": stats.shots, "errors": stats.errors, "per_shot": stats.rate,
                "per_shot_interval": [low, high],
                "per_round": per_round(stats.rate, logical.rounds),
                "per_round_interval": [per_round(low, logical.rounds),
                                       per_round(high, logical.rounds)]}
        rows.append(row)
    out: Json = {"figure": logical.figure, "placements": len(logical.placements), "top": rows,
                 "method": _logical_method(logical, sampled), "rounds": logical.rounds}
    if logical.unscored:
        out["unscored_placements"] = logical.unscored
    if logical.estimate_order is not None:
        out["estimate"] = {"order": logical.estimate_order,
                           "fault_distance": logical.estimate_distance,
                           "complete": logical.estimate_complete}
    return out


def _logical_method(logical: LogicalRanking, sampled: bool) -> str:
    if logical.figure == "decoded":
        return (f"the {len(logical.decoded)} placements listed, chosen by the decoded estimate "
                f"(order {logical.estimate_order}), sampled adaptively (stim, pymatching, "
                "seeded) and sorted by decoded logical error; Wilson 95% intervals")
    if logical.figure == "estimate":
        method = (f"leading-order decoded logical error per shot, fault sets of up to "
                  f"{logical.estimate_order} faults (ceil(d/2), d = {logical.estimate_distance})"
                  " decided by exact matching on stim's detector error model")
    else:
        method = "stim detector error model, lowest order"
    if sampled:
        method += "; Monte Carlo with Wilson 95% intervals"
    return method


def best_first_dict(patch: Patch, best: BestPlacements | None) -> dict[str, Any] | None:
    """find's best-first section, or None when the placements were few enough to list:
    how many were asked and found (best first, with the searched log fidelity product),
    whether that order is proven, else the log-score gap still open (None: unbounded)."""
    if best is None:
        return None
    return {"top": best.top, "found": len(best.placements), "proven": best.proven,
            "stop_reason": best.stop_reason,
            "gap_log": float(best.gap) if math.isfinite(best.gap) else None,
            "work": best.work, "idle_exact": best.idle_exact, "notes": list(best.notes),
            "placements": [{"qubits": p.as_dict(patch), "log_fidelity": round(float(x), 6)}
                           for p, x in zip(best.placements, best.log_success, strict=True)]}
