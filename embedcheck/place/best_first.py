"""The best few subgraph monomorphisms by an additive cost, without listing the rest.

When a patch is much sparser than its chip it has millions of placements and nobody wants
them all, only the best few. This is a branch and bound over the matcher's partial maps
(`matcher.py`: same order, pruning, candidate masks and symmetry breaking): a map f of
the pattern's k nodes costs

    cost(f) = sum_j node_cost[j, f(j)] + sum_e edge_cost[e, arc(f(a_e), f(b_e))]

(e = (a_e, b_e) the pattern's edges; an arc is one direction of a host edge, numbered as
in `Host`), e.g. the fidelity product's terms as -log(1 - error) per chip qubit per patch
qubit and per coupler per interacting pair, weighted by how often each gate runs.

The bound (admissible: never above the cost of any completion): the cost so far, plus,
for every node still to map, the cheapest host node it can still reach, plus for every
edge still to close the cheapest arc it can still use. "Can still reach" is measured from
the anchor (the image of the first node): a node d steps from the root in the pattern
lands at most d steps from the anchor, so its minimum is taken over that ball (worked out
per anchor, by one breadth-first search per batch of anchors). Blocks of partial maps are
taken best bound first (a heap), the best children of a block first until `top` maps are
known (a dive, for a threshold to prune with), and whatever cannot beat the `top`-th best
map found is dropped. When the heap holds nothing below that threshold the result is
proven: no map outside it costs less than the last one in it. A budget (in work units:
candidates tried, so identical runs stop at the same place) stops the search early; the
result then carries the gap between the `top`-th cost found and the lowest bound left.
(Branch and bound: Land & Doig, Econometrica 28, 497 (1960); best-first order as in
Hart, Nilsson & Raphael's A*, IEEE Trans. SSC 4, 100 (1968); both cited from memory.)

One map per symmetry orbit: with `symmetries` (the pattern's automorphisms) and a cost
that does not change under them, the matcher's symmetry breaking leaves one map per orbit;
when the cost does change, every map is searched and each orbit is represented by its
cheapest map (found first, best first).

    >>> import numpy as np
    >>> from embedcheck.place.matcher import Host
    >>> line = Host.from_edges(5, [(0, 1), (1, 2), (2, 3), (3, 4)])   # a path of 5 nodes
    >>> node_cost = np.array([[5., 1., 1., 9., 9.], [5., 1., 1., 9., 9.]])
    >>> best = best_first(line, 2, [(0, 1)], node_cost=node_cost,
    ...                   edge_cost=np.zeros((1, 8)), top=2)
    >>> best.maps.tolist(), best.costs.tolist(), best.proven
    ([[1, 2], [2, 1]], [2.0, 2.0], True)
"""
from __future__ import annotations

import heapq
import itertools
import time
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .matcher import Engine, Host, bfs_distances, layers, prepare
from .symmetry import canonical_rows

__all__ = ["BestMaps", "best_first"]

BLOCK = 4096              # rows per block on the heap
HELD = 1 << 22           # rows held on the heap before it works depth first
ANCHOR_BATCH = 256       # anchors whose balls are worked out together


@dataclass(frozen=True, kw_only=True)
class BestMaps:
    """The best maps found, cheapest first, and how far they are proven.

    `maps[i, j]` is the host node of pattern node j in the i-th map. `proven`: no map
    (one per symmetry orbit) outside `maps` costs less than `costs[-1]`, and there are
    none at all past them when fewer than `top` came back. Otherwise (`stop_reason`
    'budget') `bound` is a lower bound on the cost of every map not in `maps`, and `gap`
    how much better than `costs[-1]` such a map could be (`costs[-1] - bound`, or inf
    when fewer than `top` were found)."""

    maps: np.ndarray
    costs: np.ndarray
    proven: bool
    stop_reason: str
    bound: float
    gap: float
    work: int
    orbits_merged: bool = True     # one map per symmetry orbit (False: no symmetries given)


