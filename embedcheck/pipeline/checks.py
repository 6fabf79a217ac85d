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
never a rule outcome. The cross-check shares the pair's `budget_s` with the search: a
placement is re-checked only while it lasts (`PairResult.cross_check_cut` says when
the budget cut the top short).

A circuit that cannot be placed without added gates even on its own is the one blamed,
with its own reasons; when no placement makes the check round swap-free, the rules are
judged on the nearest miss, so the gates at fault have their lines:

    >>> from embedcheck.io.projectfile import Rules
    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ring = tuple(Operation("cx", (f"q{i}", f"q{(i + 1) % 3}"), "2q", line=i + 1)
    ...              for i in range(3))
    >>> names = ("q0", "q1", "q2")
    >>> patch = Patch("triangle", names, dict.fromkeys(names, "data"),
    ...               {"round": Circuit("round", ring)})
    >>> pair = check_pair(Device.from_lattice(line(4), name="line"), patch, Rules(),
    ...                   cross_check_top=0)
    >>> pair.passed, pair.blamed, pair.chosen_from, [at.line for at in pair.outcomes[0].locations]
    (False, ('round',), 'nearest miss', [1])
"""
from __future__ import annotations

import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from ..audit.cross_check import cross_check
from ..audit.exact import AuditReport, OffCouplerGate, audit_placement
from ..errors import InputError
from ..io.chipfile import load_device
from ..io.limits import SEARCH_LIMIT
from ..io.patchfile import load_patch
from ..io.projectfile import Project, Rules
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from ..repair.rewrite import repair_preparation
from ..score.simulate import check_detectors
from .vet import CircuitFit, Vetting, vet_patch

__all__ = ["CheckResult", "Location", "PairResult", "RuleOutcome", "check_pair", "run_project"]


@dataclass(frozen=True, kw_only=True)
class Location:
    """Where a failing rule is at fault: a gate's source line (OpenQASM or inline YAML), or
    the project file's line that sets the rule."""

    file: str | None
    line: int | None
    text: str = ""


@dataclass(frozen=True, kw_only=True)
class RuleOutcome:
    """One rule on one chip x patch (and circuit, where the rule is per circuit).

    `gates` are the off-coupler gates on the chosen placement; `locations` where the
    failure is at fault (those gates, or, with no placement, the gates on the pairs the
    reasons blame, or the project line of the rule); `reasons` why the circuit cannot fit.
    """

    rule: str
    circuit: str | None
    passed: bool
    message: str
    gates: tuple[OffCouplerGate, ...] = ()
    locations: tuple[Location, ...] = ()
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True, kw_only=True)
class PairResult:
    """One chip x patch: the vetting, the audit of the chosen placement, the outcomes.

    `chosen_from` says where the judged placement came from: 'ranking' (the best-ranked
    one that keeps every allowance, else the best), 'nearest miss' (no placement makes the
    check round swap-free: the nearest miss the heuristic found), or None (none to judge).
    `blamed` are the circuits that cannot be placed without added gates even on their own.
    """

    device: Device
    patch: Patch
    rules: Rules
    vetting: Vetting
    audit: AuditReport | None
    outcomes: tuple[RuleOutcome, ...]
    cross_check: tuple[str, ...]          # disagreements (internal errors); empty is good
    allowed_placements: int
    chosen_from: str | None = None
    chosen_score: float | None = None     # the figure of the chosen ranked placement
    blamed: tuple[str, ...] = ()
    cross_checked: int = 0                # placements re-checked through qiskit
    cross_check_cut: bool = False         # the budget ran out before the rest of the top

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
                                    seed=project.cross_check_seed,
                                    rule_lines=entry.rule_lines, project_file=project.file))
    return CheckResult(project=project, pairs=tuple(pairs))


