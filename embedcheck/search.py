"""Placement search: every way to put a patch on a chip with no routing swaps.

A placement maps each patch qubit to a distinct live physical qubit so that every
pair of patch qubits that shares a two-qubit gate sits on a live coupler. That is a
subgraph monomorphism from the patch's interaction graph into the chip's live
coupling graph; we enumerate them with rustworkx's VF2 matcher (Cordella et al.,
IEEE TPAMI 26, 1367 (2004)) with `induced=False`, because the chip may have extra
couplers among the placed qubits that the patch simply leaves unused.

Two maps that differ by a symmetry of the patch (a permutation of its qubits that
keeps every role and every pair's gate count in every searched circuit) are the
same placement for the experiment; we keep the lexicographically smallest map of
each orbit and report the group's order. The group acts freely on injective maps,
so for a complete search `raw_maps == len(placements) * symmetry_order`.

Patch qubits with no two-qubit gate in the searched circuits are not constrained by
any coupler; they are put on the nearest free live qubits (breadth-first from the
placed ones) so that every placement is complete.

    >>> from embedcheck.device import Device
    >>> from embedcheck.lattices import heavy_hex
    >>> from embedcheck.patch import Patch, Circuit, Operation
    >>> ring = [Operation("cx", (f"q{i}", f"q{(i + 1) % 12}"), "2q") for i in range(12)]
    >>> patch = Patch("ring", tuple(f"q{i}" for i in range(12)),
    ...               {f"q{i}": "data" for i in range(12)}, {"round": Circuit("round", tuple(ring))})
    >>> result = find_placements(Device.from_lattice(heavy_hex(2, 2), name="hh"), patch)
    >>> len(result.placements), result.symmetry_order, result.complete   # one per hexagon
    (4, 24, True)
"""
from __future__ import annotations

import time
from collections import deque
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
import rustworkx as rx

from .device import Device
from .patch import Patch


@dataclass(frozen=True)
class Placement:
    """Physical qubit for each patch qubit, in the patch's qubit order."""

    physical: tuple[int, ...]

    def as_dict(self, patch: Patch) -> dict[str, int]:
        return dict(zip(patch.qubits, self.physical))


@dataclass(frozen=True)
class SearchResult:
    """Distinct swap-free placements for the searched circuits, and how the search ended.

    stop_reason is 'complete' (every placement found), 'limit' (the count limit was
    reached) or 'budget' (the time budget ran out). `reasons` explains, in plain words,
    why there is no placement when a cheap necessary condition already rules it out.
    """

    circuits: tuple[str, ...]
    placements: tuple[Placement, ...]
    raw_maps: int
    symmetry_order: int
    stop_reason: str
    reasons: tuple[str, ...]
    elapsed_s: float

    @property
    def complete(self) -> bool:
        return self.stop_reason == "complete"


def find_placements(device: Device, patch: Patch, *, circuits: Sequence[str] | None = None,
                    limit: int | None = 10_000, budget_s: float | None = None,
                    progress: Callable[[int], None] | None = None) -> SearchResult:
    """All distinct swap-free placements of `patch` for `circuits` (default: all).

    `limit` caps the number of distinct placements, `budget_s` the seconds spent;
    the result says which one stopped the search. `progress(n)` is called now and
    then with the number of raw maps seen.
    """
    names = tuple(patch.circuits) if circuits is None else tuple(circuits)
    start = time.monotonic()
    reasons = necessary_conditions(device, patch, names)
    if reasons:
        return SearchResult(names, (), 0, 1, "complete", tuple(reasons), time.monotonic() - start)
    pattern, placed = _pattern(patch, names)
    chip = device.live_graph()
    autos = _automorphisms(pattern)
    found: list[Placement] = []
    seen: set = set()
    raw, stop = 0, "complete"
    if pattern.num_nodes() == 0:
        maps = iter([{}])
    else:
        maps = rx.vf2_mapping(chip, pattern, subgraph=True, induced=False, id_order=False)
    for mapping in maps:
        raw += 1
        inverse = {p: c for c, p in mapping.items()}   # pattern node -> chip node
        image = tuple(inverse[i] for i in range(len(placed)))
        key = min(tuple(image[s[i]] for i in range(len(image))) for s in autos)
        if key not in seen:
            seen.add(key)
            found.append(_complete(device, chip, patch, placed, key))
        if progress is not None and raw % 5000 == 0:
            progress(raw)
        if limit is not None and len(found) >= limit:
            stop = "limit"
            break
        if budget_s is not None and raw % 256 == 0 and time.monotonic() - start > budget_s:
            stop = "budget"
            break
    if stop == "complete" and raw == 0:
        reasons = ["the interaction graph of " + ", ".join(names) + " is not a subgraph of "
                   "the chip's live coupling graph (exhaustive search found no placement)"]
    return SearchResult(names, tuple(found), raw, len(autos), stop, tuple(reasons),
                        time.monotonic() - start)


