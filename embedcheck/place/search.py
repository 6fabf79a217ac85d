"""Placement search: every way to put a patch on a chip with no routing swaps.

A placement maps each patch qubit to a distinct live physical qubit so that every
pair of patch qubits that shares a two-qubit gate sits on a live coupler. That is a
subgraph monomorphism from the patch's interaction graph into the chip's live
coupling graph (not induced: the chip may have extra couplers among the placed qubits
that the patch simply leaves unused). `matcher.py` enumerates them, anchored and in
numpy batches (`enumeration.py` runs it, in worker processes if asked); tests hold it
to networkx's and rustworkx's VF2 matchers.

Two maps that differ by a symmetry of the patch (a permutation of its qubits that
keeps every role and every pair's gate count in every searched circuit) are the
same placement for the experiment. The matcher yields one map per orbit; we report
the lexicographically smallest map of each orbit and the group's order. The group
acts freely on injective maps, so for a complete search
`raw_maps == len(placements) * symmetry_order`.

Patch qubits with no two-qubit gate in the searched circuits are not constrained by
any coupler; they are put on the nearest free live qubits (breadth-first from the
placed ones) so that every placement is complete.

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import heavy_hex
    >>> from embedcheck.model.patch import Patch, Circuit, Operation
    >>> ring = [Operation("cx", (f"q{i}", f"q{(i + 1) % 12}"), "2q") for i in range(12)]
    >>> patch = Patch("ring", tuple(f"q{i}" for i in range(12)),
    ...               {f"q{i}": "data" for i in range(12)},
    ...               {"round": Circuit("round", tuple(ring))})
    >>> result = find_placements(Device.from_lattice(heavy_hex(2, 2), name="hh"), patch)
    >>> len(result.placements), result.symmetry_order, result.complete   # one per hexagon
    (4, 24, True)
"""
from __future__ import annotations

import numbers
import time
from collections.abc import Callable, Mapping, Sequence

import numpy as np
import rustworkx as rx

from ..errors import InputError, did_you_mean
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import PlacementRows
from .completion import complete_placement
from .enumeration import Effort, raw_maps
from .reasons import Reason, constraint_reasons, necessary_conditions, part_reasons
from .result import SearchResult, StopReason
from .symmetry import (
    MAX_SYMMETRIES,
    canonical_rows,
    directional_arcs,
    interaction_pattern,
    patch_permutations,
    symmetry_group,
)

__all__ = ["SearchResult", "StopReason", "check_request", "chip_graph", "find_placements"]