def best_first(host: Host, k: int, edges: Sequence[tuple[int, int]], *,
               node_cost: np.ndarray, edge_cost: np.ndarray,
               candidates: Sequence[np.ndarray] | None = None,
               symmetries: Sequence[Sequence[int]] | None = None,
               top: int = 10, budget: int | None = None,
               deadline: float | None = None) -> BestMaps:
    """The `top` cheapest monomorphisms of the pattern (k nodes, `edges`) into `host`.

    `node_cost` has shape (k, host.n); `edge_cost` (len(edges), number of host arcs),
    row e giving the cost of pattern edge e = (a, b) on each arc f(a) -> f(b). Costs must
    not be NaN (use inf to forbid). `candidates[j]`, an optional boolean mask over host
    nodes, restricts pattern node j; `symmetries` are the pattern's automorphisms (one
    map per orbit comes back). `budget` caps the work (candidates tried); `deadline` (a
    `time.monotonic()` reading) stops it on the clock as well, as a budget stop."""
    edges = [(int(a), int(b)) for a, b in edges]
    node_cost = np.asarray(node_cost, dtype=float)
    edge_cost = np.asarray(edge_cost, dtype=float).reshape(len(edges), -1)
    if node_cost.shape != (k, host.n) or edge_cost.shape[1] != len(host.keys):
        raise ValueError(f"node_cost must have shape ({k}, {host.n}) and edge_cost "
                         f"({len(edges)}, {len(host.keys)})")
    if np.isnan(node_cost).any() or np.isnan(edge_cost).any():
        raise ValueError("costs must not be NaN (use inf to forbid a node or an arc)")
    if top < 1:
        raise ValueError("top must be at least 1")
    group = [tuple(int(x) for x in g) for g in (symmetries or [])]
    merge = len(group) > 1
    invariant = merge and _invariant(host, edges, node_cost, edge_cost, group)
    prep = prepare(host, k, edges, candidates=candidates,
                   symmetries=group if invariant else None)
    search = _Search(prep, edges, node_cost, edge_cost)
    search.invariant = invariant
    perms = np.array(group, dtype=np.int64).reshape(-1, k) if merge else None
    return search.run(top, budget, perms, orbits_merged=merge or not group, deadline=deadline)


def _invariant(host, edges, node_cost, edge_cost, group) -> bool:
    """Does every symmetry keep every node's and edge's cost row (arcs reversed where the
    symmetry turns an edge round)?"""
    index = {e: i for i, e in enumerate(edges)}
    reverse = _reverse_arcs(host)
    for g in group:
        if not np.array_equal(node_cost[list(g)], node_cost):
            return False
        for e, (a, b) in enumerate(edges):
            if (g[a], g[b]) in index:
                other = edge_cost[index[(g[a], g[b])]]
            elif (g[b], g[a]) in index:
                other = edge_cost[index[(g[b], g[a])]][reverse]
            else:
                return False
            if not np.array_equal(other, edge_cost[e]):
                return False
    return True


def _reverse_arcs(host: Host) -> np.ndarray:
    """Index of arc b -> a for every arc a -> b."""
    src = np.repeat(np.arange(host.n), host.degree)
    return host.arcs(host.indices, src)


