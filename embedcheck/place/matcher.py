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
- a node r steps from the first node (the root) in the pattern lands at most r steps
  from the anchor on the host, so the host's ball of radius r around the anchor must hold
  at least as many nodes as the pattern's ball around the root (checked for r = 1..4);
- look-ahead: a node d <= 5 pattern steps from an earlier-mapped one, by a path through
  nodes not yet mapped (the rest of an ear), must land within d host steps of its image;
  so a walk that can no longer close its cycle dies young (a step's check is dropped
  when it turns out to prune almost nothing);
- per-node candidate masks from the caller (roles, constraints).

Set-up follows the search: ball sizes are worked out per batch of anchors when the
search reaches it (one breadth-first search for the batch), so a search stopped early
pays for the anchors it looked at only.

Order of work (never starve): first a probe, a plain depth-first search in Python, one
partial map at a time (microseconds per step), from a few anchors far from the chip's
edges; then depth first over blocks of rows in numpy. A patch much sparser than its chip
(millions of placements, most partial maps never completing) thus gets a first map at
once, where widening the blocks alone would pile up partial maps first.

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
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["Engine", "Host", "Plan", "Prepared", "bfs_distances", "girth", "grow", "layers",
           "monomorphisms", "node_dtype", "plan", "prepare"]

FIRST_ANCHORS = 256         # anchors in the first batch; batches then grow fourfold
PROBE_SAMPLE = 16           # anchors sampled to pick where the probe starts
PROBE_ANCHORS = 4           # anchors the probe tries


