"""The best-first search against ranking every map: the maps come from networkx's
GraphMatcher (VF2, Cordella et al., IEEE TPAMI 26, 1367 (2004)), an independent matcher,
and are scored in numpy; the symmetry groups from rustworkx's VF2 (pattern onto itself)."""
import numpy as np
import pytest
import rustworkx as rx
from hypothesis import given, settings
from hypothesis import strategies as st

from embedcheck.place.best_first import best_first
from embedcheck.place.matcher import Host
from embedcheck.place.symmetry import automorphisms
from helpers import networkx_maps


def _costs(host, maps, edges, node_cost, edge_cost):
    total = node_cost[np.arange(maps.shape[1]), maps].sum(axis=1) if len(maps) else \
        np.zeros(0)
    for e, (a, b) in enumerate(edges):
        arc = host.arcs(maps[:, a], maps[:, b])
        assert (arc >= 0).all()
        total = total + edge_cost[e, arc]
    return total


def _symmetries(k, edges):
    g = rx.PyGraph()
    g.add_nodes_from(["data"] * k)
    g.add_edges_from([(a, b, ((1,),)) for a, b in edges])
    return automorphisms(g)


def _canonical(maps, group):
    return [min(tuple(int(m[g[j]]) for j in range(len(m))) for g in group) for m in maps]


def _reference(host, maps, edges, node_cost, edge_cost, group):
    """Every orbit once, at the cost of its cheapest map, cheapest first."""
    cost = _costs(host, maps, edges, node_cost, edge_cost)
    orbit = {}
    for key, c in zip(_canonical(maps, group), cost.tolist(), strict=True):
        orbit[key] = min(orbit.get(key, np.inf), c)
    return sorted(orbit.items(), key=lambda kv: (kv[1], kv[0]))


@st.composite
def cases(draw):
    k = draw(st.integers(2, 5))
    edges = draw(st.lists(st.tuples(st.integers(0, k - 1), st.integers(0, k - 1)),
                          min_size=1, max_size=7))
    edges = sorted({tuple(sorted(e)) for e in edges if e[0] != e[1]}) or [(0, 1)]
    n = draw(st.integers(k, 11))
    host = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)),
                         min_size=1, max_size=30))
    host = sorted({tuple(sorted(e)) for e in host if e[0] != e[1]}) or [(0, 1)]
    seed = draw(st.integers(0, 2**31 - 1))
    symmetric = draw(st.booleans())          # a cost the symmetries keep, or any cost
    masks = draw(st.booleans())
    top = draw(st.sampled_from([1, 3, 10]))
    return k, edges, n, host, seed, symmetric, masks, top


def _problem(k, edges, n, host_edges, seed, symmetric, masks):
    rng = np.random.default_rng(seed)
    host = Host.from_edges(n, host_edges)
    group = _symmetries(k, edges)
    node_cost = rng.random((k, n))
    per_arc = rng.random(len(host.keys))
    edge_cost = rng.random((len(edges), len(host.keys)))
    if symmetric:                            # one row per role / per pair: invariant
        node_cost = np.repeat(rng.random((1, n)), k, axis=0)
        src = np.repeat(np.arange(n), host.degree)
        back = host.arcs(host.indices, src)
        undirected = per_arc + per_arc[back]
        edge_cost = np.repeat(undirected[None, :], len(edges), axis=0)
    node_cost[rng.random((k, n)) < 0.1] = np.inf       # some forbidden placements
    if symmetric:
        node_cost = np.repeat(node_cost[:1], k, axis=0)
    allowed = None
    if masks:
        allowed = [rng.random(n) < 0.8 for _ in range(k)]
        if symmetric:
            allowed = [allowed[0]] * k
    return host, group, node_cost, edge_cost, allowed


