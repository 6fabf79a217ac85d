"""Subgraph monomorphisms, one per symmetry orbit, grown in numpy batches.

A monomorphism maps each pattern node to a distinct host node so that every pattern
edge lands on a host edge (extra host edges are fine: `induced=False`). We grow many
partial maps at once: pattern nodes are taken in a fixed order, each one (after the
first of its connected part) a neighbour of an already-mapped node, so its candidates
are the host neighbours of that node's image -- a local search around every anchor
(the image of the first node), never a scan of the whole chip. Each step is a few numpy
operations on an array of partial maps (rows) instead of a Python loop per map.

Pruning, all necessary conditions of a monomorphism:
- a pattern node of degree d needs a host node of degree >= d, whose neighbours' degrees
  dominate its own neighbours' degrees (both sorted, largest first);
- a node `d` steps from the anchor in the pattern lands at most `d` steps from the
  anchor on the host, so the host's ball of radius r around the anchor must hold at
  least as many nodes as the pattern's (checked for r = 1..4);
- per-node candidate masks from the caller (roles, constraints).

Symmetry breaking (one map per orbit of the pattern's automorphism group G, which acts
freely on injective maps): along the matching order take base points u1, u2, ... with
stabilisers G = G0 >= G1 >= ...; require f(u_i) < f(w) for every other w in the orbit
of u_i under G_{i-1}. Exactly one map of each orbit meets all of these (the one whose
image of u_i is the smallest of its orbit, level by level), so a complete run yields
|maps| / |G| representatives. (Lex-leader constraints from a stabiliser chain; see
Crawford, Ginsberg, Luks & Roy, KR 1996, for the symmetry-breaking idea, and Sims'
stabiliser chains, Computational Problems in Abstract Algebra, 1970; both cited from
memory. The tests check the claim against networkx and rustworkx.)

Memory is bounded: blocks of rows are processed depth first, with a cap on what waits
on the stack (see `grow`).

    >>> import numpy as np
    >>> square = [(0, 1), (1, 2), (2, 3), (3, 0)]
    >>> grid = Host.from_edges(9, [(r * 3 + c, r * 3 + c + 1) for r in range(3) for c in range(2)]
    ...                        + [(r * 3 + c, r * 3 + c + 3) for r in range(2) for c in range(3)])
    >>> sum(len(b) for b in monomorphisms(grid, 4, square))                  # 4 cells x 8
    32
    >>> autos = [(0, 1, 2, 3), (1, 2, 3, 0), (2, 3, 0, 1), (3, 0, 1, 2),
    ...          (3, 2, 1, 0), (0, 3, 2, 1), (1, 0, 3, 2), (2, 1, 0, 3)]
    >>> sum(len(b) for b in monomorphisms(grid, 4, square, symmetries=autos))  # one per cell
    4
"""
from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import Iterator, Sequence

import numpy as np

BALL_RADII = 4


