"""The main job in one call: which circuits fit, where, how well, and what breaks.

`vet_patch` runs the stages in order (search, audit, rank) and returns plain data
for the report:

1. each circuit on its own: does any swap-free placement exist?
2. the *core*: the largest set of circuits that fit together, built greedily with
   the check round first (a layout is chosen for its check rounds; a preparation can
   be rewritten, see the repair work);
3. every distinct placement that is swap-free for the core, ranked by the cost model;
4. for every such placement, the off-coupler gates of each circuit (vectorised), and
   the full audit of the best one, naming each offending gate and its source line.

    >>> from embedcheck.io.chipfile import load_device
    >>> from embedcheck.io.patchfile import load_patch
    >>> v = vet_patch(load_device("devices/demo_heavy_hex.yaml"),
    ...               load_patch("samples/flagged_weight4.yaml"))
    >>> v.core, v.excluded, len(v.ranking.placements)
    (('round', 'readout'), ('prep',), 21)
"""
from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..audit.exact import AuditReport, audit_placement
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement, off_coupler_counts, placement_grid
from ..place.near_misses import NearMiss, near_misses
from ..place.reasons import Reason
from ..place.search import SearchResult, StopReason, find_placements
from ..place.symmetry import symmetry_order
from ..score.cost import Ranking, rank_placements, scores

__all__ = ["CircuitFit", "Vetting", "vet_patch"]

_CORE_ORDER = ("round", "readout", "prep")


@dataclass(frozen=True, kw_only=True)
class CircuitFit:
    """Whether one circuit alone has any swap-free placement, and why not."""

    circuit: str
    two_qubit_gates: int
    fits_alone: bool | None          # None: the time budget ran out before an answer
    reasons: tuple[str, ...]
    culprits: tuple[Reason, ...] = ()   # the reasons with the patch qubits and pairs at fault