def find_placements(device: Device, patch: Patch, *, circuits: str | Sequence[str] | None = None,
                    limit: int | None = 10_000, budget_s: float | None = None,
                    progress: Callable[[int], None] | None = None,
                    constraints: Constraints | None = None,
                    clock: Callable[[], float] = time.monotonic,
                    max_maps: int | None = None, processes: int = 1,
                    max_work: int | None = None,
                    on_effort: Callable[[Effort], None] | None = None,
                    on_found: Callable[[np.ndarray, np.ndarray], None] | None = None
                    ) -> SearchResult:
    """All distinct swap-free placements of `patch` for `circuits` (default: all).

    `limit` caps the number of distinct placements, `budget_s` the seconds spent (read
    from `clock`, which tests may replace), `max_maps` the raw maps examined (a step
    budget, counted in whole symmetry orbits, so the count may pass it by less than
    the symmetry order); the result says which one stopped the search. `constraints` restrict the
    chip qubits each role may use and the couplers pairs may use (see constraints.py).
    `progress(n)` is called now and then with the number of raw maps seen. With
    `processes > 1` the chip's anchors are split among that many worker processes (the
    result is the same set; workers read the budget from the wall clock, not `clock`).

    `max_work` caps the matcher's work: candidate extensions of partial maps tried (plus
    the first-map probe's steps). Unlike seconds it stops every run at the same place, so
    identical calls give identical results; the result's `work` says how much was used.
    A stop on the clock is noted in the result (another run may stop elsewhere).
    `on_effort(effort)` is called after every block the matcher hands back, maps or not,
    with the work done and the anchors begun (progress before a first map).

    `on_found(rows, symmetries)` is called with each batch of new placements as they are
    kept (rows of physical qubits in patch order; the symmetries as rows of patch qubit
    indices), so a caller can score them while the search runs: its time counts against
    `budget_s`, which then bounds searching and scoring together.

    Placements are kept as one integer array (`PlacementRows`, 4 bytes per patch qubit
    each), not as Python objects, and without a set of the ones seen: the matcher yields
    one map per symmetry orbit (the probe's map is not yielded again), so canonical forms
    never repeat.
    """
    names = check_request(patch, circuits, limit, budget_s, processes, max_maps)
    if max_work is not None and (not isinstance(max_work, numbers.Integral)
                                 or isinstance(max_work, bool) or max_work < 0):
        raise InputError(f"max_work must be a whole number >= 0, not {max_work!r}")
    rules = constraints or Constraints()
    start = clock()
    ruled_out = necessary_conditions(device, patch, names, rules)
    pattern, placed = interaction_pattern(patch, names)
    if ruled_out:                            # the patch's symmetry group still counts
        order = 1 if rules.forbid_direction_fixes else len(symmetry_group(pattern)[0])
        return SearchResult(circuits=names, placements=(), raw_maps=0,
                            symmetry_order=order, stop_reason=StopReason.COMPLETE,
                            reasons=tuple(r.text for r in ruled_out), culprits=tuple(ruled_out),
                            elapsed_s=clock() - start)
    directed = rules.forbid_direction_fixes
    chip = chip_graph(device, rules)
    # Native directions: search undirected, keep the maps whose directional gates all run
    # the native way (a symmetric gate such as cz has no direction); no symmetry merging.
    arcs = directional_arcs(patch, names, placed) if directed else []
    autos, too_big = ([tuple(range(len(placed)))], False) if directed else \
        symmetry_group(pattern)
    notes: tuple[str, ...] = ()
    if too_big:
        notes = (f"the patch's symmetry group has more than {MAX_SYMMETRIES} elements, so "
                 "maps are not merged by symmetry: each placement may appear in several "
                 "relabelled copies",)
    allowed = rules.allowed_by_role(device, set(patch.roles.values())) if rules.roles else None
    found: list[np.ndarray] = []
    count = 0
    raw, stop = 0, StopReason.COMPLETE
    usable = rules.qubits(device)
    blocked = {i for i in chip.node_indices() if chip[i] not in usable}
    perms = np.array(autos, dtype=np.int64).reshape(len(autos), len(placed))
    symmetries = patch_permutations(autos, placed, patch.num_qubits)
    whole_perms = np.array(symmetries, dtype=np.int64).reshape(len(autos), patch.num_qubits)
    physical = np.array(chip.nodes(), dtype=np.int64)
    if len(physical) and physical.max() < 2**31 and physical.min() >= 0:
        physical = physical.astype(np.int32)         # 4 bytes per patch qubit and placement
    order = len(autos)                       # raw maps each representative stands for
    # A worker may stop at `cap` representatives only when each one is sure to become a
    # placement (every patch qubit interacts, so none is left to place and fail).
    cap = None
    if (limit is not None or max_maps is not None) and len(placed) == patch.num_qubits:
        cap = min(x for x in (limit, None if max_maps is None else -(-max_maps // order))
                  if x is not None)
    cut_short: str | None = None
    shown = 0
    everything = limit is None and max_maps is None and budget_s is None and max_work is None
    effort = Effort()
    timed_out = False                        # stopped on the clock, not on a count
    for block, why, reported in raw_maps(device, chip, pattern, allowed, blocked, arcs,
                                         None if directed else autos, processes=processes,
                                         cap=cap, seconds=budget_s, probe=not everything,
                                         max_work=max_work, effort=effort):
        timed_out = timed_out or why == "budget"
        cut_short = cut_short or ("budget" if why == "work" else why)
        if on_effort is not None:
            on_effort(effort)
        if reported and progress is not None and reported * order > shown:
            shown = reported * order              # workers' count while they still run
            progress(shown)
        if processes <= 1 and budget_s is not None and clock() - start > budget_s:
            stop = StopReason.BUDGET                  # checked first: budget_s=0 takes nothing
            timed_out = True
            break
        if len(block):
            if max_maps is not None:
                wanted = (max_maps - raw + order - 1) // order
                block = block[:wanted]
            used, rows = _take(block, perms, physical, chip, patch, placed, blocked, allowed,
                               None if limit is None else limit - count)
            if len(rows):
                found.append(rows)
                count += len(rows)
                if on_found is not None:
                    on_found(rows, whole_perms)
            raw += used * order              # each representative stands for its orbit
            if progress is not None and raw > shown:
                shown = raw                      # never backwards
                progress(raw)
        if limit is not None and count >= limit:
            stop = StopReason.LIMIT
            break
        if max_maps is not None and raw >= max_maps:
            stop = StopReason.BUDGET
            break
        if processes > 1 and budget_s is not None and clock() - start > budget_s:
            stop = StopReason.BUDGET                  # workers kept the deadline: keep what came
            timed_out = True
            break
    if stop is StopReason.COMPLETE and cut_short:
        stop = StopReason(cut_short)   # a worker's part stopped early: the union is incomplete
    reasons: list[Reason] = []
    if stop is StopReason.COMPLETE and raw == 0:
        what = "the chip's live coupling graph" + (" under the constraints" if not rules.empty
                                                   else "")
        reasons = [Reason(text="no cheap condition rules it out, and an exhaustive search found "
                               f"no placement: the interaction graph of {', '.join(names)} is "
                               f"not a subgraph of {what}")]
        left = None if budget_s is None else max(0.0, budget_s - (clock() - start))
        reasons += part_reasons(device, patch, names, rules, clock, left, pattern, placed,
                                search=find_placements)
        if not rules.empty:
            reasons += constraint_reasons(device, patch, names, rules, clock, left,
                                          search=find_placements)
    if timed_out and stop is StopReason.BUDGET:
        notes += (f"stopped on the clock after {budget_s:g} s: another "
                  "run may stop elsewhere and list other placements",)
    rows = np.concatenate(found) if found else np.zeros((0, patch.num_qubits), dtype=np.int64)
    del found
    return SearchResult(circuits=names, placements=PlacementRows(rows, copy=False), raw_maps=raw,
                        symmetry_order=len(autos), stop_reason=stop,
                        reasons=tuple(r.text for r in reasons), culprits=tuple(reasons),
                        elapsed_s=clock() - start, symmetries=symmetries, notes=notes,
                        work=effort.work, timed_out=timed_out and stop is StopReason.BUDGET)


def _take(batch: np.ndarray, perms: np.ndarray, numbers: np.ndarray, chip: rx.PyGraph,
          patch: Patch, placed: Sequence[int], blocked: set[int],
          allowed: Mapping[str, set[int]] | None, room: int | None) -> tuple[int, np.ndarray]:
    """Canonicalise a batch of raw maps (numpy, no per-map Python loop over the symmetry
    group) and return (how many rows of the batch were looked at, the new placements as
    rows of physical qubits), at most `room` of them. The canonical form of a map is the
    lexicographically smallest of its images under the patch's symmetries; `numbers` is
    the physical qubit of each chip graph node."""
    images = np.asarray(batch, dtype=np.int64).reshape(len(batch), len(placed))
    best = canonical_rows(images, perms)
    if len(placed) == patch.num_qubits:          # every patch qubit interacts: no loop
        if room is not None:
            best = best[:room]
        return len(best), numbers[best]
    out: list[tuple[int, ...]] = []              # idle qubits to put near the placed ones
    for i, row in enumerate(best.tolist()):
        placement = complete_placement(chip, patch, placed, row, blocked, allowed)
        if placement is not None:
            out.append(placement.physical)
        if room is not None and len(out) >= room:
            return i + 1, np.array(out, dtype=numbers.dtype).reshape(len(out), patch.num_qubits)
    return len(best), np.array(out, dtype=numbers.dtype).reshape(len(out), patch.num_qubits)


def check_request(patch: Patch, circuits: str | Sequence[str] | None, limit: int | None,
                   budget_s: float | None, processes: int,
                   max_maps: int | None) -> tuple[str, ...]:
    """The searched circuit names, after refusing what the CLI would refuse."""
    if isinstance(circuits, str):
        circuits = [circuits]
    names = tuple(patch.circuits) if circuits is None else tuple(circuits)
    for name in names:
        if name not in patch.circuits:
            raise InputError(f"the patch has no circuit '{name}'"
                             f"{did_you_mean(str(name), list(patch.circuits))}")
    for label, value, low in (("limit", limit, 1), ("max_maps", max_maps, 1),
                              ("processes", processes, 1)):
        if value is not None and (not isinstance(value, numbers.Integral)
                                  or isinstance(value, bool) or value < low):
            raise InputError(f"{label} must be a whole number of at least {low}, not {value!r}")
    if budget_s is not None and not (isinstance(budget_s, numbers.Real) and budget_s >= 0):
        raise InputError(f"budget_s must be a number of seconds >= 0, not {budget_s!r}")
    return names



def chip_graph(device: Device, rules: Constraints) -> rx.PyGraph:
    """The usable coupling graph; node i holds physical qubit `device.qubits[i]`.

    Couplers outside the constraints are left out (an unused coupler never matters,
    since the match is not induced).
    """
    graph = rx.PyGraph(multigraph=False)
    index = {q: graph.add_node(q) for q in device.qubits}
    couplers = rules.couplers_allowed(device) if not rules.empty else device.live_couplers
    graph.add_edges_from_no_data([(index[a], index[b]) for a, b in couplers])
    return graph