def placement_grid(placements: Sequence[Placement], num_qubits: int) -> np.ndarray:
    """Placements as an int array of shape (placements, patch qubits), for vectorised scoring."""
    return np.array([p.physical for p in placements], dtype=np.int64).reshape(
        len(placements), num_qubits)


def necessary_conditions(device: Device, patch: Patch, circuits: Sequence[str]) -> list[str]:
    """Cheap checks that rule a placement out before any search; plain-word reasons."""
    reasons = []
    live = device.live_qubits
    if patch.num_qubits > len(live):
        reasons.append(f"the patch has {patch.num_qubits} qubits but the chip has only "
                       f"{len(live)} live qubits")
    counts = patch.interaction_counts(circuits)
    degree: dict[int, int] = {}
    for a, b in counts:
        degree[a] = degree.get(a, 0) + 1
        degree[b] = degree.get(b, 0) + 1
    chip_degree: dict[int, int] = {}
    for a, b in device.live_couplers:
        chip_degree[a] = chip_degree.get(a, 0) + 1
        chip_degree[b] = chip_degree.get(b, 0) + 1
    top = max(chip_degree.values(), default=0)
    for k in sorted(set(degree.values()), reverse=True):
        need = [patch.qubits[i] for i in sorted(i for i, d in degree.items() if d >= k)]
        have = sum(1 for d in chip_degree.values() if d >= k)
        if have < len(need):
            reasons.append(
                f"{len(need)} patch qubit(s) ({', '.join(need)}) interact with {k} or more others, "
                f"but the chip has only {have} live qubit(s) with {k} or more live couplers "
                f"(largest live degree {top})")
            break
    return reasons


def _pattern(patch: Patch, circuits: Sequence[str]):
    """Interaction graph of the searched circuits over the patch qubits that interact.

    Node i of the graph is patch qubit `placed[i]`; edge payloads are per-circuit gate
    counts, node payloads roles, so automorphisms respect both.
    """
    per_pair = patch.per_circuit_counts(circuits)
    placed = sorted({q for p in per_pair for q in p})
    local = {q: i for i, q in enumerate(placed)}
    graph = rx.PyGraph(multigraph=False)
    graph.add_nodes_from([patch.roles[patch.qubits[q]] for q in placed])
    graph.add_edges_from([(local[a], local[b], c) for (a, b), c in per_pair.items()])
    return graph, placed


def _automorphisms(pattern: rx.PyGraph) -> list[tuple[int, ...]]:
    """Permutations of the pattern's nodes that keep roles and per-circuit gate counts."""
    n = pattern.num_nodes()
    if n == 0:
        return [()]
    autos = rx.vf2_mapping(pattern, pattern, node_matcher=lambda a, b: a == b,
                           edge_matcher=lambda a, b: a == b, subgraph=False, id_order=True)
    return [tuple(m[i] for i in range(n)) for m in autos]


def _complete(device: Device, chip: rx.PyGraph, patch: Patch, placed, image) -> Placement:
    """A full placement: interacting qubits from `image`, the rest on nearby free qubits."""
    physical = [-1] * patch.num_qubits
    used = set()
    for node, patch_qubit in zip(image, placed):
        physical[patch_qubit] = chip[node]
        used.add(node)
    rest = [i for i in range(patch.num_qubits) if physical[i] < 0]
    if rest:
        dead = {i for i in chip.node_indices() if chip[i] in device.dead_qubits}
        for i, node in zip(rest, _nearest_free(chip, list(used), used | dead)):
            physical[i] = chip[node]
    return Placement(tuple(physical))


def _nearest_free(chip: rx.PyGraph, sources, blocked):
    """Free live chip nodes in breadth-first order from `sources` (then any others)."""
    queue, seen = deque(sources), set(sources)
    while queue:
        node = queue.popleft()
        if node not in blocked:
            yield node
        for nb in chip.neighbors(node):
            if nb not in seen:
                seen.add(nb)
                queue.append(nb)
    for node in chip.node_indices():
        if node not in seen and node not in blocked:
            yield node
