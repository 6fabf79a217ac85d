"""A fast, deterministic estimate of the decoded (matching) logical error of a noisy circuit.

What
----
`decoded_logical_estimate(dem)` estimates, from a detector error model (DEM) that stim
built with `decompose_errors=True`, the probability that minimum-weight perfect matching
(MWPM, as pymatching runs it on that DEM) mispredicts the logical observable in one shot.
It reads the DEM only: no sampling, and the same DEM always gives the same value.

    value = sum of p_m over single mechanisms m that the decoder gets wrong
          + sum of q(U) over edge sets U (2 <= |U| <= order) on short logical paths
            that the decoder gets wrong

- A *mechanism* is one `error(p)` line of the DEM (what stim's sampler draws).
- The *decoder graph* is the one pymatching builds from the DEM: an edge per graph-like
  component (two detectors, or one detector and the boundary); parallel components
  merged as independent, p = p1 (1 - p2) + p2 (1 - p1), keeping the observables of the
  first one seen; weight log((1 - p) / p). (Checked against pymatching's own graph by
  the tests, not taken from its documentation.)
- A *logical path* joins the boundary to itself (or, with no boundary, closes a cycle)
  and flips the observable an odd number of times. The fewest edges on one is the graph
  distance L. The *order* is k = ceil(d / 2) with d the larger of L and stim's
  graph-like distance (`shortest_graphlike_error`, which counts whole mechanisms): the
  fewest faults that matching resolves the wrong way on a path of length d. Every
  logical path of up to 2k edges is listed, and every subset U of 2..k of its edges is
  a candidate.
- q(U) is the probability, to lowest order, that two or more distinct mechanisms flip
  exactly the edges of U: the sum over set partitions of U into at least two blocks of
  the product of the block rates, a block's rate being the summed probability of the
  mechanisms that meet U in exactly that block. A mechanism that flips several edges of
  U at once (a hook error, a decomposed hyperedge) is one fault, as the sampler draws
  it. A mechanism with one or two detection events whose direct edge exists with the
  same observables flips that edge, whatever decomposition stim suggested.
- "The decoder gets it wrong": exact MWPM on the detection events (of U, or of a single
  mechanism's whole syndrome): the least summed shortest-path weight over all pairings
  of the events with each other or with the boundary (shortest paths and their
  observable parities by Floyd-Warshall), against the true observables. This is what
  pymatching computes up to ties between matchings of equal weight; syndromes with more
  than `max_events` events, edges with p >= 1/2 and very large graphs go to pymatching.

Why this method
---------------
Placements of one patch give DEMs whose decoder graphs have one shape and different
probabilities, so the enumeration (paths, sets, their syndromes) is cached by that
shape, and each further DEM costs a Floyd-Warshall, a few numpy passes over the sets
and a small exact matching, without calling the decoder. Counting sets of decoder-graph
edges rather than tuples of mechanisms keeps the count at 4e4-1.5e5 sets at distance 5
(tuples of three mechanisms number in the millions), while the block rates keep
correlated mechanisms exact to first order. The failure test is the decoder's own
decision with the DEM's weights, so non-uniform noise is judged as matching judges it:
a short path of unlikely faults against a long one of likely faults.

Limitations
-----------
- Leading order: each set is decided on its own syndrome (other faults of the same shot
  and the off-set parts of a hyperedge are not seen), and a pair of faults reachable
  through several sets counts once per set. On stim's uniform-noise rotated surface code
  (d = 3) the value was about 13% above the exact leading order (every pair of
  mechanisms decoded on its full syndrome); near threshold (logical errors of 10% and
  more) it is a ranking figure, not a probability: 1.7-2.5x the sampled rate on the
  surface code at 10-15%, more on larger codes (measured by the research prototype).
- With the cache, all DEMs of one decoder-graph shape share the order and the
  enumeration of the first one seen.
- Failing sets that do not lie on a logical path of at most 2k edges are missed.
- The cost grows steeply with distance: at d = 7 the sets exceed the default budget. A
  budget that cuts the enumeration short gives a partial sum, and `complete` says so.

Sources
-------
- Detector error models: Gidney, "Stim: a fast stabilizer circuit simulator", Quantum 5,
  497 (2021).
- Matching decoder: Higgott & Gidney, "Sparse Blossom: correcting a million errors per
  core second with minimum-weight matching", Quantum 9, 1600 (2025) (from memory); MWPM
  for surface codes and failure along logical chains: Dennis, Kitaev, Landahl & Preskill,
  "Topological quantum memory", J. Math. Phys. 43, 4452 (2002) (from memory).
- Leading-order logical error from the fewest faults along minimum-weight logical paths,
  p_L ~ (number of such fault sets) p^ceil(d/2): Fowler, Mariantoni, Martinis & Cleland,
  Phys. Rev. A 86, 032324 (2012); Watson & Barrett, New J. Phys. 16, 093045 (2014)
  (both from memory).
- Floyd-Warshall shortest paths: Floyd, Commun. ACM 5, 345 (1962) (from memory).

    >>> import stim
    >>> circuit = stim.Circuit.generated("surface_code:rotated_memory_z", distance=3,
    ...     rounds=3, after_clifford_depolarization=0.001, before_measure_flip_probability=0.001)
    >>> e = decoded_logical_estimate(circuit.detector_error_model(decompose_errors=True))
    >>> e.order, e.distance, e.complete, e == decoded_logical_estimate(
    ...     circuit.detector_error_model(decompose_errors=True))
    (2, 3, True, True)
    >>> 1e-5 < e.value < 1e-3
    True
"""
from __future__ import annotations

