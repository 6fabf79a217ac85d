"""The matcher's search order and set-up (probe, anchor batches, padded tables, look-ahead
checks dropped on the way) never change what is found: every map once, as networkx's
GraphMatcher (VF2, Cordella et al., IEEE TPAMI 26, 1367 (2004)) finds them; identical
runs give identical answers; set-up stays proportional to the anchors searched."""
import networkx as nx
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import embedcheck.place.matcher as matcher
from embedcheck import Device
from embedcheck.io.patchfile import patch_from_family as build_patch
from embedcheck.model.lattices import heavy_hex, square_grid
from embedcheck.model.placement import off_coupler_counts
from embedcheck.place.matcher import Host, grow, prepare
from embedcheck.place.search import find_placements
from helpers import networkx_maps, patch_from_edges


@st.composite
def medium(draw):
    k = draw(st.integers(3, 6))
    edges = draw(st.lists(st.tuples(st.integers(0, k - 1), st.integers(0, k - 1)),
                          min_size=2, max_size=9))
    edges = sorted({tuple(sorted(e)) for e in edges if e[0] != e[1]}) or [(0, 1)]
    n = draw(st.integers(8, 14))
    host = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)),
                         min_size=n, max_size=2 * n))
    host = sorted({tuple(sorted(e)) for e in host if e[0] != e[1]})
    knobs = (draw(st.sampled_from([1, 3, 256])),            # anchors in the first batch
             draw(st.sampled_from([0, 5, None, 10**6])),     # probe steps
             draw(st.sampled_from([0, 8])),                  # padded tables or not
             draw(st.sampled_from([1, 8192])),               # look-ahead trial length
             draw(st.sampled_from([2, 1 << 20])),            # chunk (many splits)
             draw(st.sampled_from([0, 1 << 18])))            # girth learnt at once, or not
    return k, edges, n, host, knobs


@settings(max_examples=150, derandomize=True, deadline=None)
@given(medium())
def test_every_map_once_whatever_the_search_order(case):
    k, edges, n, host_edges, (first, probe, degree, trial, chunk, girth) = case
    saved = (matcher.FIRST_ANCHORS, matcher.SMALL_DEGREE, matcher.LOOK_TRIAL,
             matcher.GIRTH_AFTER)
    (matcher.FIRST_ANCHORS, matcher.SMALL_DEGREE, matcher.LOOK_TRIAL,
     matcher.GIRTH_AFTER) = first, degree, trial, girth
    try:
        prep = prepare(Host.from_edges(n, host_edges), k, edges)
        blocks = list(grow(prep, probe=probe, chunk=chunk))
    finally:
        (matcher.FIRST_ANCHORS, matcher.SMALL_DEGREE, matcher.LOOK_TRIAL,
         matcher.GIRTH_AFTER) = saved
    maps = np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)
    found = [tuple(int(x) for x in row) for row in maps]
    assert len(found) == len(set(found))
    assert set(found) == set(networkx_maps(n, host_edges, k, edges))


@settings(max_examples=200, derandomize=True, deadline=None)
@given(st.integers(3, 20), st.integers(2, 40), st.integers(0, 10**6))
def test_girth_as_networkx_finds_it(n, m, seed):
    # Reference: networkx.girth (breadth-first search per node).
    graph = nx.gnm_random_graph(n, m, seed=seed)
    index = {v: i for i, v in enumerate(graph.nodes)}
    host = Host.from_edges(n, [(index[a], index[b]) for a, b in graph.edges])
    expected = nx.girth(graph)
    assert matcher.girth(host, 16) == (16 if expected > 16 else expected)
    saved, matcher.GIRTH_MEMORY = matcher.GIRTH_MEMORY, 8     # cut short: a lower bound
    try:
        assert 3 <= matcher.girth(host, 16) <= min(16, expected) or not graph.edges
    finally:
        matcher.GIRTH_MEMORY = saved


def test_the_heavy_hex_lattice_has_girth_twelve_and_the_grid_four():
    # Heavy-hex: hexagons with every edge subdivided (12-cycles); square grid: 4-cycles.
    for lattice, girth in ((heavy_hex(4, 4), 12), (square_grid(5, 5), 4)):
        index = {q: i for i, q in enumerate(lattice.qubits)}
        host = Host.from_edges(len(index), [(index[a], index[b]) for a, b in lattice.couplers])
        assert matcher.girth(host, 16) == girth


