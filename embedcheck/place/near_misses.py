"""Near misses: when no placement is swap-free, the placements needing the fewest
off-coupler gates, from a greedy heuristic (not exhaustive; the report says so).

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ring = tuple(Operation("cx", (f"q{i}", f"q{(i + 1) % 3}"), "2q") for i in range(3))
    >>> names = ("q0", "q1", "q2")
    >>> patch = Patch("triangle", names, dict.fromkeys(names, "data"),
    ...               {"round": Circuit("round", ring)})
    >>> best = near_misses(Device.from_lattice(line(4), name="line"), patch, ["round"])[0]
    >>> best.off_coupler_gates, len(best.missing_pairs)        # a triangle on a line: one pair
    (1, 1)
"""
from __future__ import annotations

import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..model.constraints import Constraints
from ..model.device import Device, Pair, pair
from ..model.patch import Circuit, Operation, Patch
from ..model.placement import Placement, off_coupler_counts
from .graphs import shortest_cycle, shortest_cycle_nodes
from .search import find_placements

__all__ = ["NearMiss", "near_misses"]


@dataclass(frozen=True, kw_only=True)
class NearMiss:
    """A placement that is not swap-free, with the patch pairs left without a coupler."""

    placement: Placement
    off_coupler_gates: int
    missing_pairs: tuple[tuple[str, str], ...]


def near_misses(device: Device, patch: Patch, circuits: Sequence[str], *,
                constraints: Constraints | None = None, keep: int = 5,
                budget_s: float = 5.0,
                clock: Callable[[], float] = time.monotonic) -> list[NearMiss]:
    """Placements needing the fewest off-coupler gates when none is swap-free (a heuristic).

    Greedy edge removal: drop one interacting pair at a time, first at the patch qubits
    whose degree the chip cannot offer, then on the shortest cycle the chip lacks, then
    the pair with the fewest gates; after each drop, search the smaller pattern. Found
    placements are scored on the full circuits (off-coupler gates, weighted by how
    often each circuit runs) and the best few kept. Not exhaustive: fewer added gates
    may be possible.
    """
    rules = constraints or Constraints()
    start = clock()
    counts = patch.interaction_counts(circuits)
    times = dict(patch.experiment())
    weights = {pair_: sum(patch.interaction_counts([c]).get(pair_, 0) * times.get(c, 1)
                          for c in circuits) for pair_ in counts}
    kept = dict(counts)
    chip_degree: dict[int, int] = {}
    couplers = rules.couplers_allowed(device) if not rules.empty else set(device.live_couplers)
    for a, b in couplers:
        chip_degree[a] = chip_degree.get(a, 0) + 1
        chip_degree[b] = chip_degree.get(b, 0) + 1
    top = max(chip_degree.values(), default=0)
    chip_nodes = sorted({q for c in couplers for q in c})
    chip_girth = shortest_cycle(chip_nodes, sorted(couplers))
    found: list[Placement] = []
    while kept and clock() - start < budget_s:
        reduced = _reduced_patch(patch, kept)
        result = find_placements(device, reduced, limit=50, constraints=rules,
                                 budget_s=max(0.1, budget_s - (clock() - start)), clock=clock)
        if result.placements:
            found = list(result.placements)
            break
        del kept[_pair_to_drop(kept, weights, top, chip_girth, patch.num_qubits)]
    if not found:
        return []
    off = off_coupler_counts(device, patch, found, list(circuits))
    totals = (off * np.array([times.get(c, 1) for c in circuits])).sum(axis=1)
    order = np.argsort(totals, kind="stable")[:keep]
    out = []
    for i in order:
        where = found[i].physical
        missing = tuple((patch.qubits[a], patch.qubits[b]) for a, b in counts
                        if not device.is_coupled(where[a], where[b]))
        out.append(NearMiss(placement=found[i], off_coupler_gates=int(totals[i]),
                            missing_pairs=missing))
    return out


def _pair_to_drop(kept: Mapping[Pair, int], weights: Mapping[Pair, int], top: int,
                  chip_girth: int | None, n: int) -> Pair:
    degree: dict[int, int] = {}
    for a, b in kept:
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
    over = [p for p in kept if degree[p[0]] > top or degree[p[1]] > top]
    if over:
        return min(over, key=lambda p: (weights[p], -max(degree[p[0]], degree[p[1]]), p))
    cycle = shortest_cycle_nodes(range(n), list(kept))
    if cycle and (chip_girth is None or len(cycle) < chip_girth):
        ring = [pair(cycle[i], cycle[(i + 1) % len(cycle)]) for i in range(len(cycle))]
        return min(ring, key=lambda p: (weights[p], p))
    return min(kept, key=lambda p: (weights[p], p))


def _reduced_patch(patch: Patch, kept: Mapping[Pair, int]) -> Patch:
    """A one-circuit patch with one CNOT per kept pair (same qubits and roles)."""
    ops = tuple(Operation("cx", (patch.qubits[a], patch.qubits[b]), "2q") for a, b in kept)
    return Patch(patch.name, patch.qubits, dict(patch.roles), {"round": Circuit("round", ops)})