import hashlib
import itertools
import re
from collections import OrderedDict, deque
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["DecodedEstimate", "clear_estimate_cache", "decoded_logical_estimate",
           "decoder_edges", "match_few_events"]


@dataclass(frozen=True, kw_only=True)
class DecodedEstimate:
    """The estimate (`value`) and what it is made of (see the module docstring)."""

    value: float                  # estimated probability that matching mispredicts
    single: float                 # part of `value` from single mechanisms
    multiple: float               # part from edge sets flipped by two or more mechanisms
    order: int                    # largest edge-set size examined (ceil(d/2))
    distance: int | None          # decoder-graph distance in edges (None: no logical path)
    circuit_distance: int | None  # stim's shortest graph-like error (whole mechanisms)
    mechanisms: int               # error mechanisms in the DEM
    failing_mechanisms: int       # single mechanisms the decoder gets wrong
    paths: int                    # logical paths listed
    sets: int                     # edge sets examined
    failing_sets: int             # edge sets the decoder gets wrong
    complete: bool                # False: a path or set budget cut the enumeration short
    fallback_decodes: int         # syndromes decided by pymatching instead
    cached: bool = field(default=False, compare=False)   # enumeration came from the cache


def decoded_logical_estimate(dem: Any, *, order: int | None = None, max_paths: int = 200_000,
                             max_sets: int = 400_000, max_events: int = 8,
                             cache: bool = True) -> DecodedEstimate:
    """Deterministic leading-order estimate of matching's logical error on `dem`.

    `dem`: a `stim.DetectorErrorModel` built with `decompose_errors=True` (every
    component touches at most two detectors). `order`: largest edge-set size (default
    ceil(d/2), see the module docstring). `max_paths`, `max_sets`: budgets of the
    enumeration (`complete` is False when one cut it short). `max_events`: largest
    syndrome the built-in exact matcher decides (larger ones go to pymatching). `cache`:
    reuse the parse and the enumeration for DEMs of the same shape (bounded caches).
    Raises `ValueError` for a component with more than two detectors.
    """
    text = str(dem.flattened())
    probs = np.array(_PROB.findall(text), dtype=float)
    if not probs.size or not np.any(probs > 0):
        return DecodedEstimate(value=0.0, single=0.0, multiple=0.0, order=order or 0,
                               distance=None, circuit_distance=None, mechanisms=int(probs.size),
                               failing_mechanisms=0, paths=0, sets=0, failing_sets=0,
                               complete=True, fallback_decodes=0)
    shape = hashlib.sha1(_PROB.sub("error", text).encode()).hexdigest()
    skeleton = _SKELETONS.get(shape) if cache else None
    if skeleton is None:
        skeleton = _Skeleton(text, dem.num_detectors, dem.num_observables)
        if cache:
            _remember(_SKELETONS, shape, skeleton, _SKELETON_CACHE)
    key = (skeleton.signature, order, max_paths, max_sets)
    structure = _STRUCTURES.get(key) if cache else None
    cached = structure is not None
    if structure is None:
        structure = _Structure(skeleton, order, max_paths, max_sets, _circuit_distance(dem))
        if cache:
            _remember(_STRUCTURES, key, structure, _STRUCTURE_CACHE)
    return structure.evaluate(skeleton, shape if cache else None, probs, dem, max_events,
                              cached)


