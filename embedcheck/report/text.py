"""Terminal renderings of the report dictionaries (`report.data`)."""
from __future__ import annotations

import math
from typing import Any

from .data import PLACEHOLDER_WARNING

__all__ = ["format_score", "render_audit", "render_check", "render_chip", "render_find",
           "render_patch", "render_repair"]


def _where(gate: dict) -> str:
    if gate.get("file") and gate.get("line"):
        return f"{gate['file']}:{gate['line']}"
    return gate.get("file") or "?"


def _placement(qubits: dict) -> str:
    return " ".join(f"{k}={v}" for k, v in qubits.items())


def _off_gates(audit: dict, indent: str = "  ") -> list[str]:
    lines = []
    for c in audit["circuits"]:
        for g in c["off_coupler"]:
            a, b = g["patch_qubits"]
            p, q = g["physical_qubits"]
            written = f" (part of '{g['written']}')" if g["written"] not in ("cx", "") else ""
            lines.append(f"{indent}{c['circuit']}, two-qubit gate {g['gate_index'] + 1}: "
                         f"{_where(g)}")
            lines.append(f"{indent}    {g['text']}{written}")
            lines.append(f"{indent}    needs {a}-{b} = physical {p}-{q}: {g['reason']}")
        est = c.get("router_estimate")
        if est:
            lines.append(f"{indent}{c['circuit']}: router {est['kind']} ({est['method']}, seed "
                         f"{est['seed']}): +{est['added_two_qubit_gates']} two-qubit gates")
    return lines


