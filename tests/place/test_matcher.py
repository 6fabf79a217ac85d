"""The monomorphism matcher against independent matchers: networkx's GraphMatcher (VF2,
Cordella et al., IEEE TPAMI 26, 1367 (2004)) and rustworkx's VF2++ (Juettner & Madarasi,
Discrete Applied Mathematics 242, 69 (2018)), on random graphs and lattice pieces."""
import networkx as nx
import numpy as np
import pytest
import rustworkx as rx
from hypothesis import given, settings
from hypothesis import strategies as st

from embedcheck.model.lattices import heavy_hex, square_grid
from embedcheck.place.matcher import Host, monomorphisms, plan
from embedcheck.place.symmetry import automorphisms
from helpers import networkx_maps


def _maps(host_n, host_edges, k, edges, **kw):
    host = Host.from_edges(host_n, host_edges)
    blocks = [b for b in monomorphisms(host, k, edges, **kw)]
    return np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)


@st.composite
def graphs(draw):
    k = draw(st.integers(2, 6))
    edges = draw(st.lists(st.tuples(st.integers(0, k - 1), st.integers(0, k - 1)),
                          min_size=1, max_size=10))
    edges = sorted({tuple(sorted(e)) for e in edges if e[0] != e[1]}) or [(0, 1)]
    n = draw(st.integers(2, 10))
    host = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=30))
    host = sorted({tuple(sorted(e)) for e in host if e[0] != e[1]})
    chunk = draw(st.sampled_from([1, 2, 5, 1 << 20]))
    masks = draw(st.booleans())
    allowed = None
    if masks:
        bits = draw(st.lists(st.booleans(), min_size=k * n, max_size=k * n))
        allowed = [np.array(bits[j * n:(j + 1) * n]) for j in range(k)]
    return k, edges, n, host, chunk, allowed


@settings(max_examples=300, derandomize=True, deadline=None)
@given(graphs())
def test_every_map_once_as_networkx_finds_them(case):
    # Isolated pattern nodes, disconnected patterns, tiny chunks (many splits) and
    # per-node candidate masks (a node matcher in networkx's terms) included.
    k, edges, n, host, chunk, allowed = case
    ours = _maps(n, host, k, edges, chunk=chunk, candidates=allowed)
    expected = set(networkx_maps(n, host, k, edges, allowed))
    assert len(ours) == len({tuple(r) for r in ours}) == len(expected)
    assert {tuple(int(x) for x in r) for r in ours} == expected


def _pattern_graph(k, edges):
    g = rx.PyGraph()
    g.add_nodes_from(["data"] * k)
    g.add_edges_from([(a, b, ((1,),)) for a, b in edges])
    return g


def _orbit_check(host_n, host_edges, k, edges):
    autos = automorphisms(_pattern_graph(k, edges))
    reps = _maps(host_n, host_edges, k, edges, symmetries=autos)
    host = rx.PyGraph()
    host.add_nodes_from(range(host_n))
    host.add_edges_from_no_data(host_edges)
    reference = {tuple(m_inv[j] for j in range(k)) for m_inv in
                 ({j: v for v, j in m.items()} for m in rx.vf2_mapping(
                     host, _pattern_graph(k, edges), subgraph=True, induced=False,
                     id_order=False))}
    images = {tuple(int(r[s[j]]) for j in range(k)) for r in reps for s in autos}
    assert len(reps) * len(autos) == len(reference)
    assert images == reference
    return len(reps), len(autos)


@pytest.mark.parametrize("rows,cols", [(2, 2), (2, 3)])
def test_one_map_per_orbit_for_heavy_hex_pieces(rows, cols):
    # A piece of the heavy-hex lattice on a bigger heavy-hex chip: every raw map
    # rustworkx finds is a symmetry image of exactly one of our representatives.
    piece, chip = heavy_hex(rows, cols), heavy_hex(5, 5)
    index = {q: i for i, q in enumerate(piece.qubits)}
    edges = [(index[a], index[b]) for a, b in piece.couplers]
    chip_index = {q: i for i, q in enumerate(chip.qubits)}
    chip_edges = [(chip_index[a], chip_index[b]) for a, b in chip.couplers]
    reps, order = _orbit_check(len(chip.qubits), chip_edges, len(piece.qubits), edges)
    assert reps > 0 and order > 1


def test_one_map_per_orbit_for_square_cells_and_rings():
    grid = square_grid(5, 5)
    index = {q: i for i, q in enumerate(grid.qubits)}
    grid_edges = [(index[a], index[b]) for a, b in grid.couplers]
    square = [(0, 1), (1, 2), (2, 3), (3, 0)]
    assert _orbit_check(25, grid_edges, 4, square) == (16, 8)      # 16 cells, dihedral D4
    cross = [(0, 1), (0, 2), (0, 3), (0, 4)]
    assert _orbit_check(25, grid_edges, 5, cross) == (9, 24)       # inner vertices, S4
    ring8 = [(i, (i + 1) % 8) for i in range(8)]
    reps, order = _orbit_check(25, grid_edges, 8, ring8)
    assert order == 16 and reps > 0


