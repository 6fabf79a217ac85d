"""Repair method `cat`: a cat (GHZ) state, up to single-qubit Paulis, by a fan-out over
the smallest subtree of a spanning tree of the placement's coupling graph that holds the
cat qubits, rooted where a broadcast finishes soonest.

Each qubit holding the cat value passes it to its children, those with the longest
remaining broadcast first (optimal broadcasting in a tree, Slater, Cockayne &
Hedetniemi, SIAM J. Comput. 10, 692 (1981)); helper qubits are then returned to |0> by a
CNOT from a neighbour that still holds the value; a Pauli correction found from the
stabilizer signs fixes the rest.

    >>> star = {"c": {"a", "b", "d"}, "a": {"c"}, "b": {"c"}, "d": {"c"}}
    >>> _broadcast(star, "c", {"a", "b", "c", "d"})[0]
    ('h', ('c',))
"""
from __future__ import annotations

from collections import deque
from typing import Any

from ..model.patch import Patch
from .state import Ops, pauli_correction, two_qubit_count_depth

__all__ = ["NotCat", "carries", "cat_circuit"]


class NotCat(Exception):
    """The state is not a cat state, or the coupling graph cannot carry the fan-out."""


def cat_circuit(patch: Patch, state: Any, support: tuple[str, ...],
                edges: list[tuple[str, str]], known_zero: set[str]) -> Ops | None:
    """Cat-state fan-out over a Steiner subtree, or raise NotCat."""
    targets = [q for q in support if carries(state, patch.index[q])]
    if len(targets) < 2:
        raise NotCat
    tree = _spanning_tree(patch.qubits, edges, targets[0], allowed=set(targets) | known_zero)
    if tree is None:
        raise NotCat
    steiner = _prune(tree, set(targets))
    if steiner is None:
        raise NotCat
    best: tuple[tuple[int, int], Ops] | None = None
    for root in sorted(steiner):            # a helper may be the best root
        if root not in targets and len(steiner) > len(targets) and not steiner[root]:
            continue
        fan_out = _broadcast(steiner, root, set(targets))
        if fan_out is None:                 # its helpers could not all return to |0>
            continue
        two, depth = two_qubit_count_depth(fan_out)
        if best is None or (depth, two) < best[0]:
            best = ((depth, two), fan_out)
    if best is None:
        raise NotCat
    ops = best[1]
    correction = pauli_correction(patch, state, ops)
    if correction is None:
        raise NotCat
    return ops + correction


def carries(state: Any, index: int) -> bool:
    """True when qubit `index` is not in a fixed Z eigenstate (it takes part in the state)."""
    from qiskit.quantum_info import Pauli
    label = ["I"] * state.num_qubits
    label[index] = "Z"
    return abs(state.expectation_value(Pauli("".join(reversed(label))))) < 0.5


def _spanning_tree(nodes: tuple[str, ...], edges: list[tuple[str, str]], root: str,
                   allowed: set[str]) -> dict[str, str | None]:
    """Breadth-first spanning tree (as a child -> parent map) over allowed nodes."""
    adj: dict[str, list[str]] = {n: [] for n in nodes if n in allowed}
    for a, b in edges:
        if a in adj and b in adj:
            adj[a].append(b)
            adj[b].append(a)
    parent: dict[str, str | None] = {root: None}
    queue = deque([root])
    while queue:
        u = queue.popleft()
        for v in adj[u]:
            if v not in parent:
                parent[v] = u
                queue.append(v)
    return parent


def _prune(parent: dict[str, str | None],
           terminals: set[str]) -> dict[str, set[str]] | None:
    """Undirected adjacency of the smallest subtree holding every terminal."""
    if not terminals <= set(parent):
        return None
    adj: dict[str, set[str]] = {n: set() for n in parent}
    for c, p in parent.items():
        if p is not None:
            adj[c].add(p)
            adj[p].add(c)
    changed = True
    while changed:
        changed = False
        for n in list(adj):
            if n not in terminals and len(adj[n]) <= 1:
                for m in adj.pop(n):
                    adj[m].discard(n)
                changed = True
    return adj


def _broadcast(adj: dict[str, set[str]], root: str, targets: set[str]) -> Ops | None:
    """H on the root, CNOT fan-out (longest subtree first), then helpers back to |0>."""
    children: dict[str, list[str]] = {}
    order = [root]
    seen = {root}
    for u in order:
        children[u] = [v for v in sorted(adj[u]) if v not in seen]   # not hash order
        seen.update(children[u])
        order.extend(children[u])
    finish: dict[str, int] = {}
    for u in reversed(order):          # time for u's subtree to receive the value after u
        times = sorted((finish[c] for c in children[u]), reverse=True)
        finish[u] = max((i + 1 + t for i, t in enumerate(times)), default=0)
    for u in children:
        children[u].sort(key=lambda c: -finish[c])
    ops: Ops = [("h", (root,))]
    ready = {root: 0}                  # layer at which a node holds the value
    layered: list[tuple[int, tuple[str, tuple[str, ...]]]] = []
    queue = [root]
    while queue:
        u = queue.pop(0)
        for k, c in enumerate(children[u]):
            ready[c] = ready[u] + k + 1
            layered.append((ready[c], ("cx", (u, c))))
            queue.append(c)
    layered.sort(key=lambda x: x[0])
    ops += [op for _, op in layered]
    # Return helpers to |0>: a helper leaf (in the remaining helper forest) copies from a
    # neighbour that still holds the value; repeat until none remains.
    holding = set(adj)
    helpers = [n for n in adj if n not in targets]
    while helpers:
        progress = False
        for h in sorted(helpers, key=lambda n: sum(m in holding and m not in targets
                                                   for m in adj[n])):
            donors = [m for m in sorted(adj[h]) if m in holding and m != h]
            others = [m for m in donors if m not in targets]
            if donors and (len(others) <= 1 or any(m in targets for m in donors)):
                donor = next((m for m in donors if m in targets), donors[0])
                ops.append(("cx", (donor, h)))
                holding.discard(h)
                helpers.remove(h)
                progress = True
                break
        if not progress:
            return None
    return ops