@dataclass(frozen=True)
class Host:
    """An undirected host graph in compressed sparse rows (node ids 0..n-1)."""

    n: int
    indptr: np.ndarray          # neighbours of v: indices[indptr[v]:indptr[v + 1]]
    indices: np.ndarray
    keys: np.ndarray            # sorted a * n + b for every arc a -> b (both ways)

    @classmethod
    def from_edges(cls, n: int, edges) -> "Host":
        arr = np.array(list(edges), dtype=np.int64).reshape(-1, 2)
        arr = arr[arr[:, 0] != arr[:, 1]]
        both = np.concatenate([arr, arr[:, ::-1]])
        keys = np.unique(both[:, 0] * n + both[:, 1])
        src, dst = keys // n, keys % n
        indptr = np.zeros(n + 1, dtype=np.int64)
        np.add.at(indptr, src + 1, 1)
        return cls(n, np.cumsum(indptr), dst.astype(np.int64), keys)

    @property
    def degree(self) -> np.ndarray:
        return np.diff(self.indptr)

    def adjacent(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Elementwise: is there an edge a-b?"""
        key = a.astype(np.int64) * self.n + b
        at = np.searchsorted(self.keys, key)
        at = np.minimum(at, len(self.keys) - 1)
        return self.keys[at] == key if len(self.keys) else np.zeros(len(key), bool)

    def ball_sizes(self, nodes: np.ndarray, radius: int) -> np.ndarray:
        """Number of nodes within distance 1..radius of each of `nodes`, shape (len, radius)."""
        out = np.zeros((len(nodes), radius), dtype=np.int64)
        if not len(nodes):
            return out
        owner = np.arange(len(nodes))
        seen = np.unique(owner * self.n + nodes)           # (owner, node) pairs reached
        front_owner, front = owner, nodes
        for r in range(radius):
            cnt = self.degree[front]
            rows = np.repeat(front_owner, cnt)
            nxt = self.indices[_ragged(self.indptr[front], cnt)]
            key = np.unique(rows * self.n + nxt)
            key = key[~np.isin(key, seen, assume_unique=True)]
            seen = np.union1d(seen, key)
            front_owner, front = key // self.n, key % self.n
            out[:, r] = np.bincount(seen // self.n, minlength=len(nodes))
        return out


def _ragged(starts: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Concatenation of arange(s, s + c) for each start s and count c."""
    total = int(counts.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    ends = np.cumsum(counts)
    return np.arange(total) - np.repeat(ends - counts - starts, counts)


def _top_degrees(indptr, indices, degree, width) -> np.ndarray:
    """Per node, its neighbours' degrees sorted largest first, padded with 0 to `width`."""
    n = len(indptr) - 1
    out = np.zeros((n, width), dtype=np.int64)
    if width == 0 or len(indices) == 0:
        return out
    row = np.repeat(np.arange(n), np.diff(indptr))
    nd = degree[indices]
    order = np.lexsort((-nd, row))
    rank = np.arange(len(order)) - indptr[row[order]]
    keep = rank < width
    out[row[order][keep], rank[keep]] = nd[order][keep]
    return out


def _distances(nbrs, source) -> dict[int, int]:
    """Breadth-first distances from `source` within its connected part."""
    dist, front = {source: 0}, [source]
    while front:
        nxt = []
        for v in front:
            for w in nbrs[v]:
                if w not in dist:
                    dist[w] = dist[v] + 1
                    nxt.append(w)
        front = nxt
    return dist


def _centre(nbrs, source) -> int:
    """A roughly central node of `source`'s part: the middle of a long shortest path
    found by two breadth-first sweeps (linear time; exact on trees)."""
    far = _distances(nbrs, source)
    a = max(far, key=lambda v: (far[v], -v))
    from_a = _distances(nbrs, a)
    b = max(from_a, key=lambda v: (from_a[v], -v))
    half, v = from_a[b] // 2, b
    while from_a[v] > half:
        v = min(w for w in nbrs[v] if from_a.get(w, -1) == from_a[v] - 1)
    return v


def _shortest_ear(nbrs, pos, order) -> list[int]:
    """Unmapped nodes, in path order, of a short path that leaves one mapped node and
    returns to a mapped node (another, or the same one by another edge); [] if none.
    Breadth-first from every (mapped node, unmapped neighbour) edge at once."""
    root: dict[int, int] = {}
    back: dict[int, int] = {}                # previous node on the path (-1 at the start)
    start: dict[int, int] = {}               # the mapped node the path left from
    queue = deque()
    for m in order:
        for u in sorted(nbrs[m]):
            if pos[u] < 0 and u not in root:
                root[u], back[u], start[u] = len(root), -1, m
                queue.append(u)

    def path(v):
        out = []
        while v >= 0:
            out.append(v)
            v = back[v]
        return out[::-1]

    while queue:
        v = queue.popleft()
        for w in sorted(nbrs[v]):
            if pos[w] >= 0:
                if w != start[v] or back[v] >= 0:
                    return path(v)
            elif w not in root:
                root[w], back[w], start[w] = root[v], v, start[v]
                queue.append(w)
            elif root[w] != root[v] and w != back[v]:
                return path(v) + path(w)[::-1]
    return []


@dataclass(frozen=True)
class Plan:
    """The matching order and, per step, what to check."""

    order: tuple[int, ...]                       # pattern node mapped at each step
    parent: tuple[int, ...]                      # step whose image's neighbours are candidates, -1: free
    extra: tuple[tuple[int, ...], ...]           # other earlier steps that must be adjacent
    less: tuple[tuple[int, ...], ...]            # earlier steps whose image must be smaller
    anchors: tuple[int, ...]                     # steps that start a connected part


def plan(k: int, edges: Sequence[tuple[int, int]], counts: np.ndarray,
         symmetries: Sequence[Sequence[int]] | None = None) -> Plan:
    """The matching order: start each connected part at a central node among those with
    the fewest candidates; then map the shortest "ear" (a path of unmapped nodes joining
    two mapped ones, or a cycle back to one) node by node, so every cycle closes as soon
    as possible and wrong partial maps die young; with no ear left (tree parts), take the
    node with the most mapped neighbours. Symmetry constraints are laid along this order."""
    nbrs: list[set[int]] = [set() for _ in range(k)]
    for a, b in edges:
        if a != b:
            nbrs[a].add(b)
            nbrs[b].add(a)
    pos = [-1] * k
    order: list[int] = []
    linked = [0] * k

    def take(v):
        pos[v] = len(order)
        order.append(v)
        for w in nbrs[v]:
            linked[w] += 1

    while len(order) < k:
        ear = _shortest_ear(nbrs, pos, order)
        if ear:
            for v in ear:
                take(v)
            continue
        frontier = [v for v in range(k) if pos[v] < 0 and linked[v]]
        if frontier:
            take(min(frontier, key=lambda v: (-linked[v], counts[v], -len(nbrs[v]), v)))
            continue
        rest = [v for v in range(k) if pos[v] < 0]
        fewest = min(counts[v] for v in rest)
        tied = [v for v in rest if counts[v] == fewest]
        centre = _distances(nbrs, _centre(nbrs, tied[0]))
        take(min(tied, key=lambda v: (centre.get(v, k), -len(nbrs[v]), v)))
    parent, extra, anchors = [], [], []
    for s, v in enumerate(order):
        earlier = sorted(pos[w] for w in nbrs[v] if pos[w] < s)
        parent.append(earlier[0] if earlier else -1)
        extra.append(tuple(earlier[1:]))
        if not earlier:
            anchors.append(s)
    less: list[list[int]] = [[] for _ in range(k)]
    group = [tuple(g) for g in (symmetries or [])]
    for u in order:
        if len(group) <= 1:
            break
        orbit = {g[u] for g in group}
        for w in orbit - {u}:
            less[pos[w]].append(pos[u])          # f(u) < f(w); u is mapped before w
        group = [g for g in group if g[u] == u]
    return Plan(tuple(order), tuple(parent), tuple(extra), tuple(tuple(x) for x in less),
                tuple(anchors))


def monomorphisms(host: Host, k: int, edges: Sequence[tuple[int, int]], *,
                  candidates: Sequence[np.ndarray] | None = None,
                  symmetries: Sequence[Sequence[int]] | None = None,
                  chunk: int = 1 << 20, part: tuple[int, int] = (0, 1)
                  ) -> Iterator[np.ndarray]:
    """Yield arrays of shape (m, k): row r maps pattern node j to host node [r, j].

    Every monomorphism of the pattern (k nodes, `edges`) into `host` is yielded once, or,
    with `symmetries` (the pattern's automorphism group, as permutations), exactly one per
    orbit. `candidates[j]` is an optional boolean mask over host nodes for pattern node j.
    Empty arrays are yielded now and then so a caller can check its budgets. `chunk`
    bounds the entries of one block of partial maps (see `grow` for the memory bound).
    `part=(i, m)` searches
    only every m-th anchor from the i-th: the m parts together find every map once, so
    they can run in separate processes (see `prepare` and `grow`).
    """
    yield from grow(prepare(host, k, edges, candidates=candidates, symmetries=symmetries),
                    part=part, chunk=chunk)


@dataclass(frozen=True)
class Prepared:
    """Everything a search needs, worked out once: the plan, each step's candidate mask
    and the anchors that pass the pruning (picklable, for worker processes)."""

    host: Host
    k: int
    plan: Plan
    masks: tuple[np.ndarray, ...]        # candidate mask of the node mapped at each step
    start: np.ndarray                    # host nodes the first node may map to


def prepare(host: Host, k: int, edges: Sequence[tuple[int, int]], *,
            candidates: Sequence[np.ndarray] | None = None,
            symmetries: Sequence[Sequence[int]] | None = None) -> Prepared:
    """Candidate masks (degree, neighbour degrees, caller's masks), the matching order
    with its symmetry constraints, and the anchors whose balls are big enough."""
    edges = [(int(a), int(b)) for a, b in edges]
    pnbr: list[set[int]] = [set() for _ in range(k)]
    for a, b in set(tuple(sorted(e)) for e in edges if e[0] != e[1]):
        pnbr[a].add(b)
        pnbr[b].add(a)
    pdeg = np.array([len(x) for x in pnbr], dtype=np.int64)
    width = int(pdeg.max(initial=0))
    hdeg = host.degree
    htop = _top_degrees(host.indptr, host.indices, hdeg, width)
    pindptr = np.concatenate([[0], np.cumsum(pdeg)])
    pind = np.array([w for v in range(k) for w in sorted(pnbr[v])], dtype=np.int64)
    ptop = _top_degrees(pindptr, pind, pdeg, width)
    masks = []
    for j in range(k):
        ok = (hdeg >= pdeg[j]) & np.all(htop[:, :pdeg[j]] >= ptop[j, :pdeg[j]], axis=1)
        if candidates is not None:
            ok &= candidates[j]
        masks.append(ok)
    counts = np.array([int(m.sum()) for m in masks])
    p = plan(k, edges, counts, symmetries)
    if k == 0 or (counts == 0).any():
        return Prepared(host, k, p, tuple(masks[v] for v in p.order), np.zeros(0, np.int64))
    pattern_host = Host(k, pindptr, pind, np.zeros(0, dtype=np.int64))
    first = p.order[0]
    start = np.flatnonzero(masks[first])
    if len(p.anchors) == 1 and len(start):           # ball sizes around the anchor
        radius = min(BALL_RADII, k - 1)
        need = pattern_host.ball_sizes(np.array([first]), radius)[0]
        keep = np.ones(len(start), bool)
        for lo in range(0, len(start), 4096):
            got = host.ball_sizes(start[lo:lo + 4096], radius)
            keep[lo:lo + 4096] = np.all(got >= need, axis=1)
        start = start[keep]
    return Prepared(host, k, p, tuple(masks[v] for v in p.order), start)


def node_dtype(n: int):
    """The smallest integer type that holds host node ids 0..n-1 (less memory traffic:
    every step copies each partial map)."""
    return np.int16 if n <= np.iinfo(np.int16).max else np.int32


def grow(prep: Prepared, *, part: tuple[int, int] = (0, 1), chunk: int = 1 << 20,
         held: int = 1 << 24) -> Iterator[np.ndarray]:
    """The search itself (see `monomorphisms`): depth first over blocks of partial maps.

    A block at step s has s columns: the images of the first s nodes of the plan's order.
    A block is split so that its extension holds at most `chunk` entries, and the pieces
    waiting on the stack hold at most about `held` entries in all (when they would hold
    more, the next splits make smaller pieces), so memory stays bounded (16 MiB of
    2-byte entries by default, plus one block) however deep or wide the search grows."""
    host, k, p, masks = prep.host, prep.k, prep.plan, prep.masks
    if k == 0:
        yield np.zeros((1, 0), dtype=np.int64)
        return
    dtype = node_dtype(host.n)
    hdeg = host.degree
    neighbours = host.indices.astype(dtype)
    free_nodes = [np.flatnonzero(masks[s]).astype(dtype) if p.parent[s] < 0 else None
                  for s in range(k)]
    start = prep.start[part[0]::part[1]].astype(dtype)
    stack = [(1, start.reshape(-1, 1))] if len(start) else []
    waiting = start.size
    inverse = np.argsort(np.array(p.order))
    pops = 0
    while stack:
        s, rows = stack.pop()
        waiting -= rows.size
        pops += 1
        if pops % 64 == 0:
            yield np.zeros((0, k), dtype=np.int64)
        if s == k:
            yield rows[:, inverse].astype(np.int64)
            continue
        if p.parent[s] >= 0:
            fan = hdeg[rows[:, p.parent[s]]]
        else:
            fan = np.full(len(rows), len(free_nodes[s]), dtype=np.int64)
        total = int(fan.sum())
        room = max(chunk // 16, min(chunk, held - waiting))
        most = max(1, room // (s + 1))                # extended rows per piece
        if total > most and len(rows) > 1:            # split: bounded memory, depth first
            cut = np.searchsorted(np.cumsum(fan), np.arange(1, total // most + 2) * most)
            pieces = np.split(rows, np.unique(np.clip(cut, 1, len(rows) - 1)))
            stack.extend((s, piece) for piece in reversed(pieces) if len(piece))
            waiting += rows.size
            continue
        if p.parent[s] >= 0:
            which = np.repeat(np.arange(len(rows)), fan)
            cand = neighbours[_ragged(host.indptr[rows[:, p.parent[s]]], fan)]
        else:
            which = np.repeat(np.arange(len(rows)), len(free_nodes[s]))
            cand = np.tile(free_nodes[s], len(rows))
        keep = masks[s][cand]
        which, cand = which[keep], cand[keep]
        for t in p.extra[s]:
            keep = host.adjacent(cand, rows[which, t])
            which, cand = which[keep], cand[keep]
        for t in p.less[s]:
            keep = cand > rows[which, t]
            which, cand = which[keep], cand[keep]
        grown = rows[which]
        keep = ~(grown == cand[:, None]).any(axis=1)
        if keep.any():
            out = np.empty((int(keep.sum()), s + 1), dtype=dtype)
            out[:, :s] = grown[keep]
            out[:, s] = cand[keep]
            stack.append((s + 1, out))
            waiting += out.size