class _Search:
    def __init__(self, prep, edges, node_cost, edge_cost):
        self.prep = prep
        self.engine = Engine(prep)
        p, k = prep.plan, prep.k
        self.k = k
        order = p.order
        pos = {v: s for s, v in enumerate(order)}
        reverse = _reverse_arcs(prep.host)
        rows: dict[tuple[int, int], np.ndarray] = {}
        for e, (a, b) in enumerate(edges):           # oriented earlier -> later node
            if a == b:
                continue
            row = edge_cost[e] if pos[a] < pos[b] else edge_cost[e][reverse]
            key = (min(pos[a], pos[b]), max(pos[a], pos[b]))
            rows[key] = rows[key] + row if key in rows else row
        self.edge_rows = [(t, s, row) for (t, s), row in sorted(rows.items())]
        # per step, the cost rows of the edges it closes: parent first, then extra
        self.closes = []
        for s in range(k):
            earlier = ([p.parent[s]] if p.parent[s] >= 0 else []) + list(p.extra[s])
            self.closes.append([rows[(t, s)] for t in earlier])
        self.node_rows = [node_cost[v] for v in order]
        self.reach = np.full(k, k, dtype=np.int64)   # pattern distance from the root
        nbrs: list[set[int]] = [set() for _ in range(k)]
        for a, b in edges:
            if a != b:
                nbrs[a].add(b)
                nbrs[b].add(a)
        dist = bfs_distances(nbrs, order[0]) if k else {}
        for s, v in enumerate(order):
            self.reach[s] = dist.get(v, k)
        # global minima (steps outside the root's part, and anchors not yet looked at)
        masks = prep.masks
        self.node_floor = np.array([_masked_min(self.node_rows[s], masks[s])
                                    for s in range(k)])
        self.edge_floor = [[float(r.min(initial=np.inf)) for r in self.closes[s]]
                           for s in range(k)]
        self.rest = np.full((prep.host.n, k + 1), np.inf)
        # per host node / coupler, the least any pattern node / edge of the root's part
        # costs there (for the distinct-nodes bound)
        inside = [s for s in range(k) if self.reach[s] < k]
        self.node_lower = np.full(prep.host.n, np.inf)
        for s in inside:
            self.node_lower = np.minimum(self.node_lower,
                                         np.where(masks[s], self.node_rows[s], np.inf))
        self.coupler_lower = np.full(len(prep.host.keys), np.inf)
        for t, s, row in self.edge_rows:
            if self.reach[t] < k and self.reach[s] < k:
                self.coupler_lower = np.minimum(self.coupler_lower,
                                                np.minimum(row, row[reverse]))
        self.invariant = False
        self.frontier = _Frontier(self)

    # bounds -----------------------------------------------------------------------
    def anchor_bounds(self, anchors: np.ndarray) -> None:
        """rest[a, s]: the least the steps s.. (and the edges they close) can cost around
        anchor a. Two bounds, the larger kept, for nodes and for edges apart: each one
        at its cheapest in the ball its pattern distance from the root allows; or, since
        the nodes left need as many distinct host nodes of the root's ball (and the
        edges as many distinct couplers), the sum of that many of its cheapest."""
        prep, k, host = self.prep, self.k, self.prep.host
        part = self.reach < k
        radius = int(self.reach[part].max(initial=0))
        owner, node, sizes = layers(host, anchors, radius, None)
        m = len(anchors)
        if sizes.shape[1] <= radius:                 # every ball stopped growing early
            sizes = np.concatenate([sizes, np.repeat(sizes[:, -1:], radius + 1 -
                                                     sizes.shape[1], axis=1)], axis=1)
        first = np.concatenate([[0], np.cumsum(sizes[:, -1])[:-1]])
        rank = np.arange(len(owner)) - first[owner]
        dist = (rank[:, None] >= sizes[owner]).sum(axis=1)        # breadth-first distance
        nodes = np.zeros((m, k))                     # per step, inside the root's part
        nodes_other = np.zeros(k)                    # per step, other parts (global)
        for s in range(k):
            if not part[s]:
                nodes_other[s] = self.node_floor[s]
                continue
            vals = np.where(prep.masks[s][node] & (dist <= self.reach[s]),
                            self.node_rows[s][node], np.inf)
            nodes[:, s] = np.minimum.reduceat(vals, first) if len(vals) else np.inf
        # arcs inside the balls: x -> y with both ends reached
        fan = host.degree[node]
        who = np.repeat(owner, fan)
        tail = np.repeat(dist, fan)
        arc = _ragged_arcs(host, node, fan)
        keys = owner * host.n + node
        order = np.argsort(keys)
        want = who * host.n + host.indices[arc]
        at = np.minimum(np.searchsorted(keys[order], want), len(keys) - 1)
        inside = keys[order][at] == want
        head = np.where(inside, dist[order][at], radius + 1)
        per_owner = np.bincount(who, minlength=m)
        arcs_first = np.concatenate([[0], np.cumsum(per_owner)[:-1]])
        edges = np.zeros((m, k))
        edges_other = np.zeros(k)
        edges_left = np.zeros(k + 1, dtype=np.int64)
        p = self.prep.plan
        for s in range(k):
            earlier = ([p.parent[s]] if p.parent[s] >= 0 else []) + list(p.extra[s])
            for row, t in zip(self.closes[s], earlier, strict=True):
                if not (part[s] and part[t]):
                    edges_other[s] += float(row.min(initial=np.inf))
                    continue
                edges_left[s] += 1
                ok = (tail <= self.reach[t]) & (head <= self.reach[s])
                vals = np.where(ok, row[arc], np.inf)
                low = np.minimum.reduceat(vals, np.minimum(arcs_first, len(vals) - 1)) \
                    if len(vals) else np.full(m, np.inf)
                edges[:, s] += np.where(per_owner > 0, low, np.inf)
        # the distinct-nodes and distinct-couplers bounds, as prefix sums per anchor
        left = np.concatenate([np.cumsum(part[::-1])[::-1], [0]])     # part nodes left
        edges_left = np.cumsum(edges_left[::-1])[::-1]                 # part edges left
        cheapest_nodes = _cheapest_sums(owner, self.node_lower[node], sizes[:, -1],
                                        int(left[0]))
        one_way = inside & (host.indices[arc] > np.repeat(node, fan))  # each coupler once
        cheapest_couplers = _cheapest_sums(who[one_way], self.coupler_lower[arc[one_way]],
                                           np.bincount(who[one_way], minlength=m),
                                           int(edges_left[0]))
        rest = np.zeros((m, k + 1))
        node_part = _suffix(nodes)
        edge_part = _suffix(edges)
        rows = np.arange(m)[:, None]
        rest += np.maximum(node_part, cheapest_nodes[rows, left[None, :]])
        rest += np.maximum(edge_part, cheapest_couplers[rows, edges_left[None, :]])
        rest += _suffix(nodes_other[None, :]) + _suffix(edges_other[None, :])
        self.rest[anchors] = rest

    # the search ---------------------------------------------------------------------
    def run(self, top, budget, perms, *, orbits_merged, deadline=None) -> BestMaps:
        prep, engine, k = self.prep, self.engine, self.k
        if k == 0:
            return BestMaps(maps=np.zeros((1, 0), dtype=np.int64), costs=np.zeros(1),
                            proven=True, stop_reason="complete", bound=np.inf, gap=0.0,
                            work=0, orbits_merged=orbits_merged)
        heap: list = []
        count = itertools.count()
        floor = float(self.node_floor.sum() + sum(sum(f) for f in self.edge_floor))
        anchors = prep.start
        for lo in range(0, len(anchors), ANCHOR_BATCH):
            heapq.heappush(heap, (floor, next(count), None, None,
                                  anchors[lo:lo + ANCHOR_BATCH]))
        best: dict = {}                 # orbit key -> (cost, map): the `top` best so far
        work = 0
        held = 0
        dive: list = []                 # blocks to take before the heap (the dive)
        stop = "complete"

        def threshold():
            return max(best.values())[0] if len(best) >= top else np.inf

        while heap or dive:
            if dive:
                bound, _, rows, g, s = dive.pop()
            else:
                bound, _, rows, g, payload = heapq.heappop(heap)
                s = payload
                if rows is None:                     # a batch of anchors to look at
                    self.anchor_bounds(payload)
                    base = self.node_rows[0][payload]
                    keep = prep.masks[0][payload] & np.isfinite(base)
                    a = payload[keep]
                    self._push(heap, count, engine.root(a), base[keep], threshold())
                    continue
            held -= len(rows)
            tau = threshold()
            if bound > tau + _slack(tau):
                if not dive:
                    break                            # nothing left can beat the threshold
                continue
            if (budget is not None and work >= budget) or \
                    (deadline is not None and time.monotonic() > deadline):
                heapq.heappush(heap, (bound, next(count), rows, g, s))
                stop = "budget"
                break
            work += int(engine.fan(rows, s).sum())
            which, cand, grown, arcs = engine.candidates(rows, s, arcs=True)
            cost = g[which] + self.node_rows[s][cand]
            for row, arc in zip(self.closes[s], arcs, strict=True):
                cost = cost + row[arc]
            lower = cost + self.rest[grown[:, 0], s + 1]
            keep = (lower <= tau + _slack(tau)) & np.isfinite(lower)
            if s + 1 < k and keep.any() and _Frontier.enabled:   # tighter bound
                which, cand, grown, cost, lower = (which[keep], cand[keep], grown[keep],
                                                   cost[keep], lower[keep])
                lower = np.maximum(lower, cost + self.frontier.rest(grown, cand, s + 1))
                keep = (lower <= tau + _slack(tau)) & np.isfinite(lower)
            which, cand, grown, cost, lower = (which[keep], cand[keep], grown[keep],
                                               cost[keep], lower[keep])
            if not len(cand):
                continue
            out = engine.child(grown, cand, s)
            if s + 1 == k:
                order = np.argsort(cost, kind="stable")
                self._collect(out[order], cost[order], best, top, perms)
                continue
            order = np.argsort(lower, kind="stable")
            out, cost, lower = out[order], cost[order], lower[order]
            blocks = [(float(lower[lo]), next(count), out[lo:lo + BLOCK],
                       cost[lo:lo + BLOCK], s + 1) for lo in range(0, len(out), BLOCK)]
            held += len(out)
            if len(best) < top or held > HELD:       # dive: best child first
                dive.extend(reversed(blocks))
            else:
                for block in blocks:
                    heapq.heappush(heap, block)
        rest = [b[0] for b in itertools.chain(heap, dive)]
        bound = min(rest) if stop == "budget" and rest else np.inf
        found = sorted(best.values())
        maps = np.array([m for _, m in found], dtype=np.int64).reshape(-1, k)
        costs = np.array([c for c, _ in found])
        if stop == "budget":
            gap = float(costs[-1] - bound) if len(costs) >= top else np.inf
            gap = max(gap, 0.0)
        else:
            gap = 0.0
        return BestMaps(maps=maps, costs=costs, proven=stop == "complete",
                        stop_reason=stop, bound=float(bound), gap=gap, work=work,
                        orbits_merged=orbits_merged)

    def _push(self, heap, count, rows, g, tau):
        lower = g + self.rest[rows[:, 0], 1]
        keep = (lower <= tau + _slack(tau)) & np.isfinite(lower)
        rows, g, lower = rows[keep], g[keep], lower[keep]
        order = np.argsort(lower, kind="stable")
        rows, g, lower = rows[order], g[order], lower[order]
        for lo in range(0, len(rows), BLOCK):
            heapq.heappush(heap, (float(lower[lo]), next(count), rows[lo:lo + BLOCK],
                                  g[lo:lo + BLOCK], 1))

    def _collect(self, rows, cost, best, top, perms):
        """Complete maps into `best` (orbit key -> (cost, map)), keeping the `top`
        cheapest orbits, each at its cheapest map so far (ties broken by the map)."""
        maps = self.engine.maps(rows)
        keys = canonical_rows(maps, perms) if perms is not None else maps
        if self.invariant:               # every map of an orbit costs the same: show the
            maps = keys                  # lexicographically smallest, as find does
        for m, key, c in zip(maps.tolist(), keys.tolist(), cost.tolist(), strict=True):
            key, item = tuple(key), (c, tuple(m))
            if key in best:
                best[key] = min(best[key], item)
            elif len(best) < top:
                best[key] = item
            else:
                worst = max(best, key=best.get)
                if item < best[worst]:
                    del best[worst]
                    best[key] = item