def clear_estimate_cache() -> None:
    """Forget every cached parse and enumeration (they are bounded; this frees them now)."""
    _SKELETONS.clear()
    _STRUCTURES.clear()
    _TARGETS.clear()


def decoder_edges(dem: Any) -> dict[tuple[int, int], tuple[float, int]]:
    """The decoder graph of `dem` as the estimate sees it: (u, v) -> (merged probability,
    observable mask), with v = `dem.num_detectors` for the boundary (for tests against
    pymatching's own graph)."""
    skeleton, structure, probs = _parts(dem)
    pe = structure.edge_probabilities(skeleton, probs)
    return {(int(u), int(v)): (float(p), int(o))
            for u, v, p, o in zip(structure.us, structure.vs, pe, structure.obs, strict=True)}


def match_few_events(dem: Any, events: Sequence[Sequence[int]]) -> np.ndarray:
    """Observable mask that exact MWPM predicts for each syndrome in `events` (lists of
    detection events, each of the same length, at most 12), by the estimate's own
    matcher (for tests against pymatching's decisions)."""
    skeleton, structure, probs = _parts(dem)
    pe = structure.edge_probabilities(skeleton, probs)
    with np.errstate(divide="ignore"):
        weights = np.log((1.0 - pe) / pe)
    rows = np.array(events, dtype=np.int64)
    if rows.ndim != 2 or rows.shape[1] > 12:
        raise ValueError("give syndromes of one length, at most 12 events")
    return _Decoder(structure, weights, False, dem, max_events=12).exact(rows)


# --------------------------------------------------------------------------------------
# Parsing. A DEM's *shape* is its flattened text without the probabilities; the parse is
# kept per shape (by digest). Placements of one patch may differ in shape (stim
# decomposes a few hyperedges differently when probabilities differ) but share the
# decoder graph's shape, which is what the enumeration (`_Structure`) is cached by.

_PROB = re.compile(r"^error\(([^)]*)\)", re.M)
_SKELETONS: OrderedDict[str, _Skeleton] = OrderedDict()
_STRUCTURES: OrderedDict[Any, _Structure] = OrderedDict()
_TARGETS: dict[str, tuple[Any, ...]] = {}
_SKELETON_CACHE, _STRUCTURE_CACHE, _TARGET_CACHE = 32, 4, 200_000
_FLOYD_LIMIT = 3000          # detectors in one component: beyond, decisions go to pymatching


def _remember(store: OrderedDict, key: Any, value: Any, size: int) -> None:
    store[key] = value
    store.move_to_end(key)
    while len(store) > size:
        store.popitem(last=False)


def _parts(dem: Any) -> tuple[_Skeleton, _Structure, np.ndarray]:
    text = str(dem.flattened())
    probs = np.array(_PROB.findall(text), dtype=float)
    skeleton = _Skeleton(text, dem.num_detectors, dem.num_observables)
    return skeleton, _Structure(skeleton, 1, 10**6, 10**6, None), probs


def _parse_targets(text: str) -> tuple[Any, ...]:
    got = _TARGETS.get(text)
    if got is None:
        if len(_TARGETS) >= _TARGET_CACHE:
            _TARGETS.clear()
        got = _TARGETS[text] = _parse_targets_uncached(text)
    return got


def _parse_targets_uncached(text: str) -> tuple[Any, ...]:
    """(components as (detectors, observable mask), detection events, observable mask)."""
    comps: list[tuple[tuple[int, ...], int]] = []
    dets: list[int] = []
    obs = 0
    for tok in text.split():
        if tok == "^":
            comps.append((tuple(sorted(dets)), obs))
            dets, obs = [], 0
        elif tok[0] == "D":
            detector = int(tok[1:])
            if detector in dets:
                dets.remove(detector)
            else:
                dets.append(detector)
        elif tok[0] == "L":
            obs ^= 1 << int(tok[1:])
        else:
            raise ValueError(f"unexpected target {tok!r} in a detector error model")
    comps.append((tuple(sorted(dets)), obs))
    for members, _ in comps:
        if len(members) > 2:
            raise ValueError("an error flips more than two detectors in one component; build "
                             "the model with decompose_errors=True (matching needs graph-like "
                             f"components): {text.strip()[:120]}")
    events: set[int] = set()
    total = 0
    for members, o in comps:
        events.symmetric_difference_update(members)
        total ^= o
    return tuple(comps), tuple(sorted(events)), total