@dataclass(frozen=True, kw_only=True)
class Vetting:
    """Everything the find report shows, in the order the stages produced it."""

    device: Device
    patch: Patch
    fits: tuple[CircuitFit, ...]
    core: tuple[str, ...]
    excluded: tuple[str, ...]
    search: SearchResult
    ranking: Ranking
    off_coupler: np.ndarray      # (placements in ranked order, circuits in patch order)
    best_audit: AuditReport | None
    unconstrained: tuple[str, ...] = ()   # patch qubits with no two-qubit gate in the core
    constraints: Constraints | None = None
    near_misses: tuple[NearMiss, ...] = ()
    inconclusive: tuple[str, ...] = ()    # circuits whose checks ran out of time budget

    @property
    def all_swap_free(self) -> bool:
        return not self.excluded and bool(self.ranking.placements)

    @property
    def complete(self) -> bool:
        """True when every stage finished: the verdicts are answers, not budget cut-offs."""
        return self.search.complete and not self.inconclusive

    def __repr__(self) -> str:
        verdict = "every circuit swap-free" if self.all_swap_free else \
            f"needs routing: {', '.join(self.excluded) or 'no placement'}"
        done = "" if self.complete else ", INCOMPLETE"
        return (f"Vetting({self.patch.name} on {self.device.name}: "
                f"{len(self.ranking.placements)} placement(s), {verdict}{done})")

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def vet_patch(device: Device, patch: Patch, *, limit: int | None = 100_000,
              budget_s: float | None = 60.0,
              progress: Callable[[int], None] | None = None,
              constraints: Constraints | None = None, processes: int = 1,
              round_may_route: bool = False) -> Vetting:
    """Search, audit and rank `patch` on `device`; see the module docstring.

    `constraints` (or, when not given, the patch's own) restrict every search;
    `processes` worker processes share the full search's anchors. A check round that
    cannot fit ranks no layout for the other circuits alone, unless `round_may_route`
    (a CI rule allows the round off-coupler gates, so layouts for the rest are wanted).
    """
    rules = constraints if constraints is not None else patch.constraints
    # A patch bigger than the chip is a finding (the search's first reason says so), not a
    # bad input: a project may list chips of every size.
    deadline = None if budget_s is None else time.monotonic() + budget_s

    def left() -> float | None:              # one budget for every stage, not one each
        return None if deadline is None else max(0.0, deadline - time.monotonic())

    fits: list[CircuitFit] = []
    inconclusive: list[str] = []
    for name, circuit in patch.circuits.items():
        if not circuit.two_qubit_gates:       # nothing to place: swap-free anywhere
            fits.append(CircuitFit(circuit=name, two_qubit_gates=0, fits_alone=True, reasons=()))
            continue
        alone = find_placements(device, patch, circuits=[name], limit=1, budget_s=left(),
                                constraints=rules)
        known = bool(alone.placements) or alone.complete
        fits.append(CircuitFit(circuit=name, two_qubit_gates=len(circuit.two_qubit_gates),
                               fits_alone=bool(alone.placements) if known else None,
                               reasons=alone.reasons, culprits=alone.culprits))
        if not known:
            inconclusive.append(name)
    # The core: circuits with two-qubit gates that fit together, check round first.
    # Circuits without two-qubit gates are swap-free anywhere and join any core.
    order = sorted(patch.circuits, key=lambda n: (_CORE_ORDER.index(n)
                                                  if n in _CORE_ORDER else len(_CORE_ORDER)))
    gated = [n for n in order if patch.circuits[n].two_qubit_gates]
    fitting = {f.circuit for f in fits if f.fits_alone}
    core: list[str] = []
    for name in gated:
        if name not in fitting:
            if name == "round" and not round_may_route:   # a layout is chosen for its
                break                        # rounds: one that suits only the rest misleads
            continue
        if not core:
            core.append(name)
            continue
        joint = find_placements(device, patch, circuits=core + [name], limit=1,
                                budget_s=left(), constraints=rules)
        if joint.placements:
            core.append(name)
        elif not joint.complete:
            inconclusive.append(name)
    if core or not gated:
        core += [n for n in order if n not in gated]
        search = find_placements(device, patch, circuits=core, limit=limit, budget_s=left(),
                                 progress=progress, constraints=rules, processes=processes)
        misses: tuple[NearMiss, ...] = ()
    elif inconclusive:
        search = SearchResult(circuits=tuple(gated), placements=(), raw_maps=0,
                              symmetry_order=symmetry_order(patch, gated),
                              stop_reason=StopReason.BUDGET, reasons=(), elapsed_s=0.0)
        misses = ()
    else:
        culprits = tuple(dict.fromkeys(r for f in fits for r in f.culprits)) or (
            Reason(text="no circuit with two-qubit gates has a swap-free placement"),)
        search = SearchResult(circuits=tuple(gated), placements=(), raw_maps=0,
                              symmetry_order=symmetry_order(patch, gated),
                              stop_reason=StopReason.COMPLETE,
                              reasons=tuple(r.text for r in culprits), culprits=culprits,
                              elapsed_s=0.0)
        misses = tuple(near_misses(device, patch, gated, constraints=rules,
                                   budget_s=min(5.0, 5.0 if deadline is None else left() or 0.0)))
    excluded = tuple(n for n in patch.circuits if n not in core)
    ranking = rank_placements(device, patch, _best_of_orbits(device, patch, search))
    names = list(patch.circuits)
    off = off_coupler_counts(device, patch, ranking.placements, names)
    best = audit_placement(device, patch, ranking.placements[0]) if ranking.placements else None
    used = {q for pair in patch.interaction_counts(core or list(patch.circuits)) for q in pair}
    unconstrained = tuple(q for i, q in enumerate(patch.qubits) if i not in used)
    return Vetting(device=device, patch=patch, fits=tuple(fits), core=tuple(core),
                   excluded=excluded, search=search, ranking=ranking, off_coupler=off,
                   best_audit=best, unconstrained=unconstrained, constraints=rules,
                   near_misses=misses, inconclusive=tuple(inconclusive))


def _best_of_orbits(device: Device, patch: Patch,
                    search: SearchResult) -> tuple[Placement, ...]:
    """Each distinct placement stands for its orbit under the patch's symmetries (of the
    searched circuits); the circuits left out of the search, gate order and measurements
    may still tell the members apart, so keep the best-scoring member of each orbit."""
    placements = search.placements
    k = len(search.symmetries)
    if k <= 1 or not placements or len(placements) * k > 2_000_000:
        return placements
    grid = placement_grid(placements, patch.num_qubits)
    perms = np.array(search.symmetries, dtype=np.int64)
    members = grid[:, perms].reshape(len(placements) * k, patch.num_qubits)
    terms, unscored = scores(device, patch, members)
    total: np.ndarray = sum(terms.values())  # type: ignore[assignment]
    order = np.lexsort((-total, unscored))
    orbit = order // k
    _, first = np.unique(orbit, return_index=True)
    chosen = order[np.sort(first)]
    return tuple(Placement(tuple(int(x) for x in members[i])) for i in chosen)