class _Frontier:
    """A bound that tightens as the map grows: a node still to map lies within d steps of
    the image of any mapped node d steps from it in the pattern, so it costs at least
    the cheapest host node in that ball; an edge still to close costs at least the
    cheapest arc leaving the ball of its nearer end. Per host node and radius these
    minima are worked out once (a min-filter over the host, radius by radius); a row's
    bound is then a few lookups per step, at the images of the nearest mapped nodes."""

    enabled = True

    def __init__(self, search: "_Search"):
        prep, k = search.prep, search.k
        host = prep.host
        self.k = k
        order = prep.plan.order
        nbrs: list[set[int]] = [set() for _ in range(k)]
        for t, s, _ in search.edge_rows:
            nbrs[t].add(s)
            nbrs[s].add(t)
        self.dist = np.full((k, k), k + 1, dtype=np.int64)   # pattern distance, steps
        for a in range(k):
            self.dist[a, a] = 0
            front, d = [a], 0
            while front:
                d += 1
                nxt = []
                for v in front:
                    for w in nbrs[v]:
                        if self.dist[a, w] > k:
                            self.dist[a, w] = d
                            nxt.append(w)
                front = nxt
        finite = self.dist[self.dist <= k]
        self.radius = int(finite.max(initial=0))
        self.host = host
        self.tables: dict = {}
        self.plans: dict = {}
        self.node_keys: dict = {}
        self.edge_keys: dict = {}
        self.search = search
        reverse = _reverse_arcs(host)
        self.reverse = reverse
        self._order = order

    def _dilated(self, key, make) -> list:
        """make(), then its minimum over balls of radius 1, 2, ... (cached by key)."""
        got = self.tables.get(key)
        if got is None:
            host = self.host
            got = [make()]
            have = host.degree > 0
            starts = host.indptr[:-1][have]
            for _ in range(self.radius):
                cur = got[-1]
                around = np.full(host.n, np.inf)
                if len(host.indices):
                    around[have] = np.minimum.reduceat(cur[host.indices], starts)
                got.append(np.minimum(cur, around))
            self.tables[key] = got
        return got

    def _node_table(self, s: int) -> list:
        search = self.search
        mask = search.prep.masks[s]
        row = search.node_rows[s]
        key = self.node_keys.get(s)
        if key is None:                  # alike nodes (same costs, same mask) share one
            key = self.node_keys[s] = ("node", row.tobytes(), id(mask))
        return self._dilated(key, lambda: np.where(mask, row, np.inf))

    def _edge_table(self, index: int, tail_side: bool) -> list:
        def make():
            row = self.search.edge_rows[index][2]
            host = self.host
            have = host.degree > 0
            base = np.full(host.n, np.inf)
            values = row if tail_side else row[self.reverse]
            if len(values):
                base[have] = np.minimum.reduceat(values, host.indptr[:-1][have])
            return base
        key = self.edge_keys.get((index, tail_side))
        if key is None:
            row = self.search.edge_rows[index][2]
            key = self.edge_keys[(index, tail_side)] = ("edge", row.tobytes(), tail_side)
        return self._dilated(key, make)

    def plan(self, mapped: int):
        """For rows with `mapped` steps done: [(array over host nodes, column)] whose
        lookups at the rows' images sum to the bound, and a constant part."""
        got = self.plans.get(mapped)
        if got is not None:
            return got
        k = self.k
        parts: dict = {}
        constant = 0.0
        done = np.arange(mapped)

        def nearest(step):
            if not mapped:
                return None, None
            d = self.dist[step, :mapped]
            best = int(d.min())
            if best > k:
                return None, None
            ref = int(done[d == best].max())
            return best, ref

        def add(table, radius, ref):
            nonlocal constant
            if ref is None:
                constant += float(table[-1].min(initial=np.inf))
                return
            arr = table[radius]                        # one array per column read
            parts[ref] = parts[ref] + arr if ref in parts else arr.copy()

        for s in range(mapped, k):
            radius, ref = nearest(s)
            add(self._node_table(s), radius, ref)
        for index, (t, s, _) in enumerate(self.search.edge_rows):
            if s < mapped:
                continue                              # closed already
            ends = []
            for step, tail_side in ((t, True), (s, False)):
                if step < mapped:
                    ends.append((0, step, tail_side))
                else:
                    radius, ref = nearest(step)
                    if ref is not None:
                        ends.append((radius, ref, tail_side))
            if not ends:
                add(self._edge_table(index, True), None, None)
                continue
            radius, ref, tail_side = min(ends)
            add(self._edge_table(index, tail_side), radius, ref)
        got = ([(arr, ref) for ref, arr in sorted(parts.items())], constant)
        self.plans[mapped] = got
        return got

    def rest(self, grown: np.ndarray, cand: np.ndarray, mapped: int) -> np.ndarray:
        """Lower bound on what steps `mapped`.. and the open edges still cost, for rows
        whose first mapped - 1 images are `grown` and whose last is `cand`."""
        parts, constant = self.plan(mapped)
        out = np.full(len(cand), constant)
        last = mapped - 1
        for arr, ref in parts:
            out += arr[cand] if ref == last else arr[grown[:, ref]]
        return out