class _Skeleton:
    """Everything about a DEM but its probabilities (read from its flattened text)."""

    def __init__(self, text: str, n: int, n_obs: int) -> None:
        self.n, self.n_obs = n, n_obs
        edge_index: dict[tuple[int, int], int] = {}
        edge_obs: list[int] = []
        inc_m: list[int] = []
        inc_e: list[int] = []
        events: list[tuple[int, ...]] = []
        mech_obs: list[int] = []
        mech_edges: list[list[int]] = []
        i = -1
        for line in text.splitlines():
            if not line.startswith("error("):
                continue
            i += 1
            comps, ev, total = _parse_targets(line[line.index(")") + 1:])
            events.append(ev)
            mech_obs.append(total)
            es = []
            for dets, o in comps:
                if not dets:
                    continue
                ek = dets if len(dets) == 2 else (dets[0], n)
                e = edge_index.get(ek)
                if e is None:
                    e = edge_index[ek] = len(edge_obs)
                    edge_obs.append(o)
                inc_m.append(i)
                inc_e.append(e)
                es.append(e)
            mech_edges.append(es)
        # What each mechanism flips, as decoder-graph edges, for the block rates: one with
        # one or two detection events and a direct edge of the same observables is that
        # edge (stim may split a two-event error into two boundary edges, which would make
        # it look like two boundary faults); otherwise its components.
        cov_m: list[int] = []
        cov_e: list[int] = []
        cover: list[list[int]] = []
        for j, (ev, total, es) in enumerate(zip(events, mech_obs, mech_edges, strict=True)):
            direct = None
            if len(ev) == 2:
                direct = edge_index.get((ev[0], ev[1]))
            elif len(ev) == 1:
                direct = edge_index.get((ev[0], n))
            if direct is not None and edge_obs[direct] == total:
                es = [direct]
            cover.append(es)
            cov_m.extend([j] * len(es))
            cov_e.extend(es)
        self.cover = cover
        self.cov_m = np.array(cov_m, dtype=np.int64)
        self.cov_e = np.array(cov_e, dtype=np.int64)
        self.mechanisms = i + 1
        self.edge_keys = list(edge_index)
        self.edge_obs = edge_obs
        self.inc_m = np.array(inc_m, dtype=np.int64)
        self.inc_e = np.array(inc_e, dtype=np.int64)
        self.mech_groups = _group_events(events)
        self.mech_obs = np.array(mech_obs, dtype=np.int64)
        self.signature = (n, n_obs, tuple(sorted(zip(self.edge_keys, edge_obs, strict=True))))


# --------------------------------------------------------------------------------------
# The enumeration: logical paths, edge sets and their syndromes (graph shape only).

