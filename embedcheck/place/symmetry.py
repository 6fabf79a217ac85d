"""The patch's interaction graph as a search pattern, and its symmetries.

Two maps that differ by a symmetry of the patch (a permutation of its qubits that keeps
every role and every pair's gate count in every searched circuit) are the same
placement for the experiment. The group is found with rustworkx's VF2 (an automorphism
is an isomorphism of the pattern onto itself, node and edge payloads compared), and a
map's canonical form is the lexicographically smallest of its images under the group.

    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ring = tuple(Operation("cx", (f"q{i}", f"q{(i + 1) % 4}"), "2q") for i in range(4))
    >>> patch = Patch("ring", ("q0", "q1", "q2", "q3"), dict.fromkeys(("q0", "q1", "q2", "q3"),
    ...               "data"), {"round": Circuit("round", ring)})
    >>> pattern, placed = interaction_pattern(patch, ["round"])
    >>> len(automorphisms(pattern)), placed                       # the square's 8 symmetries
    (8, [0, 1, 2, 3])
"""
from __future__ import annotations

import itertools
from collections.abc import Sequence

import numpy as np
import rustworkx as rx

from ..model.patch import SYMMETRIC_GATES, Patch

__all__ = ["MAX_SYMMETRIES", "automorphisms", "canonical_rows", "directional_arcs",
           "interaction_pattern", "patch_permutations", "symmetry_group", "symmetry_order"]

MAX_SYMMETRIES = 20_000


def interaction_pattern(patch: Patch, circuits: Sequence[str]) -> tuple[rx.PyGraph, list[int]]:
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


def directional_arcs(patch: Patch, circuits: Sequence[str],
                     placed: Sequence[int]) -> list[tuple[int, int]]:
    """(pattern node, pattern node) control -> target of every gate whose direction matters."""
    local = {q: i for i, q in enumerate(placed)}
    arcs = set()
    for name in circuits:
        for op in patch.circuits[name].two_qubit_gates:
            if op.written in SYMMETRIC_GATES:
                continue
            a, b = (patch.index[q] for q in op.qubits)
            arcs.add((local[a], local[b]))
    return sorted(arcs)


def automorphisms(pattern: rx.PyGraph) -> list[tuple[int, ...]]:
    """Permutations of the pattern's nodes that keep roles and per-circuit gate counts
    (only the identity when the group is too big to list; see `symmetry_group`)."""
    return symmetry_group(pattern)[0]


def symmetry_group(pattern: rx.PyGraph) -> tuple[list[tuple[int, ...]], bool]:
    """(the symmetries, too_big). A group larger than MAX_SYMMETRIES (a big tree, a star of
    many leaves) is not listed: only the identity is returned, with too_big set, and maps
    are then not merged by symmetry (find says so)."""
    n = pattern.num_nodes()
    if n == 0:
        return [()], False
    autos = rx.vf2_mapping(pattern, pattern, node_matcher=lambda a, b: a == b,
                           edge_matcher=lambda a, b: a == b, subgraph=False, id_order=True)
    listed = [tuple(m[i] for i in range(n)) for m in itertools.islice(autos, MAX_SYMMETRIES + 1)]
    if len(listed) > MAX_SYMMETRIES:
        return [tuple(range(n))], True
    return listed, False


def symmetry_order(patch: Patch, circuits: Sequence[str]) -> int:
    """The order of the patch's symmetry group for `circuits` (1 when too big to list)."""
    return len(symmetry_group(interaction_pattern(patch, circuits)[0])[0])


def canonical_rows(images: np.ndarray, perms: np.ndarray) -> np.ndarray:
    """Each row's lexicographically smallest image under the permutations `perms` (rows of
    column indices), in numpy, with no per-row Python loop over the group."""
    best = images[:, perms[0]]
    for perm in perms[1:]:
        cand = images[:, perm]
        differ = cand != best
        first = np.argmax(differ, axis=1)
        rows = np.arange(len(best))
        smaller = differ[rows, first] & (cand[rows, first] < best[rows, first])
        best = np.where(smaller[:, None], cand, best)
    return best


def patch_permutations(autos: Sequence[Sequence[int]], placed: Sequence[int],
                       num_qubits: int) -> tuple[tuple[int, ...], ...]:
    """The pattern's symmetries as permutations of all patch qubit indices."""
    full = []
    for sigma in autos:
        perm = list(range(num_qubits))
        for i, q in enumerate(placed):
            perm[q] = placed[sigma[i]]
        full.append(tuple(perm))
    return tuple(full)