def render_find(d: dict) -> str:
    chip, patch = d["chip"], d["patch"]
    roles = ", ".join(f"{len(v)} {k}" for k, v in patch["roles"].items() if v)
    dead = []
    if chip["dead_qubits"]:
        dead.append(f"{len(chip['dead_qubits'])} dead qubit(s)")
    if chip["dead_couplers"]:
        dead.append(f"{len(chip['dead_couplers'])} dead coupler(s)")
    out = [f"Patch '{patch['name']}' ({patch['qubits']} qubits: {roles}; {patch['rounds']} "
           f"round(s)) on chip '{chip['name']}' ({chip['qubits']} qubits, "
           f"{chip['live_couplers']} live couplers{', ' + ', '.join(dead) if dead else ''})"]
    if chip.get("placeholder_calibration"):
        out.append(PLACEHOLDER_WARNING + ".")
    if patch.get("roles_inferred"):
        out.append("Roles were inferred from the circuits (give 'qubits:' or 'role_registers:' "
                   "in a patch file to set them).")
    out.append("")
    out.append(f"  {'circuit':<12} {'runs':>4} {'2q gates':>8} {'measures':>8}  "
               f"{'fits alone':<10}  on the placements below")
    for c in d["circuits"]:
        if c["off_coupler_max"] is None:
            verdict = "-"
        elif c["off_coupler_max"] == 0:
            verdict = "swap-free"
        elif c["off_coupler_min"] == c["off_coupler_max"]:
            verdict = f"NEEDS ROUTING ({c['off_coupler_min']} off-coupler)"
        else:
            verdict = f"NEEDS ROUTING ({c['off_coupler_min']}-{c['off_coupler_max']} off-coupler)"
        out.append(f"  {c['circuit']:<12} {c['times_run']:>4} {c['two_qubit_gates']:>8} "
                   f"{c['measurements']:>8}  {_fits(c['fits_alone']):<10}  {verdict}")
        for reason in c["reasons"]:
            out.append(f"      why not: {reason}")
    s = d["search"]
    out.append("")
    if d.get("constraints"):
        out.append("Constraints: " + "; ".join(d["constraints"]))
    if d.get("inconclusive_circuits"):
        out.append(f"INCOMPLETE: the time budget (--budget-s) ran out before "
                   f"{', '.join(d['inconclusive_circuits'])} could be settled; the verdicts "
                   "below may change with a larger budget.")
    if not s["distinct_placements"] and not s["complete"]:
        lead = "" if d.get("inconclusive_circuits") else \
            "INCOMPLETE: the time budget (--budget-s) ran out. "
        out.append(f"{lead}No swap-free placement was found in that time; this does not mean "
                   "none exists. Raise the budget.")
        out += ["", d["caution"]]
        return "\n".join(_fold(line) for line in out)
    round_fails = any(c["circuit"] == "round" and c["fits_alone"] is False
                      for c in d["circuits"])
    others_fit = [c["circuit"] for c in d["circuits"]
                  if c["two_qubit_gates"] and c["fits_alone"] and c["circuit"] != "round"]
    if not s["distinct_placements"]:
        if round_fails and others_fit:
            out.append(f"No placement makes the check round swap-free on this chip. "
                       f"{', '.join(others_fit)} would fit alone, but a layout is chosen for "
                       "its rounds, so none is ranked for that.")
        else:
            out.append("No placement makes any circuit with two-qubit gates swap-free on this "
                       "chip.")
        for reason in s["reasons"]:
            out.append(f"  why: {reason}")
        if d.get("hint"):
            out.append(f"  {d['hint']}")
        if d.get("near_misses"):
            out += ["", "Nearest misses (a heuristic: greedy removal of interacting pairs; fewer "
                        "added gates may be possible):"]
            for m in d["near_misses"]:
                pairs = ", ".join(f"{a}-{b}" for a, b in m["missing_pairs"])
                out.append(f"  {m['off_coupler_gates']} off-coupler gate(s) over the experiment; "
                           f"pairs without a coupler: {pairs}")
                out.append(f"       {_placement(m['qubits'])}")
        if d.get("logical_note"):
            out += ["", f"Note: {d['logical_note']}."]
        out += ["", d["caution"]]
        return "\n".join(_fold(line) for line in out)
    if s["complete"]:
        out.append(f"Swap-free for {', '.join(s['circuits'])}: {s['distinct_placements']} distinct "
                   f"placement(s) ({s['raw_maps']} maps / patch symmetry of order "
                   f"{s['symmetry_order']}); search complete, {s['elapsed_s']:.2f} s.")
    else:
        stopper = "count limit (--limit)" if s["stop_reason"] == "limit" else \
            "time budget (--budget-s)" if s.get("timed_out") else "work budget (--budget-work)"
        out.append(f"INCOMPLETE: the {stopper} stopped the search after "
                   f"{s['distinct_placements']} distinct placement(s) swap-free for "
                   f"{', '.join(s['circuits'])} ({s['raw_maps']} maps seen, "
                   f"{s['elapsed_s']:.2f} s).")
        out.append("The ranking covers only these; better placements may exist. Raise the "
                   "limit or the budget for a complete answer.")
        out += _best_first_lines(d.get("best_first"))
    for note in s.get("notes", ()):
        out.append(f"Note: {note}.")
    if d.get("unconstrained_qubits"):
        out.append(f"{', '.join(d['unconstrained_qubits'])}: no two-qubit gate in "
                   f"{', '.join(s['circuits'])}, so no coupler constrains them; they are put on "
                   "the nearest free qubits, not searched.")
    excluded = [c["circuit"] for c in d["circuits"] if not c["in_core"]]
    if d["all_swap_free"]:
        out.append("Every circuit is swap-free on every placement listed: no added two-qubit "
                   "gates.")
    elif d.get("inconclusive_circuits"):
        out.append(f"None of the placements listed makes every circuit swap-free: "
                   f"{', '.join(excluded)} need(s) routing on all of them (see the gates "
                   "below); the budget ran out before a joint search, so a larger one may "
                   "find a placement that does.")
    else:
        out.append(f"No placement makes every circuit swap-free: {', '.join(excluded)} "
                   f"need(s) routing on all of them (see the gates below).")
    out += ["", f"  {'rank':>4} {'success':>8}  {'log: 2q':>8} {'read':>7} {'1q':>7} "
                f"{'reset':>7} {'idle':>7} {'off-cpl':>7}",
            "       placement (patch qubit=physical qubit)"]
    for row in d["placements"]:
        off = sum(row["off_coupler_gates"].values())
        t = row["terms"]
        out.append(f"  {row['rank']:>4} {format_score(row['success']):>8}  {t['two_qubit']:>8.4f} "
                   f"{t['readout']:>7.4f} {t['single_qubit']:>7.4f} {t['reset']:>7.4f} "
                   f"{t['idle']:>7.4f} {off:>7}")
        out.append(f"       {_placement(row['qubits'])}")
    if s["distinct_placements"] > len(d["placements"]):
        out.append(f"  ... {s['distinct_placements'] - len(d['placements'])} more (use --top)")
    best = d["best_audit"]
    fixes = sum(c["direction_fixes"] for c in best["circuits"]) if best else 0
    if fixes:
        out += ["", f"On the best placement {fixes} CNOT(s) run against their coupler's native "
                    "direction: swap-free, fixed with single-qubit gates "
                    "(--forbid-direction-fixes excludes such placements)."]
    if best and not best["swap_free"]:
        out += ["", "On the best placement, these gates land on uncoupled qubits "
                    "(exact; a router would add SWAPs, 3 two-qubit gates each):"]
        out += _off_gates(best)
    if d.get("logical_note"):
        out += ["", f"Note: {d['logical_note']}."]
    logical = d.get("logical")
    if logical:
        out += [""] + _logical_rows(logical)
    if d.get("sensitivity"):
        lead = f" (the first by {logical['figure']})" if logical else ""
        out += ["", f"What moves the best placement's{lead} fidelity product most (log "
                    "contribution; d log S / d figure):"]
        for r in d["sensitivity"]:
            out.append(f"  {r['item']:<14} {r['figure']:<19} {r['value']:>9.4g}  "
                       f"{r['log_contribution']:>8.4f}  {r['derivative']:>10.4g}")
    snap = d.get("snapshots")
    if snap:
        cut = snap.get("unscored_placements", 0)
        out += ["", f"Across {snap['count']} calibration snapshots, ranked by the {snap['by']} "
                    f"{snap['figure']}" + (f" (INCOMPLETE: the time budget ran out after the "
                                           f"best {snap['placements']} by the newest snapshot; "
                                           f"{cut} more left out)" if cut else "") + ":"]
        for r in snap["top"]:
            each = " ".join(format_score(x) for x in r["per_snapshot_success"])
            out.append(f"  {r['rank']:>4}  per snapshot {each}  {_placement(r['qubits'])}")
        kept = round(snap["stability"] * snap["count"])
        out.append(f"  The robust winner (rank 1 above) ranks "
                   f"{', '.join(map(str, snap['winner_ranks']))} in the snapshots taken one "
                   f"at a time (oldest first): in the top {snap['top_k']} in {kept} of "
                   f"{snap['count']}. The newest snapshot's own best placement ranks "
                   f"{snap['newest_winner_rank']} in the list above.")
        if snap["newest_winner_rank"] != 1:
            out.append("  The robust choice differs from the newest snapshot's best: prefer it "
                       "if the calibration drifts as it has.")
    sdk = d.get("sdk_choice")
    if sdk:
        out.append("")
        if sdk["found"]:
            out.append(f"qiskit's VF2Layout picks {_placement(sdk['qubits'])}: est. success "
                       f"{format_score(sdk['success'])}, rank {sdk['our_rank']} of {sdk['of']} "
                       "under our "
                       f"{sdk['figure']}.")
        else:
            out.append(f"qiskit's VF2Layout: {sdk['status']}.")
    for kind, path in d.get("pictures", {}).items():
        out.append(f"Wrote the {kind.replace('_', ' ')} picture: {path}")
    out += ["", f"Score: {d['figure']} = product of (1 - error) over every gate, measurement, "
                "reset and idle period of the experiment (README, 'Cost model'); off-coupler "
                "gates are not scored.", d["caution"]]
    return "\n".join(_fold(line) for line in out)