class _Structure:
    def __init__(self, skeleton: _Skeleton, order: int | None, max_paths: int, max_sets: int,
                 circuit_distance: int | None) -> None:
        n = skeleton.n
        self.n = n
        keys = sorted(zip(skeleton.edge_keys, skeleton.edge_obs, strict=True))  # canonical
        self.edge_id = {k: i for i, (k, _) in enumerate(keys)}
        self.E = len(keys)
        self.us = np.array([k[0] for k, _ in keys], dtype=np.int64)
        self.vs = np.array([k[1] for k, _ in keys], dtype=np.int64)
        self.obs = np.array([o for _, o in keys], dtype=np.int64)
        adj: list[list[tuple[int, int]]] = [[] for _ in range(n + 1)]
        for i in range(self.E):
            adj[int(self.us[i])].append((int(self.vs[i]), i))
            adj[int(self.vs[i])].append((int(self.us[i]), i))
        self.components = _components(adj, n)
        self.complete = True
        found = [d for d in (_graph_distance(adj, self.obs, b, n)
                             for b in range(skeleton.n_obs)) if d is not None]
        self.distance = min(found) if found else None
        self.circuit_distance = circuit_distance
        if order is None:
            # The circuit's fault distance sets the leading order of physical failures;
            # where the decoder graph has shorter logical paths (edges that only occur
            # inside hyperedges), sets of 2.. edges still catch its cheaper failures.
            d = max(self.distance or 0, circuit_distance or 0)
            order = (d + 1) // 2 if d else 1
        self.order = order
        paths: dict[tuple[int, ...], None] = {}
        if self.distance is not None:
            for b in range(skeleton.n_obs):
                got, hit = _logical_paths(adj, self.obs, b, n, 2 * order, max_paths - len(paths))
                paths.update(dict.fromkeys(got))
                if hit or len(paths) >= max_paths:
                    self.complete = False
                    break
        self.paths = len(paths)
        sets: dict[tuple[int, ...], int] = {}
        for pth in paths:
            for size in range(2, min(order, len(pth)) + 1):
                for U in itertools.combinations(pth, size):
                    sets.setdefault(U, len(sets))
            if len(sets) >= max_sets:
                self.complete = False
                break
        del paths
        self._index_sets(list(sets))

    def _index_sets(self, sets: list[tuple[int, ...]]) -> None:
        """Padded edge arrays, syndromes and true observables of the sets; which sets each
        edge lies in; the set partitions used by q(U)."""
        count = len(sets)
        self.count = count
        smax = max((len(U) for U in sets), default=0)
        self.smax = smax
        idx = np.full((count, max(smax, 1)), self.E, dtype=np.int64)      # E pads
        for j, U in enumerate(sets):
            idx[j, :len(U)] = U
        self.set_edges = idx
        self.set_size = np.array([len(U) for U in sets], dtype=np.int64)
        events = []
        true_obs = np.zeros(count, dtype=np.int64)
        for j, U in enumerate(sets):
            ev: set[int] = set()
            for e in U:
                ev.symmetric_difference_update((int(self.us[e]), int(self.vs[e])))
                true_obs[j] ^= self.obs[e]
            ev.discard(self.n)
            events.append(tuple(sorted(ev)))
        self.set_obs = true_obs
        self.set_groups = _group_events(events)
        self.edge_sets: dict[int, dict[int, int]] = {}         # edge -> {set: position}
        for j, U in enumerate(sets):
            for pos, e in enumerate(U):
                self.edge_sets.setdefault(e, {})[j] = pos
        self.partitions = {s: [pi for pi in _set_partitions(s) if len(pi) >= 2]
                           for s in range(2, smax + 1)}
        self.compiled: OrderedDict[str, tuple[np.ndarray, ...]] = OrderedDict()
        self.rows_memo: dict[tuple[int, ...], tuple[np.ndarray, np.ndarray]] = {}

    def edge_probabilities(self, skeleton: _Skeleton, p: np.ndarray) -> np.ndarray:
        """Merged probability of every decoder-graph edge (independent merge)."""
        remap = np.array([self.edge_id[k] for k in skeleton.edge_keys], dtype=np.int64)
        inc_e = remap[skeleton.inc_e] if skeleton.inc_e.size else skeleton.inc_e
        logs = np.bincount(inc_e, weights=np.log(np.abs(1.0 - 2.0 * p[skeleton.inc_m])),
                           minlength=self.E)
        return (1.0 - np.exp(logs)) / 2.0

    def _compile(self, skeleton: _Skeleton) -> tuple[np.ndarray, ...]:
        """Per DEM shape: edge renumbering, and the rows (set, block mask, mechanism) of
        mechanisms that meet a set in two or more edges."""
        remap = np.array([self.edge_id[k] for k in skeleton.edge_keys], dtype=np.int64)
        inc_e = remap[skeleton.inc_e] if skeleton.inc_e.size else skeleton.inc_e
        cov_e = remap[skeleton.cov_e] if skeleton.cov_e.size else skeleton.cov_e
        rows_j, rows_mask, rows_m = [], [], []
        for m_i, es in enumerate(skeleton.cover):
            if len(es) < 2:
                continue
            key = tuple(sorted(int(remap[e]) for e in es))
            got = self.rows_memo.get(key)
            if got is None:
                hits: dict[int, int] = {}
                for e in key:
                    for j, pos in self.edge_sets.get(e, {}).items():
                        hits[j] = hits.get(j, 0) ^ (1 << pos)
                sel = [(j, mask) for j, mask in hits.items() if mask & (mask - 1)]
                got = self.rows_memo[key] = (np.array([j for j, _ in sel], dtype=np.int64),
                                             np.array([m for _, m in sel], dtype=np.int64))
            if got[0].size:
                rows_j.append(got[0])
                rows_mask.append(got[1])
                rows_m.append(np.full(got[0].size, m_i, dtype=np.int64))
        if not rows_j:
            empty = np.zeros(0, dtype=np.int64)
            return inc_e, cov_e, empty, empty, empty
        return (inc_e, cov_e, np.concatenate(rows_j), np.concatenate(rows_mask),
                np.concatenate(rows_m))

    def evaluate(self, skeleton: _Skeleton, shape: str | None, p: np.ndarray, dem: Any,
                 max_events: int, cached: bool) -> DecodedEstimate:
        compiled = self.compiled.get(shape) if shape is not None else None
        if compiled is None:
            compiled = self._compile(skeleton)
            if shape is not None:
                _remember(self.compiled, shape, compiled, _SKELETON_CACHE)
        inc_e, cov_e, rows_j, rows_mask, rows_m = compiled
        logs = np.bincount(inc_e, weights=np.log(np.abs(1.0 - 2.0 * p[skeleton.inc_m])),
                           minlength=self.E)
        pe = (1.0 - np.exp(logs)) / 2.0
        negative = bool(np.any(pe >= 0.5))
        with np.errstate(divide="ignore"):
            weights = np.log((1.0 - pe) / pe)
        decoder = _Decoder(self, weights, negative, dem, max_events)
        multiple, failing_sets = 0.0, 0
        if self.count:
            q = self._set_probabilities(skeleton, p, cov_e, rows_j, rows_mask, rows_m)
            fail = decoder.fails(self.set_groups, self.set_obs)
            failing_sets = int(fail.sum())
            multiple = float(q[fail].sum())
        fail1 = decoder.fails(skeleton.mech_groups, skeleton.mech_obs)
        single = float(p[fail1].sum())
        return DecodedEstimate(value=single + multiple, single=single, multiple=multiple,
                               order=self.order, distance=self.distance,
                               circuit_distance=self.circuit_distance,
                               mechanisms=int(p.size), failing_mechanisms=int(fail1.sum()),
                               paths=self.paths, sets=self.count, failing_sets=failing_sets,
                               complete=self.complete, fallback_decodes=decoder.fallback,
                               cached=cached)

    def _set_probabilities(self, skeleton: _Skeleton, p: np.ndarray, cov_e: np.ndarray,
                           rows_j: np.ndarray, rows_mask: np.ndarray,
                           rows_m: np.ndarray) -> np.ndarray:
        """q(U) of every set: block rates A[set, mask] (summed probability of mechanisms
        meeting the set in exactly `mask`), multiplied over set partitions of >= 2 blocks."""
        count, states = self.count, 1 << self.smax
        flat = np.bincount(rows_j * states + rows_mask, weights=p[rows_m],
                           minlength=count * states) if rows_j.size else np.zeros(count * states)
        A = flat.reshape(count, states)
        s_edge = np.append(np.bincount(cov_e, weights=p[skeleton.cov_m], minlength=self.E), 0.0)
        for pos in range(self.smax):
            bit = 1 << pos
            others = [m for m in range(states) if m & bit and m != bit]
            A[:, bit] = s_edge[self.set_edges[:, pos]] - A[:, others].sum(axis=1)
        q = np.zeros(count)
        for size, parts in self.partitions.items():
            sel = np.flatnonzero(self.set_size == size)
            if not sel.size:
                continue
            As = A[sel]
            total = np.zeros(sel.size)
            for blocks in parts:
                term = As[:, blocks[0]].copy()
                for b in blocks[1:]:
                    term *= As[:, b]
                total += term
            q[sel] = total
        return q