def test_the_probe_finds_a_first_placement_on_a_sparse_patch_of_a_grid():
    # heavy-hex-chipfit d=5 (65 qubits) on a 20 x 20 grid: millions of placements, and a
    # breadth-first search piles up partial maps before any completes (issue 17).
    device = Device.from_lattice(square_grid(20, 20), name="grid")
    patch = build_patch("heavy-hex-chipfit", distance=5, rounds=1)
    result = find_placements(device, patch, limit=1)
    assert result.stop_reason == "limit" and len(result.placements) == 1
    off = off_coupler_counts(device, patch, list(result.placements), list(patch.circuits))
    assert not off.any()                     # every gate of every circuit on a coupler


def test_set_up_follows_the_anchors_searched(monkeypatch):
    # A first placement of a 35-qubit piece on a 2159-qubit chip works out ball sizes
    # for one batch of anchors at most, not for the whole chip.
    looked = []
    original = matcher.Engine.anchors

    def counting(self, anchors):
        looked.append(len(anchors))
        return original(self, anchors)

    monkeypatch.setattr(matcher.Engine, "anchors", counting)
    device = Device.from_lattice(heavy_hex(20, 20), name="hh")
    piece = patch_from_edges(list(heavy_hex(2, 2).couplers))
    result = find_placements(device, piece, limit=1)
    assert len(result.placements) == 1
    assert sum(looked) <= matcher.FIRST_ANCHORS < device.num_qubits / 4


@pytest.mark.parametrize("processes", [1, 2])
def test_identical_runs_give_identical_placements_under_a_budget(processes):
    # A budget in maps (a step count, not seconds) stops the search at the same place,
    # with worker processes too (their pieces are handed on in order).
    device = Device.from_lattice(heavy_hex(12, 12), name="hh")
    line = patch_from_edges([(i, i + 1) for i in range(11)])
    runs = [find_placements(device, line, limit=None, max_maps=3000, processes=processes)
            for _ in range(2)]
    assert runs[0].stop_reason == runs[1].stop_reason == "budget"
    assert runs[0].placements == runs[1].placements and runs[0].raw_maps == runs[1].raw_maps
    limited = [find_placements(device, line, limit=500, processes=processes)
               for _ in range(2)]
    assert limited[0].placements == limited[1].placements
    assert len(limited[0].placements) == 500


def test_a_time_budget_read_from_a_clock_stops_at_the_same_place():
    device = Device.from_lattice(square_grid(20, 20), name="grid")
    patch = build_patch("heavy-hex-chipfit", distance=5, rounds=1)
    runs = []
    for _ in range(2):
        ticks = iter(range(10**9))
        runs.append(find_placements(device, patch, limit=None, budget_s=20,
                                    clock=ticks.__next__))
    assert runs[0].stop_reason == "budget" and runs[0].placements
    assert runs[0].placements == runs[1].placements


def test_girth_learning_still_compares_images_in_another_part_of_the_pattern(monkeypatch):
    # Found by the search-order test above: two disjoint pattern edges on a host path
    # 1-0-2 (no two disjoint edges: no map at all). Once the chip's girth was learnt, an
    # image was compared only with images within girth - 1 mapped steps of its parent,
    # and an image in the other part of the pattern (no mapped path) counted as near when
    # k + 1 < girth - 1: the maps (0, 1, 0, 2) came back, one chip qubit used twice.
    monkeypatch.setattr(matcher, "GIRTH_AFTER", 0)
    k, edges, n, host_edges = 4, [(0, 1), (2, 3)], 8, [(0, 1), (0, 2)]
    prep = prepare(Host.from_edges(n, host_edges), k, edges)
    blocks = list(grow(prep, probe=0, chunk=2))
    maps = np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)
    assert len(maps) == 0 == len(networkx_maps(n, host_edges, k, edges))
    # On a heavy-hex chip (girth 12) two disjoint 3-qubit paths: every map injective and
    # networkx's count.
    hh = heavy_hex(2, 2)
    index = {q: i for i, q in enumerate(sorted(hh.qubits))}
    host = [(index[a], index[b]) for a, b in hh.couplers]
    pattern = [(0, 1), (1, 2), (3, 4), (4, 5)]
    prep = prepare(Host.from_edges(len(index), host), 6, pattern)
    rows = np.concatenate(list(grow(prep, probe=0, chunk=64)))
    assert all(len(set(r)) == 6 for r in rows.tolist())
    assert {tuple(r) for r in rows.tolist()} == set(networkx_maps(len(index), host, 6, pattern))