def render_audit(d: dict) -> str:
    out = [f"Audit of patch '{d['patch']['name']}' on chip '{d['chip']['name']}' at "
           f"{_placement(d['audit']['placement'])}", ""]
    out.append(f"  {'circuit':<11} {'runs':>4} {'2q':>4} {'meas':>4} {'off':>4} {'dir':>4} "
               f"{'depth':>5} {'time us':>8}  verdict")
    for c in d["audit"]["circuits"]:
        verdict = "swap-free" if c["swap_free"] else "NEEDS ROUTING"
        out.append(f"  {c['circuit']:<11} {c['times_run']:>4} {c['two_qubit_gates']:>4} "
                   f"{c['measurements']:>4} {c['off_coupler_count']:>4} {c['direction_fixes']:>4} "
                   f"{c['depth']:>5} {c['duration_ns'] / 1000:>8.2f}  {verdict}")
    e = d["audit"]["experiment"]
    out.append(f"  {'experiment':<11} {'':>4} {e['two_qubit_gates']:>4} {e['measurements']:>4} "
               f"{e['off_coupler_gates']:>4} {e['direction_fixes']:>4} {'':>5} "
               f"{e['duration_ns'] / 1000:>8.2f}  "
               f"{'swap-free' if e['off_coupler_gates'] == 0 else 'NEEDS ROUTING'}")
    out.append("  (2q: two-qubit gates as CNOTs; meas: measurements; off: off-coupler; "
               "dir: direction fixes only)")
    lines = _off_gates(d["audit"])
    gates = [line for line in lines if "router estimate" not in line]
    estimates = [line for line in lines if "router estimate" in line]
    if gates:
        out += ["", "Off-coupler gates (exact):"] + gates
    if estimates:
        out += ["", "Router estimates (qiskit, not exact):"] + estimates
    score = d.get("score")
    if score:
        terms = ", ".join(f"{k.replace('_', ' ')} {v:.4f}" for k, v in score["terms"].items())
        out += ["", f"Estimated success ({score['figure']}): {format_score(score['success'])} "
                    f"(log terms: {terms})"]
        if not math.isclose(score["unscored_gates"], 0):
            out.append(f"  {score['unscored_gates']} off-coupler gate(s) are not in the score.")
    written = d.get("written")
    if written:
        out.append("")
        out += [f"Wrote {name}: {path}" for name, path in written["files"].items()]
        out += [f"Not written {name}: {why}" for name, why in written["not_written"].items()]
    cross = d.get("cross_check")
    if cross is not None:
        out.append("")
        out.append("Cross-check with qiskit's transpiler: " + (
            "agrees" if not cross["disagreements"] else "DISAGREES: " + cross["disagreements"][0]))
    out += ["", d["caution"]]
    return "\n".join(_fold(line) for line in out)


