"""Markdown summary of a `check` report, short enough for a code-review comment: the
verdict table (with the INCOMPLETE mark the text report shows), why each failing chip x
patch fails (the circuit that cannot be placed, its reasons, the nearest misses), the
gates that need routing with their lines, and the baseline comparison.

    >>> entry = {"passed": False, "patch": "p", "chip": "c", "best_score": None, "figure": "f",
    ...          "placements_within_allowance": 0, "chosen_from": None,
    ...          "blamed_circuits": ["round"], "near_misses": [],
    ...          "search": {"complete": False, "stop_reason": "budget"},
    ...          "circuits": [{"circuit": "round", "off_coupler_count": None, "gates": [],
    ...                        "two_qubit_gates": 3, "allowed": 0, "reasons": ["a0 has 4"]}],
    ...          "outcomes": []}
    >>> report = {"project": {"name": "demo"}, "passed": False, "results": [entry],
    ...           "internal_errors": [], "caution": "estimates"}
    >>> print(render_markdown(report).splitlines()[4])
    | **FAIL** | p | c | none judged: round cannot be placed | 0 (INCOMPLETE: budget) | - |
"""
from __future__ import annotations

from .text import format_score

__all__ = ["render_markdown"]


def _off(entry: dict) -> str:
    bad = [f"{c['circuit']} {c['off_coupler_count']} ({c['allowed']} allowed)"
           for c in entry["circuits"] if c["off_coupler_count"]]
    if any(c["off_coupler_count"] is None and c["two_qubit_gates"] for c in entry["circuits"]):
        blamed = entry.get("blamed_circuits") or []
        return f"none judged: {', '.join(blamed)} cannot be placed" if blamed else \
            "none judged: no placement found"
    if entry.get("chosen_from") == "nearest miss":
        return (", ".join(bad) or "none") + " on the nearest miss"
    return ", ".join(bad) or "none"


def _placements(entry: dict) -> str:
    search = entry.get("search", {})
    mark = "" if search.get("complete", True) else \
        f" (INCOMPLETE: {search.get('stop_reason', 'budget')})"
    return f"{entry['placements_within_allowance']}{mark}"


def _why(results: list[dict]) -> list[str]:
    """Why each failing chip x patch fails: the circuits that cannot be placed, their
    reasons, and the nearest misses (or the gates the reasons blame)."""
    out = []
    for e in results:
        if e["passed"]:
            continue
        outcomes = {(o["rule"], o["circuit"]): o for o in e["outcomes"]}
        for c in e["circuits"]:
            if c["circuit"] not in (e.get("blamed_circuits") or []):
                continue
            out.append(f"- **{c['circuit']}** of {e['patch']} on {e['chip']} cannot be placed "
                       f"without added two-qubit gates: {'; '.join(c.get('reasons', []))}")
            for m in e.get("near_misses", [])[:1]:
                pairs = ", ".join(f"{a}-{b}" for a, b in m["missing_pairs"])
                out.append(f"  - nearest miss (a heuristic, not exhaustive): "
                           f"{m['off_coupler_gates']} off-coupler gate(s) over the experiment, "
                           f"pairs without a coupler: {pairs}")
            o = outcomes.get(("max_off_coupler_gates", c["circuit"]))
            if o and not c["gates"]:
                for at in o.get("locations", [])[:5]:
                    where = f"{at['file']}:{at['line']}" if at.get("line") else at.get("file")
                    out.append(f"  - at fault: `{where}` `{at['text']}`")
        for o in e["outcomes"]:
            if o["rule"] == "max_off_coupler_gates" and not o["passed"] and \
                    o["circuit"] not in (e.get("blamed_circuits") or []):
                out.append(f"- {o['circuit']} of {e['patch']} on {e['chip']}: {o['message']}")
    return out


def render_markdown(d: dict, max_gates: int = 20) -> str:
    results = sorted(d["results"], key=lambda e: (e["passed"], -sum(
        c["off_coupler_count"] or 0 for c in e["circuits"])))
    failed = sum(not e["passed"] for e in results)
    verdict = "PASS" if d["passed"] else f"FAIL ({failed} of {len(results)} chip x patch fail)"
    out = [f"## embedcheck: {d['project']['name']}: {verdict}", "",
           f"| result | patch | chip | off-coupler gates | placements | "
           f"best {d['results'][0]['figure'] if d['results'] else 'score'} |",
           "|---|---|---|---|---|---|"]
    for e in results:
        score = format_score(e["best_score"]) if e["best_score"] is not None else "-"
        out.append(f"| {'pass' if e['passed'] else '**FAIL**'} | {e['patch']} | {e['chip']} | "
                   f"{_off(e)} | {_placements(e)} | {score} |")
    why = _why(results)
    if why:
        out += ["", "### Why it fails", ""] + why
    gates = [(e, c, g) for e in results for c in e["circuits"] for g in c["gates"]]
    if gates:
        nearest = any(e.get("chosen_from") == "nearest miss" for e, _, _ in gates)
        out += ["", "### Gates that need routing (exact" +
                ("; on the nearest miss where no placement is swap-free)" if nearest else ")"),
                ""]
        for e, c, g in gates[:max_gates]:
            where = f"{g['file']}:{g['line']}" if g["line"] else (g["file"] or "?")
            a, b = g["patch_qubits"]
            p, q = g["physical_qubits"]
            out.append(f"- `{where}` {c['circuit']} on {e['chip']}: `{g['text']}` needs "
                       f"{a}-{b} = physical {p}-{q} ({g['reason']})")
        if len(gates) > max_gates:
            out.append(f"- ... and {len(gates) - max_gates} more (see the JSON report)")
    failures = [(e, o) for e in results for o in e["outcomes"]
                if not o["passed"] and o["rule"] != "max_off_coupler_gates"]
    if failures:
        out += ["", "### Other rules that fail", ""]
        out += [f"- {e['patch']} on {e['chip']}: {o['rule']}: {o['message']}" for e, o in failures]
    base = d.get("baseline")
    if base:
        out += ["", f"### Against the baseline ({base.get('file', 'previous report')})", ""]
        out += [f"- worse: {w}" for w in base["worse"]] or ["- nothing got worse"]
        out += [f"- better: {b}" for b in base["better"]]
        out += [f"- not compared: {b}" for b in base.get("not_compared", [])]
    if d["internal_errors"]:
        out += ["", "### Internal errors (please report)", ""]
        out += [f"- {e}" for e in d["internal_errors"]]
    out += ["", f"_{d['caution']}_", ""]
    return "\n".join(out)