@settings(max_examples=250, derandomize=True, deadline=None)
@given(cases())
def test_top_maps_equal_the_full_ranking(case):
    k, edges, n, host_edges, seed, symmetric, masks, top = case
    host, group, node_cost, edge_cost, allowed = _problem(k, edges, n, host_edges, seed,
                                                          symmetric, masks)
    maps = np.array(networkx_maps(n, host_edges, k, edges, allowed), dtype=np.int64).reshape(-1, k)
    cost = _costs(host, maps, edges, node_cost, edge_cost)
    finite = np.isfinite(cost)
    reference = [(key, c) for key, c in _reference(host, maps[finite], edges, node_cost,
                                                   edge_cost, group)]
    got = best_first(host, k, edges, node_cost=node_cost, edge_cost=edge_cost,
                     candidates=allowed, symmetries=group, top=top)
    assert got.proven and got.stop_reason == "complete"
    want = reference[:top]
    assert len(got.maps) == len(want)
    np.testing.assert_allclose(got.costs, [c for _, c in want], rtol=1e-12, atol=1e-12)
    # each answer is a real map at the stated cost, one per orbit
    if len(got.maps):
        assert len({tuple(r) for r in got.maps.tolist()}) == len(got.maps)
        for row in got.maps:
            assert len(set(row.tolist())) == k
            if allowed is not None:
                assert all(allowed[j][row[j]] for j in range(k))
        np.testing.assert_allclose(_costs(host, got.maps, edges, node_cost, edge_cost),
                                   got.costs, rtol=1e-12)
        keys = _canonical(got.maps, group)
        assert len(set(keys)) == len(keys)
        # the same orbits as the reference, where no tie sits at the cut
        if len(reference) <= top or reference[top][1] > reference[top - 1][1] + 1e-9:
            assert set(keys) == {key for key, _ in want}


@settings(max_examples=60, derandomize=True, deadline=None)
@given(cases(), st.integers(1, 40))
def test_a_budget_stops_at_the_same_place_twice_and_bounds_the_rest(case, budget):
    k, edges, n, host_edges, seed, symmetric, masks, top = case
    host, group, node_cost, edge_cost, allowed = _problem(k, edges, n, host_edges, seed,
                                                          symmetric, masks)
    runs = [best_first(host, k, edges, node_cost=node_cost, edge_cost=edge_cost,
                       candidates=allowed, symmetries=group, top=top, budget=budget)
            for _ in range(2)]
    a, b = runs
    assert np.array_equal(a.maps, b.maps) and np.array_equal(a.costs, b.costs)
    assert (a.proven, a.stop_reason, a.bound, a.gap, a.work) == \
        (b.proven, b.stop_reason, b.bound, b.gap, b.work)
    if a.stop_reason == "budget":
        assert not a.proven
        maps = np.array(networkx_maps(n, host_edges, k, edges, allowed),
                        dtype=np.int64).reshape(-1, k)
        reference = _reference(host, maps, edges, node_cost, edge_cost, group)
        returned = set(_canonical(a.maps, group))
        for key, c in reference:             # nothing left out costs less than the bound
            if key not in returned:
                assert c >= a.bound - 1e-9


def test_a_square_on_a_grid_cheapest_cell_first():
    # A 4-cycle on a 4 x 4 grid whose node costs make one cell clearly cheapest; the
    # 9 cells are the 9 orbits (dihedral group of order 8).
    n = 16
    grid = [(r * 4 + c, r * 4 + c + 1) for r in range(4) for c in range(3)] + \
        [(r * 4 + c, r * 4 + c + 4) for r in range(3) for c in range(4)]
    host = Host.from_edges(n, grid)
    square = [(0, 1), (1, 2), (2, 3), (3, 0)]
    cheap = np.ones(n)
    cheap[[5, 6, 9, 10]] = 0.0                 # the middle cell
    node_cost = np.repeat(cheap[None, :], 4, axis=0)
    got = best_first(host, 4, square, node_cost=node_cost,
                     edge_cost=np.zeros((4, len(host.keys))),
                     symmetries=_symmetries(4, square), top=3)
    assert got.proven and got.costs.tolist() == [0.0, 2.0, 2.0]
    assert sorted(got.maps[0].tolist()) == [5, 6, 9, 10]


def test_costs_with_nan_or_wrong_shapes_are_refused():
    host = Host.from_edges(3, [(0, 1), (1, 2)])
    with pytest.raises(ValueError):
        best_first(host, 2, [(0, 1)], node_cost=np.zeros((2, 2)),
                   edge_cost=np.zeros((1, 4)))
    bad = np.zeros((2, 3))
    bad[0, 0] = np.nan
    with pytest.raises(ValueError):
        best_first(host, 2, [(0, 1)], node_cost=bad, edge_cost=np.zeros((1, 4)))