def test_plan_maps_each_part_connected_and_closes_cycles_early():
    # Two 6-cycles sharing an edge, plus a separate edge: after a part's first node
    # every step hangs off an earlier one; the first cycle closes by step 6.
    edges = [(0, 1), (1, 2), (2, 3), (3, 4), (4, 5), (5, 0), (1, 6), (6, 7), (7, 8), (8, 2),
             (9, 10)]
    p = plan(11, edges, np.ones(11))
    assert sorted(p.order) == list(range(11))
    assert len(p.anchors) == 2
    for s in range(11):
        assert (p.parent[s] == -1) == (s in p.anchors)
    first_close = min(s for s in range(11) if p.extra[s])
    assert first_close <= 5


def test_worker_processes_find_the_same_placements():
    # The anchors split between two processes: the same distinct placements, the same raw
    # count, and honest stop reasons under a count limit.
    from embedcheck import Device
    from embedcheck.model.constraints import build
    from embedcheck.place.search import find_placements
    from helpers import patch_from_edges
    piece = heavy_hex(2, 2)
    patch = patch_from_edges(list(piece.couplers))
    device = Device.from_lattice(heavy_hex(6, 6), name="hh")
    serial = find_placements(device, patch, limit=None)
    seen = []
    split = find_placements(device, patch, limit=None, processes=2, progress=seen.append)
    assert split.complete and serial.complete
    assert seen and seen[-1] == split.raw_maps                  # progress ends at the total
    assert set(split.placements) == set(serial.placements) and len(serial.placements) > 10
    assert split.raw_maps == serial.raw_maps
    capped = find_placements(device, patch, limit=5, processes=2)
    assert len(capped.placements) == 5 and capped.stop_reason == "limit"
    ways = {c: c for c in device.couplers}                    # every coupler one way
    directed = Device.from_lattice(heavy_hex(6, 6), name="hh", directed=ways)
    rules = build(forbid_direction_fixes=True)
    line = patch_from_edges([(0, 1), (1, 2), (2, 3)])
    one = find_placements(directed, line, limit=None, constraints=rules)
    two = find_placements(directed, line, limit=None, constraints=rules, processes=2)
    assert set(one.placements) == set(two.placements) and one.raw_maps == two.raw_maps > 0


def test_raw_counts_stand_for_what_was_looked_at():
    # A 6-qubit line (symmetry order 2) on a heavy-hex chip: with limit=1 one orbit was
    # taken, so 2 raw maps; a step budget is met in whole orbits.
    from embedcheck import Device
    from embedcheck.place.search import find_placements
    from helpers import patch_from_edges
    device = Device.from_lattice(heavy_hex(4, 4), name="hh")
    line = patch_from_edges([(i, i + 1) for i in range(5)])
    one = find_placements(device, line, limit=1)
    assert len(one.placements) == 1 and one.raw_maps == 2 and one.stop_reason == "limit"
    stepped = find_placements(device, line, limit=None, max_maps=25)
    assert stepped.stop_reason == "budget" and stepped.raw_maps == 26


def test_worker_caps_never_fake_a_limit():
    # A spider (centre 0, legs 0-i-(i+6)): every 3-qubit line uses the centre, the only
    # qubit the lone ancilla may use, so nothing fits; worker processes must still say
    # 'complete', not stop at a count of maps that never became placements.
    import networkx as nx

    from embedcheck import Device
    from embedcheck.model.constraints import build
    from embedcheck.model.device import QubitCalibration
    from embedcheck.model.patch import Circuit, Operation, Patch
    from embedcheck.place.search import find_placements
    g = nx.Graph([(0, i) for i in range(1, 7)] + [(i, i + 6) for i in range(1, 7)])
    cal = {q: QubitCalibration(readout_error=0.01 if q == 0 else 0.1) for q in g}
    device = Device.from_graph(g, name="spider", qubit_calibration=cal)
    ops = (Operation("cx", ("a", "b"), "2q"), Operation("cx", ("b", "c"), "2q"))
    patch = Patch("p", ("a", "b", "c", "m"), {"a": "data", "b": "data", "c": "data",
                                              "m": "ancilla"}, {"round": Circuit("round", ops)})
    rules = build(["ancilla: readout_error <= 0.05"])
    for processes in (1, 2):
        result = find_placements(device, patch, limit=1, constraints=rules,
                                 processes=processes)
        assert result.stop_reason == "complete" and not result.placements, processes


def test_a_huge_symmetry_group_is_not_listed():
    # A star with 8 leaves has 8! = 40320 symmetries: more than the search lists, so maps
    # are not merged and the result says so, and every map is still found: the maps of a
    # star onto itself keep the centre and permute the leaves, 8! of them (networkx's
    # GraphMatcher lists the same 40320, in five seconds; the other tests here use it).
    import math

    from embedcheck import Device
    from embedcheck.place.search import find_placements
    from embedcheck.place.symmetry import MAX_SYMMETRIES
    from helpers import patch_from_edges
    assert math.factorial(8) > MAX_SYMMETRIES
    star = patch_from_edges([(0, k) for k in range(1, 9)])
    hub = nx.star_graph(8)                               # centre 0 with 8 leaves
    device = Device.from_graph(hub, name="hub")
    result = find_placements(device, star, limit=None)
    assert result.symmetry_order == 1 and result.notes
    assert result.raw_maps == len(result.placements) == math.factorial(8)
    assert {p.physical[0] for p in result.placements} == {0}          # the centre stays