def _group_events(events: list[tuple[int, ...]]) -> dict[int, tuple[np.ndarray, np.ndarray]]:
    """Syndromes grouped by their number of events: count -> (row ids, events array)."""
    by: dict[int, tuple[list[int], list[tuple[int, ...]]]] = {}
    for j, ev in enumerate(events):
        rows, evs = by.setdefault(len(ev), ([], []))
        rows.append(j)
        evs.append(ev)
    return {c: (np.array(r, dtype=np.int64), np.array(e, dtype=np.int64).reshape(len(r), c))
            for c, (r, e) in by.items()}


class _Decoder:
    """Exact MWPM on few detection events, with the decoder graph's shortest paths."""

    def __init__(self, structure: _Structure, weights: np.ndarray, negative: bool, dem: Any,
                 max_events: int) -> None:
        self.s, self.w, self.dem, self.max_events = structure, weights, dem, max_events
        self.to_pymatching = negative or any(len(c) > _FLOYD_LIMIT
                                             for c in structure.components)
        self.fallback = 0
        self._apsp: tuple[np.ndarray, ...] | None = None
        self._matching: Any = None

    def fails(self, groups: dict[int, tuple[np.ndarray, np.ndarray]],
              true_obs: np.ndarray) -> np.ndarray:
        """Boolean per syndrome: matching's observables differ from `true_obs`."""
        out = np.zeros(len(true_obs), dtype=bool)
        for c, (rows, ev) in groups.items():
            if c == 0:
                out[rows] = true_obs[rows] != 0
                continue
            if self.to_pymatching or c > self.max_events:
                predicted = self._by_pymatching(ev)
                self.fallback += len(rows)
            else:
                predicted = self.exact(ev)
            out[rows] = predicted != true_obs[rows]
        return out

    def _shortest(self) -> tuple[np.ndarray, ...]:
        """All-pairs shortest paths between detectors (Floyd-Warshall per connected
        component), their observable masks, and each detector's path to the boundary."""
        if self._apsp is None:
            s = self.s
            n = s.n
            D = np.full((n, n), np.inf)
            P = np.zeros((n, n), dtype=np.int64)
            inner = s.vs < n
            u, v, wi, oi = s.us[inner], s.vs[inner], self.w[inner], s.obs[inner]
            D[u, v] = wi
            D[v, u] = wi
            P[u, v] = oi
            P[v, u] = oi
            np.fill_diagonal(D, 0.0)
            for nodes in s.components:
                if len(nodes) < 3:
                    continue
                ix = np.ix_(nodes, nodes)
                d, pp = D[ix], P[ix]
                for k in range(len(nodes)):
                    cand = d[:, k, None] + d[None, k, :]
                    better = cand < d
                    np.copyto(d, cand, where=better)
                    np.copyto(pp, pp[:, k, None] ^ pp[None, k, :], where=better)
                D[ix], P[ix] = d, pp
            bw = np.full(n, np.inf)
            bo = np.zeros(n, dtype=np.int64)
            edge = ~inner
            bw[s.us[edge]] = self.w[edge]
            bo[s.us[edge]] = s.obs[edge]
            if n:
                via = D + bw[None, :]
                j = np.argmin(via, axis=1)
                bd = via[np.arange(n), j]
                bp = P[np.arange(n), j] ^ bo[j]
            else:
                bd, bp = np.zeros(0), np.zeros(0, dtype=np.int64)
            self._apsp = (D, P, bd, bp)
        return self._apsp

    def _by_pymatching(self, ev: np.ndarray) -> np.ndarray:
        if self._matching is None:
            import pymatching
            self._matching = pymatching.Matching.from_detector_error_model(self.dem)
        syndromes = np.zeros((ev.shape[0], self.s.n), dtype=np.uint8)
        np.put_along_axis(syndromes, ev, 1, axis=1)
        predicted = self._matching.decode_batch(syndromes)
        mask = np.zeros(ev.shape[0], dtype=np.int64)
        for b in range(predicted.shape[1]):
            mask |= predicted[:, b].astype(np.int64) << b
        return mask

    def exact(self, ev: np.ndarray) -> np.ndarray:
        """Least-weight pairing of the events (each with another or with the boundary) by
        dynamic programming over subsets; the observable mask of the best pairing per row.
        Arrays are laid out (state, syndrome) so that every step reads contiguous rows."""
        D, P, bd, bp = self._shortest()
        count, c = ev.shape
        et = np.ascontiguousarray(ev.T)                         # (c, count)
        Dm = D[et[:, None, :], et[None, :, :]]                  # (c, c, count)
        Pm = P[et[:, None, :], et[None, :, :]]
        B, Bp = bd[et], bp[et]
        states = 1 << c
        f = np.empty((states, count))
        g = np.empty((states, count), dtype=np.int64)
        f[0] = 0.0
        g[0] = 0
        for S in range(1, states):
            i = (S & -S).bit_length() - 1
            rest = S ^ (1 << i)
            best = f[rest] + B[i]
            parity = g[rest] ^ Bp[i]
            r = rest
            while r:
                j = (r & -r).bit_length() - 1
                r ^= 1 << j
                other = rest ^ (1 << j)
                cand = f[other] + Dm[i, j]
                better = cand < best
                np.copyto(best, cand, where=better)
                np.copyto(parity, g[other] ^ Pm[i, j], where=better)
            f[S] = best
            g[S] = parity
        return g[states - 1].copy()