def _figure(value: float) -> str:
    return f"{value:.4g}"


def format_score(value: float) -> str:
    """A success estimate: 4 decimals, or 3 significant figures when that would read 0."""
    return f"{value:.4f}" if value >= 1e-3 or value == 0 else f"{value:.3e}"


def render_chip(d: dict) -> str:
    hist = ", ".join(f"{v} of degree {k}" for k, v in d["degree_histogram"].items())
    cycle = d["shortest_cycle"] if d["shortest_cycle"] is not None else "none (a tree)"
    out = [f"Chip '{d['name']}' ({d['file']}): {d['qubits']} qubits, {d['couplers']} couplers "
           f"({d['live_couplers']} live), native gate {d['native_two_qubit_gate']}",
           f"  live qubits by degree: {hist}",
           f"  shortest cycle: {cycle}"]
    if d.get("drawing_box"):
        x0, y0, x1, y1 = d["drawing_box"]
        out.append(f"  drawing positions: x {x0:g} to {x1:g}, y {y0:g} to {y1:g} (what "
                   "--region-box selects in; 'draw' shows them)")
    if d["directed_couplers"]:
        out.append(f"  directed couplers (native gate one way only): {len(d['directed_couplers'])}")
    for snap in d["snapshots"]:
        dead = []
        if snap["dead_qubits"]:
            dead.append("dead qubits " + ", ".join(map(str, snap["dead_qubits"])))
        if snap["dead_couplers"]:
            dead.append("dead couplers " + ", ".join(f"{a}-{b}" for a, b in snap["dead_couplers"]))
        out += ["", f"Calibration {snap['timestamp'] or '(no timestamp)'}"
                    f"{': ' + '; '.join(dead) if dead else ''}"]
        if not snap["calibration"]:
            out.append("  no calibration figures given")
            continue
        out.append(f"  {'figure':<26} {'given':>6} {'median':>10} {'worst':>10}  where")
        for name, s in snap["calibration"].items():
            out.append(f"  {name:<26} {s['given']:>6} {_figure(s['median']):>10} "
                       f"{_figure(s['worst']):>10}  {s['worst_at']}")
    return "\n".join(out)


def _fits(value) -> str:
    return "unknown" if value is None else "yes" if value else "no"


def render_patch(d: dict) -> str:
    out = [f"Patch '{d['name']}' ({d['file']}): {d['qubits']} qubits, {d['rounds']} round(s)"]
    if d.get("roles_inferred"):
        out.append("  roles inferred from the circuits (measured in the round, or measured "
                   "and then reused: helper; helper beside data and helpers: flag)")
    for role, names in d["roles"].items():
        if names:
            out.append(f"  {role:<8} {', '.join(names)}")
    out += ["", f"  {'circuit':<12} {'runs':>4} {'2q gates':>8} {'measures':>8}  file"]
    for c in d["circuits"]:
        out.append(f"  {c['circuit']:<12} {c['times_run']:>4} {c['two_qubit_gates']:>8} "
                   f"{c['measurements']:>8}  {c['file'] or '-'}")
    degrees = ", ".join(f"{q}:{k}" for q, k in d["interaction_degrees"].items())
    cycle = d["shortest_cycle"] if d["shortest_cycle"] is not None else "none (a tree)"
    out += ["", f"Interaction graph (all circuits): degrees {degrees}; shortest cycle {cycle}"]
    if d.get("detectors"):
        out.append(f"Detectors: {d['detectors']}; observable: {d['observable_size']} "
                   "measurement(s)")
    return "\n".join(_fold(line) for line in out)


