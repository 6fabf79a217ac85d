"""SARIF 2.1.0 of a `check` report (OASIS Static Analysis Results Interchange Format).

Every failing rule is a result located where it is at fault, so code-review pages
annotate the right line: one result per off-coupler gate of the chosen placement (or of
the nearest miss, when no placement makes the check round swap-free) at its OpenQASM
(or inline YAML) file and line; a circuit that cannot be judged on any placement at the
gates its reasons blame; the other rules at those gates, else at the project file's
line that sets the rule.

    >>> report = {"results": [{"chip": "c", "patch": "p", "patch_file": None,
    ...     "chosen_from": None, "circuits": [{"circuit": "round", "gates": [],
    ...     "reasons": ["a0 has too many partners"]}],
    ...     "outcomes": [{"rule": "max_off_coupler_gates", "circuit": "round", "passed": False,
    ...                   "message": "cannot be placed", "locations": [
    ...                   {"file": "r.qasm", "line": 20, "text": "cx a[0], d[0];"}]}]}]}
    >>> result = render_sarif(report)["runs"][0]["results"][0]
    >>> result["ruleId"], result["locations"][0]["physicalLocation"]["region"]
    ('EC5', {'startLine': 20})
"""
from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from ..version import __version__

__all__ = ["MAX_LOCATIONS", "RULES", "render_sarif"]

RULES = [
    {"id": "EC1", "name": "OffCouplerTwoQubitGate",
     "shortDescription": {"text": "Two-qubit gate on uncoupled physical qubits: routing would add "
                                  "SWAPs (3 two-qubit gates each)."}},
    {"id": "EC2", "name": "TooFewPlacements",
     "shortDescription": {"text": "Fewer swap-free placements than the project requires."}},
    {"id": "EC3", "name": "ScoreBelowFloor",
     "shortDescription": {"text": "The chosen placement's named score is below its floor."}},
    {"id": "EC4", "name": "MissingCircuit",
     "shortDescription": {"text": "A circuit the project requires is missing from the patch."}},
    {"id": "EC5", "name": "CircuitCannotBePlaced",
     "shortDescription": {"text": "No placement keeps this circuit within its allowance of "
                                  "off-coupler gates (or none could be judged in the time "
                                  "budget)."}},
]
MAX_LOCATIONS = 20          # results (or locations of one result) per failing rule
_RULE_OF = {"min_placements": "EC2", "score_floor": "EC3", "required_circuits": "EC4"}


def _uri(file: str | None) -> str:
    if not file:
        return "unknown"
    path = Path(file).resolve()
    try:
        return Path(os.path.relpath(path, Path.cwd())).as_posix() if \
            path.is_relative_to(Path.cwd()) else path.as_uri()
    except ValueError:
        return path.as_uri()


def _location(file: str | None, line: int | None = None) -> dict[str, Any]:
    loc: dict[str, Any] = {"physicalLocation": {"artifactLocation": {"uri": _uri(file)}}}
    if line:
        loc["physicalLocation"]["region"] = {"startLine": int(line)}
    return loc


def render_sarif(d: dict) -> dict:
    results = []
    for e in d["results"]:
        outcomes = {(o["rule"], o["circuit"]): o for o in e["outcomes"]}
        nearest = e.get("chosen_from") == "nearest miss"
        for c in e["circuits"]:
            o = outcomes.get(("max_off_coupler_gates", c["circuit"]))
            failed = bool(o and not o["passed"])
            why = "; ".join(c.get("reasons", []))
            context = ""
            if why:
                context = f" {c['circuit']} cannot be placed without added gates: {why}."
            if nearest:
                context += " (Judged on the nearest miss found, a heuristic: no placement is " \
                           "swap-free.)"
            for g in c["gates"]:
                a, b = g["patch_qubits"]
                p, q = g["physical_qubits"]
                results.append({
                    "ruleId": "EC1", "level": "error" if failed else "warning",
                    "message": {"text": f"{c['circuit']}: '{g['text']}' needs {a}-{b} = physical "
                                        f"qubits {p}-{q} on chip {e['chip']}, which have "
                                        f"{g['reason']}; routing would add SWAPs.{context}"},
                    "locations": [_location(g["file"], g["line"])],
                    "properties": {"chip": e["chip"], "patch": e["patch"],
                                   "circuit": c["circuit"], "gate_index": g["gate_index"]},
                })
            if failed and o is not None and not c["gates"]:
                where = o.get("locations") or [{"file": e["patch_file"], "line": None,
                                                "text": ""}]
                for at in where[:MAX_LOCATIONS]:
                    gate = f" (at '{at['text']}')" if at.get("text") else ""
                    results.append({
                        "ruleId": "EC5", "level": "error",
                        "message": {"text": f"{e['patch']} on {e['chip']}, {c['circuit']}: "
                                            f"{o['message']}{gate}"},
                        "locations": [_location(at["file"], at["line"])],
                        "properties": {"chip": e["chip"], "patch": e["patch"],
                                       "circuit": c["circuit"]},
                    })
        for o in e["outcomes"]:
            if o["rule"] in _RULE_OF and not o["passed"]:
                where = o.get("locations") or [{"file": e["patch_file"], "line": None}]
                results.append({
                    "ruleId": _RULE_OF[o["rule"]], "level": "error",
                    "message": {"text": f"{e['patch']} on {e['chip']}: {o['message']}"},
                    "locations": [_location(at["file"], at["line"])
                                  for at in where[:MAX_LOCATIONS]],
                })
    return {
        "$schema": "https://json.schemastore.org/sarif-2.1.0.json",
        "version": "2.1.0",
        "runs": [{"tool": {"driver": {"name": "embedcheck", "version": __version__,
                                      "rules": RULES}},
                  "results": results}],
    }
