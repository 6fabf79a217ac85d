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
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..audit.exact import AuditReport, audit_placement
from ..io.limits import SEARCH_LIMIT
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement, PlacementRows, off_coupler_counts
from ..place.enumeration import Effort
from ..place.near_misses import NearMiss, near_misses
from ..place.reasons import Reason
from ..place.search import SearchResult, StopReason, find_placements
from ..place.symmetry import symmetry_order
from ..score.best_placements import BestPlacements, find_best_placements
from ..score.cost import Ranking, rank_placements, rank_scored, ranked_order, scores

__all__ = ["DEFAULT_BUDGET_WORK", "SEARCH_SHARE", "CircuitFit", "Vetting", "vet_patch"]

# The full search (with the scoring of what it finds) may use this share of what is left
# of the budget; the rest is kept for the stages after it (the final sort, the audit, the
# logical figures, several snapshots, reports), so `budget_s` bounds the whole run.
SEARCH_SHARE = 0.8
# find's default work budget (work units: see `find_placements`). Measured on the 2-core
# bench machine: about 2.5e6 units per CPU second of search (the 87-qubit piece on 8319
# qubits, chipfit d=5 on 2159), about 2e6 while hundreds of thousands of placements are
# stored; so 5e7 is 20-25 s, and the 60 s clock rarely stops a run before it. The
# best-first search may use as much again.
DEFAULT_BUDGET_WORK = 50_000_000
# The best-first search's own work budget (its units: candidate extensions tried), at most:
# 1e7 took 2.7 CPU s on chipfit d=5 on a 20x20 grid (10 found, none better left).
BEST_FIRST_WORK = 20_000_000

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
    best: BestPlacements | None = None    # the best-first search, when the space was too big
    work: int = 0                         # the searches' work units, every stage summed

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


def vet_patch(device: Device, patch: Patch, *, limit: int | None = SEARCH_LIMIT,
              budget_s: float | None = 60.0,
              progress: Callable[[int], None] | None = None,
              constraints: Constraints | None = None, processes: int = 1,
              round_may_route: bool = False, budget_work: int | None = None,
              on_effort: Callable[[Effort], None] | None = None,
              best_first: int = 0) -> Vetting:
    """Search, audit and rank `patch` on `device`; see the module docstring.

    `constraints` (or, when not given, the patch's own) restrict every search;
    `processes` worker processes share the full search's anchors. A check round that
    cannot fit ranks no layout for the other circuits alone, unless `round_may_route`
    (a CI rule allows the round off-coupler gates, so layouts for the rest are wanted).

    `budget_work` bounds the searches' work (the matcher's work units, see
    `find_placements`), shared by every stage like `budget_s`; unlike seconds it stops
    identical runs at the same place. Placements an earlier stage found (a circuit alone,
    or the circuits joined so far) are kept when the full search runs out of budget.
    `on_effort` sees every search's effort (progress before a first placement).
    `best_first` (a count, 0: off): when the full search could not list every placement
    (limit or budget), also search that many best placements by the fidelity product
    best first (`find_best_placements`, with up to `budget_work` work units of its own,
    at most BEST_FIRST_WORK)
    and rank them with the rest; `Vetting.best` says whether their order is proven.
    """
    rules = constraints if constraints is not None else patch.constraints
    # A patch bigger than the chip is a finding (the search's first reason says so), not a
    # bad input: a project may list chips of every size.
    deadline = None if budget_s is None else time.monotonic() + budget_s

    def left() -> float | None:              # one budget for every stage, not one each
        return None if deadline is None else max(0.0, deadline - time.monotonic())

    spent = 0                                # work units used by the stages so far

    def work_left() -> int | None:
        return None if budget_work is None else max(0, budget_work - spent)

    found_for: dict[tuple[str, ...], Sequence[Placement]] = {}   # what earlier stages found
    fits: list[CircuitFit] = []
    inconclusive: list[str] = []
    for name, circuit in patch.circuits.items():
        if not circuit.two_qubit_gates:       # nothing to place: swap-free anywhere
            fits.append(CircuitFit(circuit=name, two_qubit_gates=0, fits_alone=True, reasons=()))
            continue
        alone = find_placements(device, patch, circuits=[name], limit=1, budget_s=left(),
                                constraints=rules, max_work=work_left(), on_effort=on_effort)
        spent += alone.work
        found_for[(name,)] = alone.placements
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
                                budget_s=left(), constraints=rules, max_work=work_left(),
                                on_effort=on_effort)
        spent += joint.work
        found_for[tuple(core + [name])] = joint.placements
        if joint.placements:
            core.append(name)
        elif not joint.complete:
            inconclusive.append(name)
    best_found: BestPlacements | None = None
    ranker = _Ranker(device, patch)
    if core or not gated:
        earlier = found_for.get(tuple(core), ())    # the same interaction graph as the core
        core += [n for n in order if n not in gated]
        # Found placements are scored while the search runs, so the budget bounds both;
        # the rest of the budget is kept for what follows (ranking, audit, reports).
        share = left()
        search = find_placements(device, patch, circuits=core, limit=limit,
                                 budget_s=None if share is None else share * SEARCH_SHARE,
                                 progress=progress, constraints=rules, processes=processes,
                                 max_work=work_left(), on_effort=on_effort, on_found=ranker)
        spent += search.work
        kept = [p for p in earlier if p not in search.placements]     # a few at most
        if kept:                             # found before, not found again in what was left
            extra = PlacementRows(kept, patch.num_qubits)
            ranker(extra.array, ranker.perms_or_identity(patch.num_qubits))
            listed = PlacementRows(search.placements, copy=False).array
            search = replace(search, placements=PlacementRows(np.concatenate(
                [listed.astype(np.int64), extra.array.astype(np.int64)])))
        if best_first and not search.complete and not search.reasons:
            best_found = find_best_placements(
                device, patch, top=best_first, circuits=core, constraints=rules,
                budget=BEST_FIRST_WORK if budget_work is None else
                min(budget_work, BEST_FIRST_WORK),
                deadline=None if deadline is None else
                time.monotonic() + (left() or 0.0) * SEARCH_SHARE)
            spent += best_found.work
            new = _new_orbits(search, best_found.placements)
            if new:
                ranker(PlacementRows(new, patch.num_qubits).array,
                       ranker.perms_or_identity(patch.num_qubits))
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
    ranking, off = ranker.ranking()
    best = audit_placement(device, patch, ranking.placements[0]) if ranking.placements else None
    used = {q for pair in patch.interaction_counts(core or list(patch.circuits)) for q in pair}
    unconstrained = tuple(q for i, q in enumerate(patch.qubits) if i not in used)
    return Vetting(device=device, patch=patch, fits=tuple(fits), core=tuple(core),
                   excluded=excluded, search=search, ranking=ranking, off_coupler=off,
                   best_audit=best, unconstrained=unconstrained, constraints=rules,
                   near_misses=misses, inconclusive=tuple(inconclusive), best=best_found,
                   work=spent)


