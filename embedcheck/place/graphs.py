"""Small graph facts used by reports and reasons: degrees, shortest cycle, short cycles,
common neighbours.

    >>> shortest_cycle(6, [(i, (i + 1) % 6) for i in range(6)])
    6
    >>> shortest_cycle(3, [(0, 1), (1, 2)]) is None
    True
    >>> short_cycles(4, [(0, 1), (1, 2), (2, 3), (3, 0), (0, 2)], max_length=3)
    ([[0, 1, 2], [0, 2, 3]], True)
    >>> common_neighbours([(0, 1), (1, 2), (2, 3), (3, 0)])     # a square: opposite corners
    {(0, 2): 2, (1, 3): 2}
"""
from __future__ import annotations

from collections import Counter, deque

__all__ = ["common_neighbours", "degree_histogram", "odd_cycle_nodes", "short_cycles",
           "shortest_cycle", "shortest_cycle_nodes"]


def degree_histogram(nodes, edges) -> dict[int, int]:
    """{degree: number of nodes with it}, nodes with no edge counted at degree 0."""
    degree = Counter({n: 0 for n in nodes})
    for a, b in edges:
        degree[a] += 1
        degree[b] += 1
    return dict(sorted(Counter(degree.values()).items()))


def shortest_cycle(nodes, edges) -> int | None:
    """Length of the shortest cycle (the girth), or None for a forest.

    `nodes` is an iterable of node labels or a count. See `shortest_cycle_nodes`.
    """
    cycle = shortest_cycle_nodes(nodes, edges)
    return len(cycle) if cycle else None

def _adjacency(nodes, edges):
    nodes = range(nodes) if isinstance(nodes, int) else list(nodes)
    adj: dict = {n: [] for n in nodes}
    for a, b in edges:
        adj[a].append(b)
        adj[b].append(a)
    return adj


def _path_to_root(parent, node):
    path = [node]
    while parent[path[-1]] is not None:
        path.append(parent[path[-1]])
    return path


def shortest_cycle_nodes(nodes, edges, max_length: int | None = None, *,
                         first: bool = False) -> list | None:
    """The nodes of one shortest cycle, in order around it, or None for a forest.

    Breadth-first search from every node, stopped as soon as it cannot beat the best
    cycle found so far: fast on sparse chip lattices (each search sees only a ball of
    radius girth/2). With `max_length`, only cycles up to that length are looked for
    (each search stops at depth max_length/2), which keeps cycle-free chips cheap;
    `first=True` then returns the first such cycle found, shortest or not (enough to
    show one exists).

    >>> shortest_cycle_nodes(5, [(0, 1), (1, 2), (2, 0), (2, 3), (3, 4)])
    [0, 1, 2]
    """
    adj = _adjacency(nodes, edges)
    best = None
    for root in adj:
        depth, parent = {root: 0}, {root: None}
        queue = deque([root])
        while queue:
            u = queue.popleft()
            if best is not None and 2 * depth[u] + 1 >= len(best):
                break
            if max_length is not None and 2 * depth[u] + 1 > max_length:
                break
            for v in adj[u]:
                if v not in depth:
                    depth[v], parent[v] = depth[u] + 1, u
                    queue.append(v)
                elif parent[u] != v:
                    length = depth[u] + depth[v] + 1        # at most: the cycle it closes
                    if best is not None and length >= len(best) and not first:
                        continue
                    left, right = _path_to_root(parent, u), _path_to_root(parent, v)
                    if set(left[:-1]) & set(right[:-1]):
                        continue            # the two paths meet before the root: not simple
                    cycle = list(reversed(left)) + right[:-1]
                    if max_length is not None and len(cycle) > max_length:
                        continue
                    if best is None or len(cycle) < len(best):
                        best = cycle
                    if first and max_length is not None:
                        return _rotated(best)
    return None if best is None else _rotated(best)


def _rotated(best: list) -> list:
    """A cycle written from its smallest node, towards its smaller neighbour."""
    k = best.index(min(best))
    best = best[k:] + best[:k]
    return best if len(best) < 3 or best[1] < best[-1] else [best[0]] + best[:0:-1]


def odd_cycle_nodes(nodes, edges) -> list | None:
    """The nodes of an odd cycle (from a failed two-colouring), or None when bipartite.

    >>> odd_cycle_nodes(4, [(0, 1), (1, 2), (2, 3), (3, 0)]) is None
    True
    >>> sorted(odd_cycle_nodes(3, [(0, 1), (1, 2), (2, 0)]))
    [0, 1, 2]
    """
    adj = _adjacency(nodes, edges)
    colour: dict = {}
    for root in adj:
        if root in colour:
            continue
        colour[root], parent = 0, {root: None}
        queue = deque([root])
        while queue:
            u = queue.popleft()
            for v in adj[u]:
                if v not in colour:
                    colour[v], parent[v] = 1 - colour[u], u
                    queue.append(v)
                elif colour[v] == colour[u]:
                    left, right = _path_to_root(parent, u), _path_to_root(parent, v)
                    common = set(left) & set(right)
                    left = [x for x in left if x not in common] + \
                        [next(x for x in left if x in common)]
                    right = [x for x in right if x not in common]
                    return list(reversed(left)) + right
    return None


def short_cycles(nodes, edges, max_length: int, *, cap: int = 10,
                 steps: int = 200_000) -> tuple[list[list], bool]:
    """(cycles, every_one): the simple cycles of at most `max_length` nodes, shortest
    first, each once, written from its smallest node towards its smaller neighbour; at
    most `cap` of them. `every_one` is False when there are more than `cap`, or when the
    walk took `steps` steps before it was done (then some may be missing).

    Depth first from each node over larger nodes only, so that each cycle is met from
    its smallest node (once each way round; kept once), one length at a time.
    """
    adj = {n: sorted(set(nbrs)) for n, nbrs in _adjacency(nodes, edges).items()}
    found: list[list] = []
    budget = [steps]
    for length in range(3, max_length + 1):
        for root in sorted(adj):
            if not _cycles_through(adj, root, length, found, cap, budget):
                return found, False
    return found, True


def _cycles_through(adj, root, length: int, found: list, cap: int, budget: list) -> bool:
    """Add the cycles of exactly `length` nodes whose smallest node is `root`; False when
    the cap or the step budget stopped it."""
    path, on_path = [root], {root}
    stack = [iter([v for v in adj[root] if v > root])]
    while stack:
        budget[0] -= 1
        if budget[0] < 0:
            return False
        nxt = next(stack[-1], None)
        if nxt is None:
            stack.pop()
            on_path.discard(path.pop())
            continue
        if len(path) + 1 == length:
            if length >= 3 and path[1] < nxt and root in adj[nxt]:
                if len(found) >= cap:
                    return False
                found.append(path + [nxt])
            continue
        path.append(nxt)
        on_path.add(nxt)
        stack.append(iter([v for v in adj[nxt] if v > root and v not in on_path]))
    return True


def common_neighbours(edges, *, most: int = 2_000_000) -> dict | None:
    """{(a, b): how many neighbours a and b share} for every pair sharing at least one
    (a < b), or None when listing them would take more than `most` steps (a dense graph)."""
    adj = _adjacency(sorted({q for e in edges for q in e}), edges)
    if sum(len(v) * (len(v) - 1) // 2 for v in adj.values()) > most:
        return None
    shared: Counter = Counter()
    for nbrs in adj.values():
        nbrs = sorted(set(nbrs))
        for i, a in enumerate(nbrs):
            for b in nbrs[i + 1:]:
                shared[(a, b)] += 1
    return dict(sorted(shared.items()))