def check_pair(device: Device, patch: Patch, rules: Rules, *, limit: int = SEARCH_LIMIT,
               budget_s: float = 60.0, cross_check_top: int = 3, seed: int = 11,
               rule_lines: Mapping[str, int | None] | None = None,
               project_file: str | None = None) -> PairResult:
    """Judge one chip x patch against `rules`.

    A circuit that cannot be placed without added gates even on its own is the one
    blamed, with its own reasons (never another circuit's). When no placement makes
    the check round swap-free, the rules are judged on the nearest miss the search
    found (a heuristic), so the gates at fault have their lines. `rule_lines` (rule ->
    line of `project_file`) locate failures that no gate explains.
    """
    deadline = time.monotonic() + budget_s          # the cross-check shares the budget
    vetting = vet_patch(device, patch, limit=limit, budget_s=budget_s,
                        round_may_route=rules.allowed("round") > 0)
    names = list(patch.circuits)
    fits = {f.circuit: f for f in vetting.fits}
    blamed = tuple(f.circuit for f in vetting.fits if f.fits_alone is False)
    ranked = vetting.ranking.placements
    allowance = np.array([rules.allowed(n) for n in names])
    ok_rows = (vetting.off_coupler <= allowance).all(axis=1) if len(names) else \
        np.ones(len(ranked), dtype=bool)
    allowed = int(ok_rows.sum())
    # Take the best placement that keeps every allowance; else the best one there is;
    # with none ranked, the nearest miss (so the gates at fault have lines).
    chosen: Placement | None = None
    chosen_from: str | None = None
    score: float | None = None
    if len(ranked):
        index = int(np.argmax(ok_rows)) if allowed else 0
        chosen, chosen_from = ranked[index], "ranking"
        score = float(vetting.ranking.success[index])
    elif vetting.near_misses:
        chosen, chosen_from = vetting.near_misses[0].placement, "nearest miss"
    audit = audit_placement(device, patch, chosen) if chosen is not None else None
    rule_at = _rule_location(rule_lines or {}, project_file)
    outcomes = []
    for name in rules.required_circuits:
        outcomes.append(RuleOutcome(rule="required_circuits", circuit=name,
                                    passed=name in patch.circuits,
                                    message="present" if name in patch.circuits else
                                    f"the patch has no circuit '{name}'",
                                    locations=rule_at("required_circuits")))
    at_fault: list[Location] = []
    for name in names:
        outcome = _circuit_outcome(device, patch, name, rules.allowed(name), fits.get(name),
                                   vetting, audit, chosen_from, blamed)
        outcomes.append(outcome)
        if name in blamed and not outcome.passed:
            at_fault += outcome.locations
    stop = vetting.search.stop_reason.value if not vetting.search.complete else "budget"
    complete = "" if vetting.complete else f" (search incomplete: {stop})"
    because = f"; {', '.join(blamed)} cannot be placed without added gates" if blamed else ""
    outcomes.append(RuleOutcome(
        rule="min_placements", circuit=None, passed=allowed >= rules.min_placements,
        message=f"{allowed} distinct placement(s) keep every allowance, at least "
                f"{rules.min_placements} required{complete}{because}",
        locations=tuple(at_fault) or rule_at("min_placements")))
    if rules.score_floor is not None:
        figure, floor = rules.score_floor
        if score is None:
            outcomes.append(RuleOutcome(rule="score_floor", circuit=None, passed=False,
                                        message=f"{figure}: no ranked placement to score",
                                        locations=tuple(at_fault) or rule_at("score_floor")))
        else:
            outcomes.append(RuleOutcome(rule="score_floor", circuit=None, passed=score >= floor,
                                        message=f"{figure} {score:.4f} on the chosen placement, "
                                                f"floor {floor:.4f}",
                                        locations=rule_at("score_floor")))
    disagreements: list[str] = []
    checked = 0
    wanted = min(cross_check_top, len(ranked))
    for placement in ranked[:wanted]:
        if time.monotonic() > deadline:                  # read before each placement
            break
        disagreements += cross_check(device, patch, [placement], seed=seed)
        checked += 1
    return PairResult(device=device, patch=patch, rules=rules, vetting=vetting, audit=audit,
                      outcomes=tuple(outcomes), cross_check=tuple(disagreements),
                      cross_checked=checked, cross_check_cut=checked < wanted,
                      allowed_placements=allowed, chosen_from=chosen_from, chosen_score=score,
                      blamed=blamed)