def render_check(d: dict) -> str:
    """The `check` report for a terminal, within 80 columns."""
    out = [f"embedcheck check: project '{d['project']['name']}'", ""]
    for e in d["results"]:
        mark = "pass" if e["passed"] else "FAIL"
        out.append(f"[{mark}] {e['patch']} on {e['chip']}")
        if e.get("placeholder_calibration"):
            out.append(f"  {PLACEHOLDER_WARNING}.")
        if e["chosen_placement"]:
            label = " (the nearest miss: no placement is swap-free)" if \
                e.get("chosen_from") == "nearest miss" else ""
            out.append(f"  placement{label}: {_placement(e['chosen_placement'])}")
        for m in e.get("near_misses", [])[:1]:
            pairs = ", ".join(f"{a}-{b}" for a, b in m["missing_pairs"])
            out.append(f"  nearest miss (a heuristic): {m['off_coupler_gates']} off-coupler "
                       f"gate(s) over the experiment; pairs without a coupler: {pairs}")
        cross = e.get("cross_checked") or {}
        if cross.get("cut_by_budget"):
            out.append(f"  cross-check with qiskit INCOMPLETE: the time budget ran out after "
                       f"{cross['placements']} of the top placement(s)")
        gates = {c["circuit"]: c["gates"] for c in e["circuits"]}
        for o in e["outcomes"]:
            label = o["rule"] + (f" {o['circuit']}" if o["circuit"] else "")
            flag = "ok  " if o["passed"] else "FAIL"
            out.append(f"  {flag} {label}: {o['message']}")
            if o["rule"] != "max_off_coupler_gates":
                continue
            for g in gates.get(o["circuit"], []):
                where = f"{g['file']}:{g['line']}" if g["line"] else g["file"]
                out.append(f"         {where}: {g['text']}")
                out.append(f"           needs physical {g['physical_qubits'][0]}-"
                           f"{g['physical_qubits'][1]} ({g['reason']})")
            if not o["passed"] and not gates.get(o["circuit"]):
                for at in o.get("locations", [])[:5]:
                    where = f"{at['file']}:{at['line']}" if at.get("line") else at.get("file")
                    out.append(f"         at fault: {where}: {at['text']}")
        out.append("")
    base = d.get("baseline")
    if base:
        out.append(f"Against the baseline {base.get('file', '')}:")
        out += [f"  worse:  {w}" for w in base["worse"]] or ["  nothing got worse"]
        out += [f"  better: {b}" for b in base["better"]]
        out += [f"  not compared: {b}" for b in base.get("not_compared", [])]
        out.append("")
    for err in d["internal_errors"]:
        out.append(f"INTERNAL ERROR (exact audit and qiskit disagree): {err}")
    failed = sum(not e["passed"] for e in d["results"])
    out.append(f"{len(d['results']) - failed} passed, {failed} failed "
               f"(chip x patch pairs)")
    out.append(_wrap(d["caution"]))
    return "\n".join(_fold(line) for line in out)


def _wrap(text: str, width: int = 80) -> str:
    import textwrap
    return "\n".join(textwrap.wrap(text, width))


def _fold(line: str, width: int = 80) -> str:
    """Fold a long line at word boundaries, indenting the continuation."""
    if len(line) <= width:
        return line
    import textwrap
    indent = " " * (len(line) - len(line.lstrip()) + 4)
    return "\n".join(textwrap.wrap(line, width, subsequent_indent=indent,
                                   break_long_words=False, break_on_hyphens=False))


