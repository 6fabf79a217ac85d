"""Load a project file (YAML, schema `project.schema.json`): what CI checks.

Paths inside are relative to the project file. Rules given under a patch entry
override the project's rules key by key.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Mapping

from ..errors import did_you_mean
from .limits import SEARCH_LIMIT
from .yamlfile import Document, read_yaml

__all__ = ["PatchEntry", "Project", "Rules", "load_project"]

DEFAULT_RULES: dict[str, object] = {
    "max_off_coupler_gates": 0, "min_placements": 1, "score_floor": None, "required_circuits": []}


@dataclass(frozen=True)
class Rules:
    """The rules one chip x patch must keep."""

    max_off_coupler_gates: Mapping[str, int] = field(default_factory=dict)   # '*' = default
    min_placements: int = 1
    score_floor: tuple[str, float] | None = None
    required_circuits: tuple[str, ...] = ()

    def allowed(self, circuit: str) -> int:
        return self.max_off_coupler_gates.get(circuit, self.max_off_coupler_gates.get("*", 0))


@dataclass(frozen=True)
class PatchEntry:
    file: str
    rules: Rules
    line: int | None
    # The project file's line that sets each rule for this patch (its own override, else
    # the project's rules; a rule left at its default points at the patch entry).
    rule_lines: Mapping[str, int | None] = field(default_factory=dict)


@dataclass(frozen=True)
class Project:
    name: str
    file: str
    chips: tuple[tuple[str, int | None], ...]      # (path, line in the project file)
    patches: tuple[PatchEntry, ...]
    reports: Mapping[str, str]
    cross_check_top: int = 3
    cross_check_seed: int = 11
    limit: int = SEARCH_LIMIT
    budget_s: float = 60.0


def load_project(path: str | Path) -> Project:
    """Read a project file; raise `InputError` (file, line, key) on any problem."""
    doc = read_yaml(path, "project")
    data = doc.data
    base = Path(doc.file).parent
    project_rules = _rules(doc, ("rules",), data.get("rules", {}), DEFAULT_RULES)
    chips = []
    for i, chip in enumerate(data["chips"]):
        full = base / chip
        if not full.exists():
            raise doc.error(("chips", i), f"chip file '{chip}' not found (looked for {full})")
        chips.append((str(full), doc.line(("chips", i))))
    patches = []
    rule_lines = {}
    for i, entry in enumerate(data["patches"]):
        file = entry if isinstance(entry, str) else entry["file"]
        full = base / file
        if not full.exists():
            raise doc.error(("patches", i), f"patch file '{file}' not found (looked for {full})")
        rules = project_rules
        if isinstance(entry, dict) and "rules" in entry:
            rules = _rules(doc, ("patches", i, "rules"), entry["rules"], _as_raw(project_rules))
        patches.append(PatchEntry(str(full), rules, doc.line(("patches", i)),
                                  _rule_lines(doc, i, entry)))
        own = isinstance(entry, dict) and isinstance(entry.get("rules"), dict) and \
            isinstance(entry["rules"].get("max_off_coupler_gates"), dict)
        rule_lines[str(full)] = ((("patches", i, "rules", "max_off_coupler_gates"),) if own
                                 else ()) + (("rules", "max_off_coupler_gates"),)
    reports = {kind: str(base / target) for kind, target in data.get("reports", {}).items()}
    for kind, target in reports.items():
        if not Path(target).parent.is_dir():
            raise doc.error(("reports", kind), f"folder for report '{target}' does not exist")
    _check_rule_circuits(doc, patches, rule_lines)
    cross = data.get("cross_check", {})
    search = data.get("search", {})
    return Project(name=data["name"], file=doc.file, chips=tuple(chips), patches=tuple(patches),
                   reports=reports, cross_check_top=cross.get("top", 3),
                   cross_check_seed=cross.get("seed", 11), limit=search.get("limit", SEARCH_LIMIT),
                   budget_s=search.get("budget_s", 60.0))


def _check_rule_circuits(doc, patches, rule_lines) -> None:
    """Circuit names in max_off_coupler_gates must be circuits of the patch (typos are errors)."""
    from .patchfile import load_patch
    for entry in patches:
        named = [c for c in entry.rules.max_off_coupler_gates if c != "*"]
        if not named:
            continue
        circuits = list(load_patch(entry.file).circuits)
        for name in named:
            if name not in circuits:
                where = next((path for path in rule_lines[entry.file]      # where it is written
                              if name in (_at(doc.data, path) or {})), rule_lines[entry.file][-1])
                raise doc.error(where + (name,),
                                f"patch {Path(entry.file).name} has no circuit '{name}'"
                                f"{did_you_mean(name, circuits)}")


def _rule_lines(doc: Document, i: int, entry) -> dict[str, int | None]:
    """Where each rule of patch entry `i` is set: the entry's override, the project's rules
    key, or (a default) the entry itself."""
    own = entry.get("rules", {}) if isinstance(entry, dict) else {}
    shared = doc.data.get("rules", {}) or {}
    out = {}
    for rule in DEFAULT_RULES:
        if isinstance(own, dict) and rule in own:
            out[rule] = doc.line(("patches", i, "rules", rule))
        elif isinstance(shared, dict) and rule in shared:
            out[rule] = doc.line(("rules", rule))
        else:
            out[rule] = doc.line(("patches", i))
    return out


def _as_raw(rules: Rules) -> dict:
    return {"max_off_coupler_gates": dict(rules.max_off_coupler_gates),
            "min_placements": rules.min_placements, "score_floor": rules.score_floor,
            "required_circuits": list(rules.required_circuits)}


def _at(data, path):
    """The value at a key path of the parsed file, or None."""
    for key in path:
        try:
            data = data[key]
        except (KeyError, IndexError, TypeError):
            return None
    return data if isinstance(data, dict) else None


def _rules(doc: Document, path, given: dict, inherited: dict) -> Rules:
    merged = {**inherited, **given}
    off = merged["max_off_coupler_gates"]
    if isinstance(off, int):
        off = {"*": off}
    elif "max_off_coupler_gates" in given:
        off = dict(off)
        if "default" in off:
            off["*"] = off.pop("default")
        if isinstance(inherited["max_off_coupler_gates"], dict):
            off = {**inherited["max_off_coupler_gates"], **off}
    floor = merged["score_floor"]
    if isinstance(floor, dict):
        floor = (floor["figure"], float(floor["min"]))
    return Rules(max_off_coupler_gates=off, min_placements=merged["min_placements"],
                 score_floor=floor, required_circuits=tuple(merged["required_circuits"]))