@dataclass(frozen=True)
class Host:
    """An undirected host graph in compressed sparse rows (node ids 0..n-1).

    Arc `i` (position `i` of `indices`) runs from the node whose row holds it to
    `indices[i]`; `keys[i] = a * n + b` for that arc a -> b (sorted, both ways)."""

    n: int
    indptr: np.ndarray          # neighbours of v: indices[indptr[v]:indptr[v + 1]]
    indices: np.ndarray
    keys: np.ndarray            # sorted a * n + b for every arc a -> b (both ways)

    @classmethod
    def from_edges(cls, n: int, edges) -> "Host":
        if not hasattr(edges, "__len__"):
            edges = list(edges)
        arr = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
        arr = arr[arr[:, 0] != arr[:, 1]]
        keys = np.sort(np.concatenate([arr[:, 0] * n + arr[:, 1], arr[:, 1] * n + arr[:, 0]]))
        if len(keys):
            keep = np.ones(len(keys), dtype=bool)
            keep[1:] = keys[1:] != keys[:-1]
            keys = keys[keep]
        src, dst = keys // n, keys % n
        indptr = np.zeros(n + 1, dtype=np.int64)
        np.add.at(indptr, src + 1, 1)
        return cls(n, np.cumsum(indptr), dst.astype(np.int64), keys)

    @property
    def degree(self) -> np.ndarray:
        return np.diff(self.indptr)

    def arcs(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Elementwise: the index of arc a -> b, or -1 where a and b are not adjacent."""
        key = a.astype(np.int64) * self.n + b
        if not len(self.keys):
            return np.full(len(key), -1, dtype=np.int64)
        at = np.minimum(np.searchsorted(self.keys, key), len(self.keys) - 1)
        return np.where(self.keys[at] == key, at, -1)

    def adjacent(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Elementwise: is there an edge a-b?"""
        return self.arcs(a, b) >= 0


def _ragged(starts: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Concatenation of arange(s, s + c) for each start s and count c."""
    total = int(counts.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    ends = np.cumsum(counts)
    return np.arange(total) - np.repeat(ends - counts - starts, counts)


def _contains(table: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Elementwise: is values[i] among table[i, :]? (numpy's any(axis=1) is slow on short
    rows: narrow tables are compared column by column, wide ones through a padded boolean
    buffer read as 64-bit words.)"""
    count, width = table.shape
    if width <= 8:
        out = table[:, 0] == values if width else np.zeros(count, dtype=bool)
        for j in range(1, width):
            out |= table[:, j] == values
        return out
    hits = np.zeros((count, -(-width // 8) * 8), dtype=bool)
    np.equal(table, values[:, None], out=hits[:, :width])
    words = hits.view(np.uint64)
    out = words[:, 0].copy()
    for j in range(1, words.shape[1]):
        out |= words[:, j]
    return out != 0


def layers(host: Host, anchors: np.ndarray, radius: int, cap: int | None):
    """Breadth-first search from each anchor at once, up to `radius` steps, stopping after
    the first radius at which some anchor's ball holds more than `cap` nodes.

    Returns (owner, node, sizes): the nodes reached, grouped by anchor (`owner`, the
    anchor's position in `anchors`) in search order (the anchor, then the nodes at
    distance 1, ...); `sizes[i, r]` how many nodes lie within distance r of anchor i,
    for r = 0 .. `radius` (a ball that stopped growing keeps its size; columns past a
    stop at `cap` are missing)."""
    m, n = len(anchors), host.n
    owner = np.arange(m, dtype=np.int64)
    layers_owner, layers_node = [owner], [np.asarray(anchors, dtype=np.int64)]
    before = np.zeros(0, dtype=np.int64)             # the layer before the last (keys)
    last = owner * n + layers_node[0]                # the last layer (keys, sorted)
    count = np.ones(m, dtype=np.int64)
    sizes = [count]
    front_owner, front = owner, layers_node[0]
    deg = host.degree
    for _ in range(radius):
        if not len(front) or (cap is not None and count.max() > cap):
            break
        fan = deg[front]
        key = np.sort(np.repeat(front_owner, fan) * n
                      + host.indices[_ragged(host.indptr[front], fan)])
        fresh = np.ones(len(key), dtype=bool)
        fresh[1:] = key[1:] != key[:-1]
        for old in (last, before):                   # a new node is in neither layer
            if len(old):
                at = np.minimum(np.searchsorted(old, key), len(old) - 1)
                fresh &= old[at] != key
        key = key[fresh]
        before, last = last, key
        front_owner, front = key // n, key % n
        layers_owner.append(front_owner)
        layers_node.append(front)
        count = count + np.bincount(front_owner, minlength=m)
        sizes.append(count)
    if not len(front) and len(sizes) <= radius:     # every ball stopped growing
        sizes += [count] * (radius + 1 - len(sizes))
    owner, node = np.concatenate(layers_owner), np.concatenate(layers_node)
    order = np.argsort(owner, kind="stable")
    return owner[order], node[order], np.stack(sizes, axis=1)


def girth(host: Host, cap: int) -> int:
    """The length of the host's shortest cycle, or `cap` if it has none shorter (or a
    lower bound on it, when the search would hold more than GIRTH_MEMORY nodes).

    Breadth-first search from every node at once, layer by layer: at depth d a node
    reached from two nodes of the layer before (other than along the tree) closes a
    cycle of at most 2d, an edge between two nodes of layer d one of 2d + 1, through the
    search's root. The first depth at which any root sees one gives the girth (each
    shortest cycle is seen from its own nodes at that depth)."""
    n = host.n
    if n == 0 or not len(host.indices):
        return cap
    owner = np.arange(n, dtype=np.int64)
    front, came = owner.copy(), np.full(n, -1, dtype=np.int64)   # node, its parent
    seen_prev = np.zeros(0, dtype=np.int64)                       # keys of depth d - 1
    seen_now = owner * n + owner                                  # keys of depth d
    deg = host.degree
    for d in range(1, cap // 2 + 1):
        fan = deg[front]
        if int(fan.sum()) > GIRTH_MEMORY:                # no cycle up to depth d - 1 so
            return min(cap, max(3, 2 * d - 1))           # far: a lower bound will do
        who = np.repeat(owner, fan)
        src = np.repeat(front, fan)
        back = np.repeat(came, fan)
        dst = host.indices[_ragged(host.indptr[front], fan)]
        keep = dst != back                               # not straight back up the tree
        who, src, dst = who[keep], src[keep], dst[keep]
        key = who * n + dst
        at = np.minimum(np.searchsorted(seen_now, key), len(seen_now) - 1)
        if (seen_now[at] == key).any():                  # an edge inside layer d - 1
            return min(cap, 2 * d - 1)
        order = np.argsort(key, kind="stable")
        key, src = key[order], src[order]
        if len(key) > 1 and (key[1:] == key[:-1]).any():  # reached twice: even cycle
            return min(cap, 2 * d)
        if len(seen_prev):
            at = np.minimum(np.searchsorted(seen_prev, key), len(seen_prev) - 1)
            if (seen_prev[at] == key).any():
                return min(cap, 2 * d - 1)
        seen_prev, seen_now = seen_now, key
        owner, front, came = key // n, key % n, src
    return cap


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


def bfs_distances(nbrs, source) -> dict[int, int]:
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
    far = bfs_distances(nbrs, source)
    a = max(far, key=lambda v: (far[v], -v))
    from_a = bfs_distances(nbrs, a)
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
    queue: deque[int] = deque()
    for m in order:
        for u in nbrs[m]:                    # neighbour lists come sorted
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
        for w in nbrs[v]:
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
    parent: tuple[int, ...]      # step whose image's neighbours are candidates, -1: free
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

    ordered = [sorted(x) for x in nbrs]
    while len(order) < k:
        ear = _shortest_ear(ordered, pos, order)
        if ear:
            for v in ear:
                take(v)
            for v in ear:          # pendant nodes hanging off the ear: their parent's
                for w in sorted(nbrs[v]):   # free neighbours run out as the map grows
                    if pos[w] < 0 and len(nbrs[w]) == 1:
                        take(w)
            continue
        frontier = [v for v in range(k) if pos[v] < 0 and linked[v]]
        if frontier:
            take(min(frontier, key=lambda v: (-linked[v], counts[v], -len(nbrs[v]), v)))
            continue
        rest = [v for v in range(k) if pos[v] < 0]
        fewest = min(counts[v] for v in rest)
        tied = [v for v in rest if counts[v] == fewest]
        centre = bfs_distances(nbrs, _centre(nbrs, tied[0]))
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
    """Everything a search needs, worked out once: the plan, each step's candidate mask,
    the anchors that pass the cheap masks, the pattern's distances from the root and the
    look-ahead checks (picklable, for worker processes). Ball sizes around the anchors
    are left to `grow`, which works them out for the anchors it reaches."""

    host: Host
    k: int
    plan: Plan
    masks: tuple[np.ndarray, ...]        # candidate mask of the node mapped at each step
    start: np.ndarray                    # host nodes the first node may map to
    profile: np.ndarray                  # pattern nodes within distance r of the root
    look: tuple[tuple[tuple[int, int], ...], ...]   # per step: (earlier step, distance)


def prepare(host: Host, k: int, edges: Sequence[tuple[int, int]], *,
            candidates: Sequence[np.ndarray] | None = None,
            symmetries: Sequence[Sequence[int]] | None = None) -> Prepared:
    """Candidate masks (degree, neighbour degrees, caller's masks), the matching order
    with its symmetry constraints and look-ahead checks, and the anchors."""
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
    masks: list[np.ndarray] = []             # nodes alike share one mask
    counts: list[int] = []
    known: dict[tuple, tuple[np.ndarray, int]] = {}
    for j in range(k):
        sig = (tuple(ptop[j, :pdeg[j]].tolist()),
               None if candidates is None else id(candidates[j]))
        if sig not in known:
            ok = hdeg >= pdeg[j]
            for i, d in enumerate(sig[0]):
                ok = ok & (htop[:, i] >= d)
            if candidates is not None:
                ok = ok & candidates[j]
            known[sig] = (ok, int(ok.sum()))
        masks.append(known[sig][0])
        counts.append(known[sig][1])
    sizes = np.array(counts)
    p = plan(k, edges, sizes, symmetries)
    profile = np.ones(1, dtype=np.int64)
    if k:
        dist = bfs_distances(pnbr, p.order[0])
        profile = np.cumsum(np.bincount(np.array(list(dist.values()))))
    start = np.flatnonzero(masks[p.order[0]]) if k and not (sizes == 0).any() else \
        np.zeros(0, np.int64)
    return Prepared(host, k, p, tuple(masks[v] for v in p.order), start, profile,
                    _look_ahead(pnbr, p))


LOOK_DISTANCE = 5       # look-ahead checks reach pattern nodes up to this far
LOOK_WIDTH = 64         # and use chip balls of at most this many nodes


def _look_ahead(pnbr, p: Plan, most: int = 1) -> tuple:
    """Per step s, up to `most` earlier steps t whose image must lie within distance d
    (2 .. LOOK_DISTANCE: the pattern distance) of step s's image, where that is not
    already implied by the nodes mapped so far (the short pattern path runs through
    unmapped nodes: the rest of an ear). A necessary condition of a monomorphism,
    checked before the injectivity test, so that walks that can no longer close their
    cycle die young; the nearest such step is taken."""
    pos = {v: s for s, v in enumerate(p.order)}
    out: list[tuple[tuple[int, int], ...]] = []
    for s, v in enumerate(p.order):
        dist, front = {v: 0}, [v]                     # the whole pattern, around v
        for d in range(1, LOOK_DISTANCE + 1):
            nxt = []
            for x in front:
                for w in pnbr[x]:
                    if w not in dist:
                        dist[w] = d
                        nxt.append(w)
            front = nxt
        picks = sorted((d, -pos[w], w) for w, d in dist.items() if d >= 2 and pos[w] < s)
        if not picks:
            out.append(())
            continue
        deepest = picks[-1][0]
        mapped, front = {v: 0}, [v]                   # paths over mapped nodes only
        for d in range(1, deepest + 1):
            nxt = []
            for x in front:
                for w in pnbr[x]:
                    if w not in mapped and pos[w] < s:
                        mapped[w] = d
                        nxt.append(w)
            front = nxt
        chosen = [(-t, d) for d, t, w in picks if mapped.get(w, deepest + 1) > d]
        out.append(tuple(chosen[:most]))
    return tuple(out)


def node_dtype(n: int):
    """The smallest integer type that holds host node ids 0..n-1 (less memory traffic:
    every step copies each partial map)."""
    return np.int16 if n < np.iinfo(np.int16).max - 2 else np.int32


SMALL_DEGREE = 8        # hosts up to this degree get padded neighbour tables
SPARE = 8               # columns a block of partial maps grows by at a time
GIRTH_AFTER = 1 << 18   # candidates tried before the chip's girth is worth learning
GIRTH_CAP = 16          # girths this long or longer count as this long
GIRTH_MEMORY = 1 << 22  # search entries the girth may take (else a lower bound)
LOOK_TRIAL = 8192       # candidates a step's look-ahead check is tried on, at least,
LOOK_WORTH = 0.02       # before it is dropped for pruning fewer than this fraction


class Engine:
    """One search's moving parts, shared by the enumeration (`grow`) and the best-first
    search (`best_first.py`). A block of partial maps is an array of rows, row r holding
    the host images of the plan's first s nodes (step order)."""

    def __init__(self, prep: Prepared):
        self.prep = prep
        host, k = prep.host, prep.k
        n = host.n
        self.dtype = node_dtype(n)
        self.deg = host.degree
        self.neighbours = host.indices.astype(self.dtype)
        self.inverse = np.argsort(np.array(prep.plan.order, dtype=np.int64))
        self.free: list[np.ndarray | None] = [np.flatnonzero(prep.masks[s]).astype(self.dtype)
                     if prep.plan.parent[s] < 0 else None for s in range(k)]
        self.radius = min(len(prep.profile) - 1, 4)
        top = int(self.deg.max(initial=0))
        self.padded: np.ndarray | None = None
        self.far: list | None = None         # see _learn_girth
        self._balls: dict[int, np.ndarray] = {}
        if 0 < top <= SMALL_DEGREE:
            slot = np.arange(len(host.indices)) - np.repeat(host.indptr[:-1], self.deg)
            padded = np.full((n + 1, top), n, dtype=self.dtype)      # pad: n (row n too)
            padded[np.repeat(np.arange(n), self.deg), slot] = host.indices
            self.padded = padded
            known: dict = {}
            self.padded_masks = []
            for mask in prep.masks:                        # masks with pad n: False
                if id(mask) not in known:
                    known[id(mask)] = np.append(mask, False)
                self.padded_masks.append(known[id(mask)])
        self.reset()

    def reset(self) -> None:
        """Forget which look-ahead checks were dropped (each search starts afresh, so a
        piece of the anchors gives the same maps whichever process runs it)."""
        k = self.prep.k
        self.looking = [bool(x) for x in self.prep.look] + [False]
        self.look_seen = [0] * (k + 1)
        self.look_cut = [0] * (k + 1)
        self.work = 0                        # candidates tried (and probe steps): the
        self.reached = 0                     # search's work unit; anchors begun so far

    def _learn_girth(self) -> None:
        """Once a search is big (GIRTH_AFTER candidates), learn the chip's girth g (up
        to GIRTH_CAP) and, per step, which earlier images a new image could collide with.
        A candidate c is a chip neighbour of its parent's image; if c were the image of
        a mapped node t joined to the parent by a path of d mapped nodes, that path and
        c would close a chip cycle of d + 1 distinct nodes, so d >= g - 1 (or d = 1: c
        goes back along an edge). The other images need no comparison. (The girth is a
        whole-chip figure, worked out once; a small search never asks for it.)"""
        k, p = self.prep.k, self.prep.plan
        g = girth(self.prep.host, GIRTH_CAP)
        self.far = []
        if g < 5:
            return                           # nothing to gain: compare with every image
        nbrs: list[list[int]] = [[] for _ in range(k)]
        for s in range(k):
            for t in ((p.parent[s],) if p.parent[s] >= 0 else ()) + p.extra[s]:
                nbrs[s].append(t)
                nbrs[t].append(s)
        for s in range(k + 1):
            parent = p.parent[s] if s < k else -1
            if parent < 0:
                self.far.append((s, ()))
                continue
            dist, front = {parent: 0}, [parent]
            while front:                     # over mapped steps only
                nxt = []
                for x in front:
                    for w in nbrs[x]:
                        if w < s and w not in dist:
                            dist[w] = dist[x] + 1
                            nxt.append(w)
                front = nxt
            # an image with no mapped path to the parent (another part of the pattern)
            # may sit anywhere: always compared (the default must reach g - 1, whatever k)
            hit = [t for t in range(s) if dist.get(t, g) >= g - 1]
            prefix = max(hit) + 1 if hit else 0
            near = tuple(t for t in range(prefix, s) if dist.get(t) == 1)
            self.far.append((prefix, near))

    def ball(self, radius: int) -> np.ndarray:
        """Per host node, the nodes within `radius` (2 .. LOOK_DISTANCE) of it, padded
        with n; built once per search, for the look-ahead checks."""
        if radius not in self._balls:
            n = self.prep.host.n
            padded = self.padded
            assert padded is not None            # look-ahead needs the padded table
            inner = self.ball(radius - 1) if radius > 2 else \
                np.concatenate([np.arange(n + 1, dtype=self.dtype)[:, None], padded], 1)
            both = np.sort(np.concatenate([inner, padded[inner].reshape(n + 1, -1)],
                                          axis=1), axis=1)
            dup = np.zeros(both.shape, dtype=bool)
            dup[:, 1:] = both[:, 1:] == both[:, :-1]
            both = np.sort(np.where(dup, n, both), axis=1)
            wide = int((both[:n] < n).sum(axis=1).max(initial=1))
            self._balls[radius] = np.ascontiguousarray(both[:, :wide])
        return self._balls[radius]

    def anchors(self, anchors: np.ndarray) -> np.ndarray:
        """The anchors whose balls (radius 1 .. 4) hold at least as many nodes as the
        pattern's around its root (one breadth-first search for all of them)."""
        if self.radius < 2 or not len(anchors):
            return anchors
        sizes = layers(self.prep.host, anchors, self.radius, None)[2]
        ok = np.all(sizes >= self.prep.profile[None, :self.radius + 1], axis=1)
        return anchors[ok]

    def root(self, anchors: np.ndarray) -> np.ndarray:
        """The block of one-node maps (step 1) at `anchors`."""
        rows = np.empty((len(anchors), min(SPARE, max(self.prep.k, 1))), dtype=self.dtype)
        rows[:, 0] = anchors
        return rows

    def fan(self, rows: np.ndarray, s: int) -> np.ndarray:
        """Candidates each row (at step s) will try at its next step."""
        parent = self.prep.plan.parent[s]
        if parent < 0:
            free = self.free[s]
            assert free is not None              # a step without a parent has its list
            return np.full(len(rows), len(free), dtype=np.int64)
        return self.deg[rows[:, parent]]

    def candidates(self, rows: np.ndarray, s: int, arcs: bool = False):
        """(which, cand, grown, arcs): the extensions of `rows` (at step s: columns 0..s-1
        hold the images so far, any further columns are room for later steps) by one
        node that pass every check: `which` the row extended, `cand` the new image,
        `grown` = rows[which] (a copy to write the new image into: see `child`); with
        `arcs`, a list holding for each pattern edge the step closes (parent edge first,
        then `extra` in plan order) the host arc it uses."""
        prep = self.prep
        p, host = prep.plan, prep.host
        parent = p.parent[s]
        position = None
        if parent >= 0 and self.padded is not None:   # neighbours from the padded table
            grid = self.padded[rows[:, parent]]
            wide = grid.shape[1]
            cand = grid.ravel()
            which = np.repeat(np.arange(len(rows)), wide)
            keep = self.padded_masks[s][cand]               # pads (n) never pass
            if arcs:
                position = host.indptr[rows[which, parent]] + \
                    np.tile(np.arange(wide), len(rows))
        elif parent >= 0:
            image = rows[:, parent]
            fan = self.deg[image]
            position = _ragged(host.indptr[image], fan)
            which = np.repeat(np.arange(len(rows)), fan)
            cand = self.neighbours[position]
            keep = prep.masks[s][cand]
        else:
            free = self.free[s]
            assert free is not None
            which = np.repeat(np.arange(len(rows)), len(free))
            cand = np.tile(free, len(rows))
            keep = prep.masks[s][cand]
        for t in p.less[s]:
            keep &= cand > rows[which, t]
        which, cand = which[keep], cand[keep]
        found = [position[keep]] if arcs and position is not None else []
        for t in p.extra[s]:
            other = rows[which, t]
            if self.padded is not None and not arcs:
                keep = _contains(self.padded[other], cand)
            else:
                at = host.arcs(other, cand)
                keep = at >= 0
                if arcs:
                    found = [f[keep] for f in found] + [at[keep]]
            which, cand = which[keep], cand[keep]
            if not arcs:
                found = []
        if self.padded is not None and self.looking[s]:
            before = len(cand)
            for t, d in prep.look[s]:
                table = self.ball(d)
                if table.shape[1] > LOOK_WIDTH:          # too dense a chip: skip it
                    continue
                keep = _contains(table[rows[which, t]], cand)
                which, cand = which[keep], cand[keep]
                found = [f[keep] for f in found]
            seen = self.look_seen[s] = self.look_seen[s] + before
            cut = self.look_cut[s] = self.look_cut[s] + before - len(cand)
            if seen >= LOOK_TRIAL and cut < LOOK_WORTH * seen:
                self.looking[s] = False          # this step's check rarely prunes: drop it
        grown = rows[which]
        self.work += len(cand)
        if self.far is None and self.work > GIRTH_AFTER:
            self._learn_girth()
        if self.far:                        # only images a collision could hit
            prefix, near = self.far[s]
            keep = ~_contains(grown[:, :prefix], cand)
            for t in near:
                keep &= grown[:, t] != cand
        else:
            keep = ~_contains(grown[:, :s], cand)
        if keep.all():                      # the usual case: no second copy
            return which, cand, grown, found
        return which[keep], cand[keep], grown[keep], [f[keep] for f in found]

    @staticmethod
    def child(grown: np.ndarray, cand: np.ndarray, s: int) -> np.ndarray:
        """The rows at step s + 1: `grown` (from `candidates`) with image s written in,
        widened by SPARE columns when it has no room left (so a row is copied once per
        step, not twice)."""
        if s >= grown.shape[1]:
            wider = np.empty((len(cand), grown.shape[1] + SPARE), dtype=grown.dtype)
            wider[:, :s] = grown[:, :s]
            grown = wider
        grown[:, s] = cand
        return grown

    def maps(self, rows: np.ndarray) -> np.ndarray:
        """Full maps of rows at step k (host nodes in pattern node order, int64)."""
        return rows[:, :self.prep.k][:, self.inverse].astype(np.int64)


class _Probe:
    """A plain depth-first search, one partial map at a time, for the first map: a few
    microseconds per step where a numpy step costs tens, and never a pile of partial
    maps. The same checks as `Engine.candidates`, in Python; host neighbourhoods are
    read as the search reaches them."""

    def __init__(self, engine: Engine):
        self.engine = engine
        prep = engine.prep
        self.indptr = prep.host.indptr
        self.indices = prep.host.indices
        self.lists: dict[int, list[int]] = {}
        self.sets: dict[int, frozenset] = {}
        self.balls: dict[tuple[int, int], frozenset] = {}
        self.masks: list = [None] * prep.k
        p = prep.plan
        self.steps = [(p.parent[s], p.extra[s], p.less[s], prep.look[s])
                      for s in range(prep.k)]

    def near(self, v: int) -> list[int]:
        got = self.lists.get(v)
        if got is None:
            got = self.lists[v] = self.indices[self.indptr[v]:self.indptr[v + 1]].tolist()
        return got

    def near_set(self, v: int) -> frozenset:
        got = self.sets.get(v)
        if got is None:
            got = self.sets[v] = frozenset(self.near(v))
        return got

    def ball(self, v: int, radius: int) -> frozenset:
        """The host nodes within `radius` (>= 1) of v."""
        got = self.balls.get((v, radius))
        if got is None:
            if radius == 1:
                got = frozenset({v, *self.near(v)})
            else:
                inner = self.ball(v, radius - 1)
                ball = set(inner)
                for w in inner:
                    ball.update(self.near(w))
                got = frozenset(ball)
            self.balls[(v, radius)] = got
        return got

    def run(self, anchor: int, budget: int):
        """(the first map from `anchor` in step order or None, steps used, whether the
        anchor's whole search tree was seen)."""
        k = self.engine.prep.k
        image = [anchor]
        used = {anchor}
        options: list = [None] * (k + 1)
        steps = 0
        while image:
            s = len(image)
            if s == k:
                return tuple(image), steps, False
            parent, extra, less, look = self.steps[s]
            if options[s] is None:
                free = self.engine.free[s]
                options[s] = iter(self.near(image[parent]) if parent >= 0 or free is None
                                  else free.tolist())
            mask = self.masks[s]
            if mask is None:
                mask = self.masks[s] = self.engine.prep.masks[s].tobytes()
            for c in options[s]:
                steps += 1
                if c in used or not mask[c]:
                    continue
                ok = True
                for t in less:
                    if c <= image[t]:
                        ok = False
                        break
                if ok and extra:
                    around = self.near_set(c)
                    for t in extra:
                        if image[t] not in around:
                            ok = False
                            break
                if ok and look:
                    nearby = self.near(c)
                    for t, d in look:            # within d of image[t]: c, or one of its
                        reach = self.ball(image[t], d - 1)   # neighbours, within d - 1
                        if c not in reach and reach.isdisjoint(nearby):
                            ok = False
                            break
                if ok:
                    image.append(c)
                    used.add(c)
                    options[s + 1] = None
                    break
            else:
                options[s] = None
                used.discard(image.pop())
            if steps >= budget:
                return None, steps, False
        return None, steps, True


def _probe_anchors(engine: Engine, anchors: np.ndarray) -> list[int]:
    """A few anchors where a first map is likely: among up to PROBE_SAMPLE anchors spread
    over the list, those with the biggest balls of half the root's eccentricity (far from
    the chip's edges and holes)."""
    if not len(anchors):
        return []
    step = max(1, len(anchors) // PROBE_SAMPLE)
    sample = anchors[step // 2::step][:PROBE_SAMPLE]
    radius = max(1, (len(engine.prep.profile) - 1 + 1) // 2)
    sizes = layers(engine.prep.host, sample, radius, 2 * engine.prep.k + 64)[2]
    middle = len(sample) // 2
    rank = sorted(range(len(sample)), key=lambda i: (-int(sizes[i, -1]), abs(i - middle), i))
    return [int(sample[i]) for i in rank[:PROBE_ANCHORS]]


def grow(prep: Prepared, *, part: tuple[int, int] = (0, 1), chunk: int = 1 << 20,
         held: int = 1 << 24, probe: int | None = None,
         engine: Engine | None = None) -> Iterator[np.ndarray]:
    """The search itself (see `monomorphisms`).

    First a probe: a plain depth-first search from a few promising anchors (see
    `_probe_anchors`), at most `probe` steps in all (default 32 k + 512), for a first map
    in microseconds per step however many partial maps a wide search would pile up.
    Then every anchor in batches (256, then four times more each time), each batch's ball
    sizes worked out when the search reaches it, depth first over blocks of partial maps
    (numpy); the map the probe found is not yielded again, and anchors whose whole tree
    the probe saw are skipped. A block is split so that its extension holds at most
    `chunk` entries, and the pieces waiting on the stack hold at most about `held`
    entries in all (when they would hold more, the next splits make smaller pieces), so
    memory stays bounded (16 MiB of 2-byte entries by default, plus one block) however
    deep or wide the search grows. `engine` lets several searches of one `prep` share
    the tables an `Engine` builds."""
    k = prep.k
    if k == 0:
        yield np.zeros((1, 0), dtype=np.int64)
        return
    if engine is None:
        engine = Engine(prep)
    engine.reset()
    anchors = prep.start[part[0]::part[1]]
    budget = 32 * k + 512 if probe is None else probe
    seen: np.ndarray | None = None
    done: set[int] = set()
    if budget > 0:
        walker = _Probe(engine)
        for anchor in _probe_anchors(engine, anchors):
            image, steps, whole = walker.run(anchor, budget)
            budget -= steps
            engine.work += steps
            engine.reached = len(done) + 1
            if whole:
                done.add(anchor)
            if image is not None:
                seen = np.array(image, dtype=np.int64)
                yield engine.maps(seen.reshape(1, -1))
                break
            if budget <= 0:
                break
    if done:
        anchors = anchors[~np.isin(anchors, list(done))]
    size, taken = FIRST_ANCHORS, 0
    stack: list[tuple[int, np.ndarray]] = []
    waiting = quiet = 0
    while True:
        if not stack:
            if taken >= len(anchors):
                return
            batch = engine.anchors(anchors[taken:taken + size])
            taken += size
            engine.reached = len(done) + min(taken, len(anchors))
            size *= 4
            if len(batch):
                root = engine.root(batch)
                stack.append((1, root))
                waiting += root.size
            continue
        s, rows = stack.pop()
        waiting -= rows.size
        if quiet >= 1 << 16:
            quiet = 0
            yield np.zeros((0, k), dtype=np.int64)
        if s == k:
            if seen is not None:
                rows = rows[~(rows[:, :k] == seen).all(axis=1)]
            yield engine.maps(rows)
            continue
        fan = engine.fan(rows, s)
        total = int(fan.sum())
        room = max(chunk // 16, min(chunk, held - waiting))
        most = max(1, room // (rows.shape[1] + 1))      # candidates per piece
        if total > most and len(rows) > 1:            # split: bounded memory, depth first
            cut = np.searchsorted(np.cumsum(fan), np.arange(1, total // most + 2) * most)
            pieces = np.split(rows, np.unique(np.clip(cut, 1, len(rows) - 1)))
            stack.extend((s, piece) for piece in reversed(pieces) if len(piece))
            waiting += rows.size
            continue
        quiet += total + 64
        _, cand, grown, _ = engine.candidates(rows, s)
        if len(cand):
            out = engine.child(grown, cand, s)
            stack.append((s + 1, out))
            waiting += out.size
