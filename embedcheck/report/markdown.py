"""Markdown summary of a `check` report, short enough for a code-review comment."""
from __future__ import annotations

from .text import format_score

__all__ = ["render_markdown"]


def _off(entry: dict) -> str:
    bad = [f"{c['circuit']} {c['off_coupler_count']} ({c['allowed']} allowed)"
           for c in entry["circuits"] if c["off_coupler_count"]]
    if any(c["off_coupler_count"] is None and c["two_qubit_gates"] for c in entry["circuits"]):
        return "no placement"
    return ", ".join(bad) or "none"


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
                   f"{_off(e)} | {e['placements_within_allowance']} | {score} |")
    gates = [(e, c, g) for e in results for c in e["circuits"] for g in c["gates"]]
    if gates:
        out += ["", "### Gates that need routing (exact)", ""]
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
    if d["internal_errors"]:
        out += ["", "### Internal errors (please report)", ""]
        out += [f"- {e}" for e in d["internal_errors"]]
    out += ["", f"_{d['caution']}_", ""]
    return "\n".join(out)
