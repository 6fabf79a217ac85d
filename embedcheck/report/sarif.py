"""SARIF 2.1.0 of a `check` report (OASIS Static Analysis Results Interchange Format).

One result per off-coupler gate, located at its OpenQASM (or inline YAML) file and
line, so code-review pages annotate the offending gate; failed placement-count and
score rules are results located at the patch file.
"""
from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from ..version import __version__

__all__ = ["RULES", "render_sarif"]

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
]
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
        for c in e["circuits"]:
            o = outcomes.get(("max_off_coupler_gates", c["circuit"]))
            level = "error" if o and not o["passed"] else "warning"
            for g in c["gates"]:
                a, b = g["patch_qubits"]
                p, q = g["physical_qubits"]
                results.append({
                    "ruleId": "EC1", "level": level,
                    "message": {"text": f"{c['circuit']}: '{g['text']}' needs {a}-{b} = physical "
                                        f"qubits {p}-{q} on chip {e['chip']}, which have "
                                        f"{g['reason']}; routing would add SWAPs."},
                    "locations": [_location(g["file"], g["line"])],
                    "properties": {"chip": e["chip"], "patch": e["patch"],
                                   "circuit": c["circuit"], "gate_index": g["gate_index"]},
                })
        for o in e["outcomes"]:
            if o["rule"] in _RULE_OF and not o["passed"]:
                results.append({
                    "ruleId": _RULE_OF[o["rule"]], "level": "error",
                    "message": {"text": f"{e['patch']} on {e['chip']}: {o['message']}"},
                    "locations": [_location(e["patch_file"])],
                })
    return {
        "$schema": "https://json.schemastore.org/sarif-2.1.0.json",
        "version": "2.1.0",
        "runs": [{"tool": {"driver": {"name": "embedcheck", "version": __version__,
                                      "rules": RULES}},
                  "results": results}],
    }
