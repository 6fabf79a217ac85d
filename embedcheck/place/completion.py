"""Completing a placement: patch qubits with no two-qubit gate in the searched circuits are
not constrained by any coupler, so they go on the nearest free live qubits (breadth-first
from the placed ones, neighbours in index order so that every run places them alike).

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> chip = Device.from_lattice(line(5), name="line").live_graph()
    >>> list(nearest_free(chip, [2], {2}))
    [1, 3, 0, 4]
"""
from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Iterator, Mapping, Sequence

import rustworkx as rx

from ..model.patch import Patch
from ..model.placement import Placement

__all__ = ["complete_placement", "nearest_free"]


def complete_placement(chip: rx.PyGraph, patch: Patch, placed: Sequence[int],
                       image: Sequence[int], blocked: set[int],
                       allowed: Mapping[str, set[int]] | None) -> Placement | None:
    """A full placement: interacting qubits from `image`, the rest on nearby free qubits
    (that their role's constraints allow); None when a qubit finds no such free qubit."""
    physical = [-1] * patch.num_qubits
    used = set()
    for node, patch_qubit in zip(image, placed, strict=True):
        physical[patch_qubit] = chip[node]
        used.add(node)
    for i in [i for i in range(patch.num_qubits) if physical[i] < 0]:
        role = patch.roles[patch.qubits[i]]
        for node in nearest_free(chip, list(used), used | blocked):
            if allowed is None or chip[node] in allowed.get(role, ()):
                physical[i] = chip[node]
                used.add(node)
                break
        else:
            return None                      # no free qubit this one's constraints allow
    return Placement(tuple(physical))


def nearest_free(chip: rx.PyGraph, sources: Iterable[int], blocked: set[int]) -> Iterator[int]:
    """Free live chip nodes in breadth-first order from `sources` (then any others).

    Neighbours are taken in index order: rustworkx returns them in hash order, which
    changes from run to run, and placements must not."""
    sources = sorted(sources)
    queue, seen = deque(sources), set(sources)
    neighbours = chip.neighbors
    while queue:
        node = queue.popleft()
        if node not in blocked:
            yield node
        for nb in sorted(neighbours(node)):
            if nb not in seen:
                seen.add(nb)
                queue.append(nb)
    for node in chip.node_indices():
        if node not in seen and node not in blocked:
            yield node
