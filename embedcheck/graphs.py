"""Small graph facts used by reports and reasons: degrees, shortest cycle.

    >>> shortest_cycle(6, [(i, (i + 1) % 6) for i in range(6)])
    6
    >>> shortest_cycle(3, [(0, 1), (1, 2)]) is None
    True
"""
from __future__ import annotations

from collections import Counter, deque


def degree_histogram(nodes, edges) -> dict[int, int]:
    """{degree: number of nodes with it}, nodes with no edge counted at degree 0."""
    degree = Counter({n: 0 for n in nodes})
    for a, b in edges:
        degree[a] += 1
        degree[b] += 1
    return dict(sorted(Counter(degree.values()).items()))


def shortest_cycle(nodes, edges) -> int | None:
    """Length of the shortest cycle (the girth), or None for a forest.

    `nodes` is an iterable of node labels or a count. Breadth-first search from every
    node, stopped as soon as it cannot beat the best cycle found so far: fast on
    sparse chip lattices (each search sees only a ball of radius girth/2).
    """
    nodes = range(nodes) if isinstance(nodes, int) else list(nodes)
    adj: dict = {n: [] for n in nodes}
    for a, b in edges:
        adj[a].append(b)
        adj[b].append(a)
    best = None
    for root in adj:
        depth = {root: 0}
        parent = {root: None}
        queue = deque([root])
        while queue:
            u = queue.popleft()
            if best is not None and 2 * depth[u] + 1 >= best:
                break
            for v in adj[u]:
                if v not in depth:
                    depth[v], parent[v] = depth[u] + 1, u
                    queue.append(v)
                elif parent[u] != v:
                    length = depth[u] + depth[v] + 1
                    if best is None or length < best:
                        best = length
    return best