# --------------------------------------------------------------------------------------
# Graph search.

def _circuit_distance(dem: Any) -> int | None:
    """stim's fewest graph-like mechanisms forming an undetected logical error (None if
    none). stim counts only mechanisms that are graph-like as a whole."""
    try:
        return len(dem.shortest_graphlike_error())
    except ValueError:
        return None


def _components(adj: list[list[tuple[int, int]]], n: int) -> list[np.ndarray]:
    """Connected components of the detectors (the boundary, node n, left out)."""
    seen = [False] * n
    out = []
    for s0 in range(n):
        if seen[s0]:
            continue
        seen[s0] = True
        comp, stack = [s0], [s0]
        while stack:
            v = stack.pop()
            for w, _ in adj[v]:
                if w < n and not seen[w]:
                    seen[w] = True
                    comp.append(w)
                    stack.append(w)
        out.append(np.array(sorted(comp), dtype=np.int64))
    return out


def _starts(adj: list[list[tuple[int, int]]], n: int) -> list[int]:
    return [n] if adj[n] else [v for v in range(n) if adj[v]]


def _bfs_parity(adj: list[list[tuple[int, int]]], obs: np.ndarray, bit: int, start: int,
                n: int) -> dict[tuple[int, int], int]:
    """Fewest edges from `start` to every (node, observable parity)."""
    dist = {(start, 0): 0}
    queue = deque([(start, 0)])
    while queue:
        v, par = queue.popleft()
        dv = dist[(v, par)]
        for w, e in adj[v]:
            state = (w, par ^ ((int(obs[e]) >> bit) & 1))
            if state not in dist:
                dist[state] = dv + 1
                if w != start:
                    queue.append(state)
    return dist


