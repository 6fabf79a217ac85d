"""The CI gate: run every chip x patch of a project and judge it against the rules.

For each pair, `vet_patch` gives the ranked placements; the rules are judged on the
placement a user would take (the best-ranked one):

- `max_off_coupler_gates`: per circuit, off-coupler two-qubit gates on that placement
  must not exceed the allowance (default 0: swap-free);
- `min_placements`: at least this many distinct placements keep every circuit within
  its allowance;
- `score_floor`: the named figure of the best placement is at least the floor;
- `required_circuits`: the patch has these circuits.

With `cross_check_top > 0` the top placements are re-checked through qiskit's
transpiler; any disagreement with the exact audit is an internal error (exit 3),
never a rule outcome.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..audit.cross_check import cross_check
from ..audit.exact import AuditReport, OffCouplerGate, audit_placement
from ..errors import InputError
from ..io.chipfile import load_device
from ..io.patchfile import load_patch
from ..io.projectfile import Project, Rules
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from ..repair.rewrite import repair_preparation
from ..score.simulate import check_detectors
from .vet import Vetting, vet_patch

__all__ = ["CheckResult", "PairResult", "RuleOutcome", "check_pair", "run_project"]


@dataclass(frozen=True, kw_only=True)
class RuleOutcome:
    """One rule on one chip x patch (and circuit, where the rule is per circuit)."""

    rule: str
    circuit: str | None
    passed: bool
    message: str
    gates: tuple[OffCouplerGate, ...] = ()


@dataclass(frozen=True, kw_only=True)
class PairResult:
    """One chip x patch: the vetting, the audit of the chosen placement, the outcomes."""

    device: Device
    patch: Patch
    rules: Rules
    vetting: Vetting
    audit: AuditReport | None
    outcomes: tuple[RuleOutcome, ...]
    cross_check: tuple[str, ...]          # disagreements (internal errors); empty is good
    allowed_placements: int

    @property
    def passed(self) -> bool:
        return all(o.passed for o in self.outcomes)


@dataclass(frozen=True, kw_only=True)
class CheckResult:
    project: Project
    pairs: tuple[PairResult, ...]

    @property
    def passed(self) -> bool:
        return all(p.passed for p in self.pairs)

    @property
    def internal_errors(self) -> tuple[str, ...]:
        return tuple(e for p in self.pairs for e in p.cross_check)


def run_project(project: Project, *, cross_check_top: int | None = None,
                progress: Callable[[str], None] | None = None) -> CheckResult:
    """Check every chip x patch of `project` (loading the files it names)."""
    top = project.cross_check_top if cross_check_top is None else cross_check_top
    devices = [load_device(path) for path, _ in project.chips]
    pairs = []
    for entry in project.patches:
        patch = load_patch(entry.file)
        if patch.detectors:                     # the noiseless sanity check comes first
            problems = check_detectors(patch)
            if problems:
                raise InputError(problems[0].message + " (a bug in the circuit or the "
                                 "declaration)", file=entry.file)
        for device in devices:
            if progress:
                progress(f"{patch.name} on {device.name}")
            pairs.append(check_pair(device, patch, entry.rules, limit=project.limit,
                                    budget_s=project.budget_s, cross_check_top=top,
                                    seed=project.cross_check_seed))
    return CheckResult(project=project, pairs=tuple(pairs))


def check_pair(device: Device, patch: Patch, rules: Rules, *, limit: int = 10_000,
               budget_s: float = 60.0, cross_check_top: int = 3, seed: int = 11) -> PairResult:
    """Judge one chip x patch against `rules`."""
    vetting = vet_patch(device, patch, limit=limit, budget_s=budget_s,
                        round_may_route=rules.allowed("round") > 0)
    names = list(patch.circuits)
    allowance = np.array([rules.allowed(n) for n in names])
    ok_rows = (vetting.off_coupler <= allowance).all(axis=1) if len(names) else \
        np.ones(len(vetting.ranking.placements), dtype=bool)
    allowed = int(ok_rows.sum())
    # Take the best placement that keeps every allowance; else the best one there is.
    chosen: Placement | None = None
    if len(vetting.ranking.placements):
        index = int(np.argmax(ok_rows)) if allowed else 0
        chosen = vetting.ranking.placements[index]
    audit = audit_placement(device, patch, chosen) if chosen is not None else None
    outcomes = []
    for name in rules.required_circuits:
        outcomes.append(RuleOutcome(rule="required_circuits", circuit=name,
                                    passed=name in patch.circuits,
                                    message="present" if name in patch.circuits else
                                    f"the patch has no circuit '{name}'"))
    for name in names:
        limit_n = rules.allowed(name)
        if audit is None:
            ops = len(patch.circuits[name].two_qubit_gates)
            ok = ops == 0
            why = "; ".join(vetting.search.reasons) or (
                "no placement found" if vetting.complete else
                "the time budget ran out before any placement was found")
            outcomes.append(RuleOutcome(rule="max_off_coupler_gates", circuit=name, passed=ok,
                                        message="no two-qubit gates" if ok else
                                        f"no placement: {why}"))
            continue
        c = next(c for c in audit.circuits if c.circuit == name)
        n = len(c.off_coupler)
        msg = f"{n} off-coupler two-qubit gate(s), {limit_n} allowed" if n else "swap-free"
        if n > limit_n and name == (patch.experiment()[0][0] if patch.experiment() else None):
            msg += _repair_hint(device, patch, name, audit.placement)
        outcomes.append(RuleOutcome(rule="max_off_coupler_gates", circuit=name,
                                    passed=n <= limit_n, message=msg, gates=c.off_coupler))
    stop = vetting.search.stop_reason.value if not vetting.search.complete else "budget"
    complete = "" if vetting.complete else f" (search incomplete: {stop})"
    outcomes.append(RuleOutcome(
        rule="min_placements", circuit=None, passed=allowed >= rules.min_placements,
        message=f"{allowed} distinct placement(s) keep every allowance, at least "
                f"{rules.min_placements} required{complete}"))
    if rules.score_floor is not None:
        figure, floor = rules.score_floor
        if audit is None:
            outcomes.append(RuleOutcome(rule="score_floor", circuit=None, passed=False,
                                        message=f"{figure}: no placement to score"))
        else:
            index = vetting.ranking.placements.index(chosen)
            value = float(vetting.ranking.success[index])
            outcomes.append(RuleOutcome(rule="score_floor", circuit=None, passed=value >= floor,
                                        message=f"{figure} {value:.4f} on the chosen placement, "
                                                f"floor {floor:.4f}"))
    disagreements: tuple[str, ...] = ()
    if cross_check_top and len(vetting.ranking.placements):
        disagreements = tuple(cross_check(device, patch,
                                          vetting.ranking.placements[:cross_check_top], seed=seed))
    return PairResult(device=device, patch=patch, rules=rules, vetting=vetting, audit=audit,
                      outcomes=tuple(outcomes), cross_check=disagreements,
                      allowed_placements=allowed)


def _repair_hint(device: Device, patch: Patch, circuit: str, placement: Placement) -> str:
    """A suggestion when the failing preparation can be rewritten onto the couplers."""
    try:
        fix = repair_preparation(device, patch, placement, circuit=circuit)
    except InputError:
        return ""
    if not fix.repaired or not fix.proven or fix.after["off_coupler_gates"]:
        return ""
    return (f"; 'embedcheck repair' can rewrite it onto the couplers ({fix.method} method, "
            f"{fix.after['two_qubit_gates']} CNOTs, proven equivalent)")