def _suffix(steps: np.ndarray) -> np.ndarray:
    """Per row, the sums of columns s.. for s = 0 .. width (the last one 0)."""
    out = np.zeros((steps.shape[0], steps.shape[1] + 1))
    out[:, :-1] = np.cumsum(steps[:, ::-1], axis=1)[:, ::-1]
    return out


def _cheapest_sums(owner: np.ndarray, values: np.ndarray, counts: np.ndarray,
                   most: int) -> np.ndarray:
    """out[i, j]: the sum of the j smallest `values` of group i (`owner` sorted, group i
    holding counts[i] values), j = 0 .. most; inf past the group's size."""
    m = len(counts)
    out = np.full((m, most + 1), np.inf)
    out[:, 0] = 0.0
    if not len(values) or not most:
        return out
    order = np.lexsort((values, owner))
    ranked = values[order]
    infinite = np.isinf(ranked)              # kept apart: inf - inf would be NaN
    total = np.cumsum(np.where(infinite, 0.0, ranked))
    blocked = np.cumsum(infinite)
    start = np.concatenate([[0], np.cumsum(counts)[:-1]])
    j = np.arange(1, most + 1)
    at = np.minimum(start[:, None] + j[None, :] - 1, len(total) - 1)
    ok = j[None, :] <= counts[:, None]
    before = np.where(start > 0, total[np.maximum(start - 1, 0)], 0.0)
    blocked_before = np.where(start > 0, blocked[np.maximum(start - 1, 0)], 0)
    sums = total[at] - before[:, None]
    sums[blocked[at] - blocked_before[:, None] > 0] = np.inf
    out[:, 1:] = np.where(ok, sums, np.inf)
    return out


def _masked_min(values: np.ndarray, mask: np.ndarray) -> float:
    return float(values[mask].min(initial=np.inf))


def _ragged_arcs(host: Host, nodes: np.ndarray, fan: np.ndarray) -> np.ndarray:
    total = int(fan.sum())
    if not total:
        return np.zeros(0, dtype=np.int64)
    ends = np.cumsum(fan)
    return np.arange(total) - np.repeat(ends - fan - host.indptr[nodes], fan)


def _slack(tau: float) -> float:
    """Rounding room when comparing a bound with the threshold (sums in another order)."""
    return 1e-9 * (1.0 + abs(tau)) if np.isfinite(tau) else 0.0