def _graph_distance(adj: list[list[tuple[int, int]]], obs: np.ndarray, bit: int,
                    n: int) -> int | None:
    """Fewest edges of a logical path for observable `bit`; None when there is none."""
    best = None
    for start in _starts(adj, n):
        d = _bfs_parity(adj, obs, bit, start, n).get((start, 1))
        if d is not None and (best is None or d < best):
            best = d
    return best


def _logical_paths(adj: list[list[tuple[int, int]]], obs: np.ndarray, bit: int, n: int,
                   lmax: int, budget: int) -> tuple[list[tuple[int, ...]], bool]:
    """Simple logical paths for observable `bit` of at most `lmax` edges, as sorted edge
    tuples (boundary to boundary; without a boundary, cycles through their lowest node).
    Returns (paths, whether the budget cut the listing short)."""
    found: dict[tuple[int, ...], None] = {}
    for start in _starts(adj, n):
        dist = _bfs_parity(adj, obs, bit, start, n)
        if (start, 1) in dist and _paths_from(adj, obs, bit, start, n, lmax, dist, found,
                                              budget):
            return list(found), True
    return list(found), False


def _paths_from(adj: list[list[tuple[int, int]]], obs: np.ndarray, bit: int, start: int,
                n: int, lmax: int, dist: dict[tuple[int, int], int],
                found: dict[tuple[int, ...], None], budget: int) -> bool:
    """Depth-first listing of the logical paths from `start` into `found`, pruned by the
    parity distances `dist`; True when the budget was reached."""
    visited = {start}
    stack: list[int] = []
    cycles = start != n

    def dfs(v: int, par: int, h: int) -> bool:
        for w, e in adj[v]:
            p2 = par ^ ((int(obs[e]) >> bit) & 1)
            if w == start:
                if p2 == 1 and h + 1 <= lmax and e not in stack:
                    found.setdefault(tuple(sorted([*stack, e])), None)
                    if len(found) >= budget:
                        return True
                continue
            if w in visited or (cycles and w < start):
                continue
            rest = dist.get((w, 1 - p2))
            if rest is None or h + 1 + rest > lmax:
                continue
            visited.add(w)
            stack.append(e)
            hit = dfs(w, p2, h + 1)
            stack.pop()
            visited.discard(w)
            if hit:
                return True
        return False

    return dfs(start, 0, 0)


def _set_partitions(s: int) -> list[list[int]]:
    """Every set partition of {0..s-1}, each as a list of block bitmasks."""
    out: list[list[int]] = []

    def rec(i: int, blocks: list[int]) -> None:
        if i == s:
            out.append(list(blocks))
            return
        for b in range(len(blocks)):
            blocks[b] |= 1 << i
            rec(i + 1, blocks)
            blocks[b] ^= 1 << i
        blocks.append(1 << i)
        rec(i + 1, blocks)
        blocks.pop()

    rec(0, [])
    return out