def render_repair(d) -> str:
    b, a = d["before"], d["after"]
    def fd(x):
        value = x.get("fault_distance")
        if value is None:
            return "none found within stim's search limits"
        return "infinite (the observable is a parity of detectors)" \
            if value in (float("inf"), "infinite") else str(value)
    lines = [f"Repaired '{d['circuit']}' by the {d['method']} method "
             f"({'PROVEN' if d['proven'] else 'NOT PROVEN'}: {d['proof']}).",
             f"  helpers borrowed and returned to |0>: {', '.join(d['helpers']) or 'none'}",
             f"  {'':<22} {'before':>10} {'after':>10}",
             f"  {'two-qubit gates':<22} {b['two_qubit_gates']:>10} {a['two_qubit_gates']:>10}",
             f"  {'two-qubit depth':<22} {b['two_qubit_depth']:>10} {a['two_qubit_depth']:>10}",
             f"  {'off-coupler gates':<22} {b['off_coupler_gates']:>10} "
             f"{a['off_coupler_gates']:>10}",
             f"  {'fidelity_product':<22} {format_score(b['fidelity_product']):>10} "
             f"{format_score(a['fidelity_product']):>10}"]
    if "fault_distance" in b:
        lines.append(f"  fault distance (fewest faults flipping the observable unseen): before "
                     f"{fd(b)}, after {fd(a)}")
    for dropped in d.get("rejected_for_fault_distance", ()):
        lines.append(f"  not kept, though cheaper: {dropped} (fault distance before -> after; "
                     "a rewrite must not lower it)")
    if b["fidelity_product_note"]:
        lines.append(f"  (before: {b['fidelity_product_note']})")
    lines += [f"Wrote {d['wrote']['patch']} and {d['wrote']['circuit']} (your patch file is "
              "unchanged).", d["caution"]]
    return "\n".join(_fold(line) for line in lines)


def _best_first_lines(b: dict | None) -> list[str]:
    """What find's best-first search adds when the placements were too many to list."""
    if not b:
        return []
    head = (f"Too many placements to list, so the best {b['top']} by the fidelity product were "
            f"searched best first (branch and bound, {b['work']} work units): ")
    if b["proven"]:
        head += (f"{b['found']} found, proven: no placement left out scores higher. They are "
                 "ranked with the rest below.")
    else:
        gap = "an unbounded amount" if b["gap_log"] is None else \
            f"up to {b['gap_log']:.3g} in log fidelity product"
        head += (f"{b['found']} found, not proven (the work budget ran out): a placement left "
                 f"out may score {gap} higher. They are ranked with the rest below.")
    return [head] + [f"Note: {note}." for note in b["notes"]]


def _logical_rows(logical: dict[str, Any]) -> list[str]:
    """The ranking by a logical figure: its deterministic figures, then what was sampled."""
    estimate = logical.get("estimate")
    left_out = logical.get("unscored_placements", 0)
    cut = (f"; INCOMPLETE: scored best by the cost model first, the time budget ran out "
           f"before the other {left_out}, which this ranking leaves out") if left_out else ""
    out = [f"Ranked by {logical['figure']} ({logical['method']}; "
           f"{logical['placements']} swap-free placements{cut}):"]
    if estimate:
        out.append(f"  (estimate: to order {estimate['order']}, fault sets of up to "
                   f"{estimate['order']} faults; fault distance {estimate['fault_distance']}"
                   + ("" if estimate["complete"] else "; INCOMPLETE: a budget cut it short")
                   + "; a ranking figure, above the sampled rate near threshold)")
    has_fast = any("undetected" in r for r in logical["top"])
    head = f"  {'rank':>4}"
    if "estimate" in (logical["top"][0] if logical["top"] else {}):
        head += f" {'estimate':>10}"
    if has_fast:
        head += f" {'undetected':>11} {'kept':>7}"
    out.append(head + "  placement")
    for r in logical["top"]:
        line = f"  {r['rank']:>4}"
        if "estimate" in r:
            line += f" {r['estimate']:>10.3e}"
        if has_fast:
            line += f" {r['undetected']:>11.3e} {r['kept']:>7.4f}"
        out.append(f"{line}  {_placement(r['qubits'])}")
        decoded = r.get("decoded")
        if decoded:
            lo, hi = decoded["per_shot_interval"]
            rlo, rhi = decoded["per_round_interval"]
            out.append(f"         decoded {decoded['per_shot']:.3e} per shot [{lo:.2e}, {hi:.2e}], "
                       f"{decoded['per_round']:.3e} per round [{rlo:.2e}, {rhi:.2e}] "
                       f"({decoded['errors']} errors in {decoded['shots']} shots)")
        mc = r.get("monte_carlo")
        if mc:
            lo, hi = mc["post_selected_interval"]
            line = (f"         Monte Carlo {mc['shots']} shots: post-selected "
                    f"{mc['post_selected_logical_error']:.3e} [{lo:.2e}, {hi:.2e}], kept "
                    f"{mc['kept_fraction']:.4f}, raw {mc['raw_logical_error']:.3e}")
            if mc["decoded_logical_error"] is not None:
                line += f", decoded {mc['decoded_logical_error']:.3e}"
            out.append(line)
    return out