def _new_orbits(search: SearchResult,
                extra: Sequence[Placement]) -> tuple[Placement, ...]:
    """The placements of `extra` (a few, from the best-first search) whose orbit under the
    search's symmetries holds no placement the search listed (a best-first placement is
    its orbit's cheapest member, the search's its smallest; both stand for the same
    orbit). The search lists one member per orbit, so an orbit is listed when any image
    of the placement is among the search's rows."""
    if not extra:
        return ()
    perms = search.symmetries or (tuple(range(len(extra[0].physical))),)
    rows = PlacementRows(search.placements, copy=False).array       # a view, not a copy
    listed = {row.tobytes() for row in rows.astype(np.int64)} if len(extra) * len(perms) > 64 \
        else None

    def seen(image: tuple[int, ...]) -> bool:
        if listed is not None:
            return np.array(image, dtype=np.int64).tobytes() in listed
        return bool(len(rows)) and bool((rows == np.array(image)).all(axis=1).any())

    out: list[Placement] = []
    taken: set[tuple[int, ...]] = set()
    for p in extra:
        images = {tuple(p.physical[i] for i in perm) for perm in perms}
        if any(seen(image) for image in images) or images & taken:
            continue
        taken |= images
        out.append(p)
    return tuple(out)


class _Ranker:
    """Scores placements as the search finds them (`find_placements(on_found=...)`), a
    piece of about `PIECE` scored rows at a time, so that no per-placement Python work,
    and no stage outside the search's budget, grows with the number found.

    Each distinct placement stands for its orbit under the patch's symmetries (of the
    searched circuits); the circuits left out of the search, gate order and measurements
    may still tell the members apart, so the best-scoring member of each orbit is kept
    (fewest off-coupler gates, then the highest score; ties to the first member), as
    long as all the members together number at most `MAX_MEMBERS`. Beyond that, every
    placement is ranked as found (its canonical member): until then the canonical rows
    are kept too (bare int32 rows, scored only if that happens), so the choice depends
    only on how many were found."""

    PIECE = 1 << 16
    MAX_MEMBERS = 2_000_000

    def __init__(self, device: Device, patch: Patch) -> None:
        self.device, self.patch = device, patch
        self.waiting: list[np.ndarray] = []
        self.rows = 0
        self.members = 0                      # orbit members scored so far
        self.perms: np.ndarray | None = None
        self.found: list[_Scored] = []         # each placement as found, scored
        self.canonical: list[np.ndarray] = []  # ... unscored, while `best` is kept
        self.best: list[_Scored] | None = []   # the best member of each orbit (None: too many)

    def perms_or_identity(self, num_qubits: int) -> np.ndarray:
        """The symmetries the search reported, else the identity (placements added after
        a search that found none: each stands for itself)."""
        if self.perms is not None:
            return self.perms
        return np.arange(num_qubits, dtype=np.int64).reshape(1, num_qubits)

    def __call__(self, rows: np.ndarray, perms: np.ndarray) -> None:
        self.waiting.append(rows)
        self.rows += len(rows)
        self.perms = perms
        if self.rows * (len(perms) if self.best is not None else 1) >= self.PIECE:
            self._score()

    def _score(self) -> None:
        if not self.waiting:
            return
        grid = np.concatenate(self.waiting).astype(np.int64)
        self.waiting, self.rows = [], 0
        perms = self.perms if self.perms is not None else np.zeros((1, 0), dtype=np.int64)
        k = len(perms)
        if self.best is not None and (k <= 1 or self.members + len(grid) * k
                                      > self.MAX_MEMBERS):
            self.best = None                  # one member per orbit only, from now on
            for rows in self.canonical:       # the ones kept so far, scored now
                for at in range(0, len(rows), self.PIECE):
                    part = rows[at:at + self.PIECE].astype(np.int64)
                    self.found.append(self._scored(part, *scores(self.device, self.patch,
                                                                 part)))
            self.canonical = []
        if self.best is None:
            self.found.append(self._scored(grid, *scores(self.device, self.patch, grid)))
            return
        self.members += len(grid) * k
        step = max(1, self.PIECE // k)
        self.canonical.append(self._small(grid))      # the rows as found are canonical
        for at in range(0, len(grid), step):
            rows = grid[at:at + step]
            members = rows[:, perms].reshape(len(rows) * k, -1)
            terms, unscored = scores(self.device, self.patch, members)
            total: np.ndarray = sum(terms.values())  # type: ignore[assignment]
            pick = np.lexsort((-total.reshape(-1, k), unscored.reshape(-1, k)), axis=-1)[:, 0]
            chosen = np.arange(len(rows)) * k + pick
            self.best.append(self._scored(members[chosen], {name: value[chosen] for name, value
                                                            in terms.items()},
                                          unscored[chosen]))

    def _scored(self, grid: np.ndarray, terms: dict[str, np.ndarray],
                unscored: np.ndarray) -> _Scored:
        off = off_coupler_counts(self.device, self.patch, PlacementRows(grid, copy=False),
                                 list(self.patch.circuits)).astype(np.int32)
        return self._small(grid), terms, unscored, off

    @staticmethod
    def _small(grid: np.ndarray) -> np.ndarray:
        return grid.astype(np.int32) if grid.size and grid.max() < 2**31 else grid

    def ranking(self) -> tuple[Ranking, np.ndarray]:
        """The ranking of everything found, and the off-coupler gates (placements in ranked
        order, circuits in patch order)."""
        self._score()
        n, names = self.patch.num_qubits, list(self.patch.circuits)
        parts = self.best if self.best is not None and self.perms is not None and \
            len(self.perms) > 1 else self.found
        self.found, self.best, self.canonical = [], None, []
        if not parts:
            empty = np.zeros((0, n), dtype=np.int64)
            return (rank_placements(self.device, self.patch, PlacementRows(empty)),
                    np.zeros((0, len(names)), dtype=np.int32))
        # One field at a time, each piece let go once joined: less memory at the peak.
        pieces: list[list[Any]] = [[p[0], dict(p[1]), p[2], p[3]] for p in parts]
        del parts
        grid = _joined(pieces, 0)
        terms = {name: _joined(pieces, 1, name) for name in list(pieces[0][1])}
        unscored, off = _joined(pieces, 2), _joined(pieces, 3)
        del pieces
        total: np.ndarray = sum(terms.values())  # type: ignore[assignment]
        order = ranked_order(grid, total, unscored)
        del total
        for name in list(terms):           # one array at a time: less memory at the peak
            terms[name] = terms[name][order]
        return (rank_scored(grid[order], terms, unscored[order], order=np.arange(len(order))),
                off[order])


_Scored = tuple[np.ndarray, dict[str, np.ndarray], np.ndarray, np.ndarray]


def _joined(pieces: list[list[Any]], field: int, name: str | None = None) -> np.ndarray:
    """One field (or one term, `name`) of every piece joined, each piece's part let go."""
    out = np.concatenate([p[field] if name is None else p[field][name] for p in pieces])
    for p in pieces:
        if name is None:
            p[field] = None
        else:
            del p[field][name]
    return out