def _circuit_outcome(device: Device, patch: Patch, name: str, allowance: int,
                     fit: CircuitFit | None, vetting: Vetting, audit: AuditReport | None,
                     chosen_from: str | None, blamed: tuple[str, ...]) -> RuleOutcome:
    """max_off_coupler_gates for one circuit, blaming it only for what is its own."""
    rule = "max_off_coupler_gates"
    own = fit.reasons if fit is not None and fit.fits_alone is False else ()
    cannot = "cannot be placed without added two-qubit gates, even on its own: " + \
        "; ".join(own) if own else ""
    if audit is None:
        if not patch.circuits[name].two_qubit_gates:
            return RuleOutcome(rule=rule, circuit=name, passed=True,
                               message="no two-qubit gates")
        if own:
            return RuleOutcome(rule=rule, circuit=name, passed=False, message=cannot,
                               locations=_blamed_gates(patch, name, fit), reasons=own)
        if (fit is not None and fit.fits_alone is None) or not vetting.complete:
            return RuleOutcome(rule=rule, circuit=name, passed=False,
                               message="unknown: the time budget ran out before a placement "
                                       "was found")
        others = ", ".join(b for b in blamed if b != name)
        why = (f"fits on its own; not judged on a shared placement, since {others} cannot "
               "be placed without added gates") if others else "fits on its own"
        return RuleOutcome(rule=rule, circuit=name, passed=True, message=why)
    c = next(c for c in audit.circuits if c.circuit == name)
    n = len(c.off_coupler)
    msg = f"{n} off-coupler two-qubit gate(s), {allowance} allowed" if n else "swap-free"
    if chosen_from == "nearest miss" and patch.circuits[name].two_qubit_gates:
        msg = "on the nearest miss (a heuristic; no placement makes " + \
            f"{', '.join(blamed) or 'the check round'} swap-free): {msg}"
    if own:
        msg = f"{cannot}; {msg}"
    elif n > allowance and fit is not None and fit.fits_alone and name not in vetting.core:
        core = [c for c in vetting.core if patch.circuits[c].two_qubit_gates]
        msg += f"; it fits on its own, but not together with {', '.join(core)}" if core else ""
    if n > allowance and name == (patch.experiment()[0][0] if patch.experiment() else None):
        msg += _repair_hint(device, patch, name, audit.placement)
    locations = tuple(Location(file=g.file, line=g.line, text=g.text) for g in c.off_coupler)
    if own and not locations:
        locations = _blamed_gates(patch, name, fit)
    return RuleOutcome(rule=rule, circuit=name, passed=n <= allowance, message=msg,
                       gates=c.off_coupler, locations=locations, reasons=own)


def _blamed_gates(patch: Patch, name: str, fit: CircuitFit | None) -> tuple[Location, ...]:
    """The circuit's two-qubit gates on the pairs its reasons blame (else on the qubits
    they name), in circuit order: where a review page should point."""
    if fit is None:
        return ()
    pairs = {frozenset(p) for r in fit.culprits for p in r.pairs}
    qubits = {q for r in fit.culprits for q in r.qubits}
    gates = patch.circuits[name].two_qubit_gates
    chosen = [g for g in gates if frozenset(g.qubits) in pairs] or \
        [g for g in gates if set(g.qubits) & qubits]
    return tuple(Location(file=g.file, line=g.line, text=g.text) for g in chosen)


def _rule_location(lines: Mapping[str, int | None],
                   project_file: str | None) -> Callable[[str], tuple[Location, ...]]:
    def at(rule: str) -> tuple[Location, ...]:
        if project_file is None:
            return ()
        return (Location(file=project_file, line=lines.get(rule), text=f"rule {rule}"),)
    return at


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
