"""Repair method `css`: a state with a generating set of pure X and pure Z stabilizers
(code states such as |0>_L and |+>_L of CSS codes, cat states, Bell pairs), by
Steiner-tree elimination of its X-type generators over the placement's coupling graph,
Hadamards on the pivots, the CNOTs reversed, and a Pauli correction.

    >>> parent = {0: None, 1: 0, 2: 0, 3: 1}
    >>> _post_order(parent, 0)                       # leaves first, the root last
    [3, 1, 2, 0]
"""
from __future__ import annotations

from collections import deque
from typing import Any

import numpy as np

from ..model import gf2
from ..model.patch import Patch
from .state import Ops, pauli_correction

__all__ = ["NotCSS", "css_circuit"]


class NotCSS(Exception):
    """The state has no generating set of pure X and pure Z stabilizers, or the coupling
    graph cannot carry the elimination."""


def css_circuit(patch: Patch, state: Any, support: tuple[str, ...],
                edges: list[tuple[str, str]], known_zero: set[str]) -> Ops:
    """A preparation of a CSS state (up to single-qubit Paulis) on the coupled pairs.

    Its X-type stabilizers are the row space of a k x n matrix G. We disentangle: a
    CNOT c -> t adds column c of G to column t, and we make every column but k zero,
    one generator at a time, with CNOTs along a Steiner tree of the qubits that carry
    it (fill the tree's inner qubits, then clear all but the tree's root, leaves
    first: Steiner-Gauss elimination, Kissinger & Meijer-van de Griend, arXiv:1904.00633;
    Nash, Gheorghiu & Mosca, Quantum 4, 290 (2020); references from memory, and the tests
    prove every result by tableau instead of trusting them). The root (the pivot) then leaves
    the graph, so it must not be a cut vertex of what is left. The state is then |+> on
    the k pivots and |0> elsewhere; the preparation is Hadamards on the pivots, the
    CNOTs in reverse order, and a Pauli correction for the signs.
    """
    import networkx as nx

    n = patch.num_qubits
    tab = state.clifford
    x, z = tab.stab_x.astype(np.uint8), tab.stab_z.astype(np.uint8)
    reduced, pivots = gf2.row_reduce(np.hstack([z, x]))
    z_rank = sum(1 for c in pivots if c < n)
    g = reduced[z_rank:, n:]                         # X-type generators: zero Z part
    k = g.shape[0]
    if k + (n - gf2.rank(x)) != n:                      # X-type and Z-type parts must fill n
        raise NotCSS
    index = patch.index
    allowed = {index[q] for q in support} | {index[q] for q in known_zero}
    graph = nx.Graph()
    graph.add_nodes_from(allowed)
    graph.add_edges_from((index[a], index[b]) for a, b in edges
                         if index[a] in allowed and index[b] in allowed)
    m = g.T.copy()                                   # rows: qubits; columns: generators
    cnots: list[tuple[int, int]] = []

    def add(control, target):                        # CNOT control -> target, on M's rows
        m[target] ^= m[control]
        cnots.append((control, target))

    left = set(range(k))
    roots: list[int] = []
    while left:
        cut = set(nx.articulation_points(graph)) if len(left) > 1 else set()   # last: any root
        best = None
        for j in sorted(left):
            terminals = [int(r) for r in np.flatnonzero(m[:, j]) if r in graph]
            tree = _steiner_with_root(graph, terminals, cut)
            if tree is not None and (best is None or len(tree[1]) < len(best[2])):
                best = (j, tree[0], tree[1])
        if best is None:
            raise NotCSS
        j, root, parent = best
        order = _post_order(parent, root)
        for v in order:                              # fill: every tree qubit carries j
            if v != root and m[v, j] and not m[parent[v], j]:
                add(v, parent[v])
        for v in order:                              # clear all but the root, leaves first
            if v != root:
                add(parent[v], v)
        graph.remove_node(root)
        roots.append(root)
        left.discard(j)
    if any(m[r].any() for r in range(n) if r not in roots):
        raise NotCSS                                # cannot happen for a CSS state
    ops: Ops = [("h", (patch.qubits[r],)) for r in roots]
    ops += [("cx", (patch.qubits[c], patch.qubits[t])) for c, t in reversed(cnots)]
    correction = pauli_correction(patch, state, ops)
    if correction is None:
        raise NotCSS
    return ops + correction


def _steiner_with_root(graph: Any, terminals: list[int],
                       cut: set[int]) -> tuple[int, dict[int, int | None]] | None:
    """(root, parent map) of a small tree in `graph` holding every terminal, rooted at a
    qubit that is not a cut vertex (so it can leave the graph); shortest-path heuristic
    (Takahashi & Matsuyama, Math. Japonica 24, 573 (1980), from memory). None if the
    terminals are not connected."""
    if not terminals:
        return None
    component = _component(graph, terminals[0])
    if any(t not in component for t in terminals):
        return None
    free = [v for v in component if v not in cut]
    inside = [t for t in terminals if t not in cut]
    if inside:
        root = min(inside)
    else:                                            # the non-cut qubit nearest the terminals
        dist, _ = _bfs(graph, terminals)
        root = min(free, key=lambda v: (dist[v], v))
    parent: dict[int, int | None] = {root: None}
    want = set(terminals) - {root}
    while want:
        dist, back = _bfs(graph, list(parent))
        t = min(want, key=lambda v: (dist[v], v))
        path = [t]
        while path[-1] not in parent:
            path.append(back[path[-1]])
        for i in range(len(path) - 1, 0, -1):        # from the tree outwards
            parent[path[i - 1]] = path[i]
        want -= set(path)
    return root, parent


def _component(graph: Any, start: int) -> set[int]:
    seen, queue = {start}, deque([start])
    while queue:
        v = queue.popleft()
        for w in graph[v]:
            if w not in seen:
                seen.add(w)
                queue.append(w)
    return seen


def _bfs(graph: Any, sources: list[int]) -> tuple[dict[int, int], dict[int, int]]:
    dist = {s: 0 for s in sources}
    back: dict[int, int] = {}
    queue = deque(sources)
    while queue:
        v = queue.popleft()
        for w in sorted(graph[v]):
            if w not in dist:
                dist[w] = dist[v] + 1
                back[w] = v
                queue.append(w)
    return dist, back


def _post_order(parent: dict[int, int | None], root: int) -> list[int]:
    """Tree nodes with every node after all of its descendants (leaves first)."""
    children: dict[int, list[int]] = {}
    for v, up in parent.items():
        if up is not None:
            children.setdefault(up, []).append(v)
    out: list[int] = []
    stack = [(root, False)]
    while stack:
        v, done = stack.pop()
        if done:
            out.append(v)
            continue
        stack.append((v, True))
        stack.extend((c, False) for c in sorted(children.get(v, ()), reverse=True))
    return out
