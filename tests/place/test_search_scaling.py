"""Search properties against networkx on many random graphs, published benchmark instances,
the reasons a user reads when nothing fits, constraints, and honest budgets."""
import importlib.resources
import struct

import networkx as nx
import pytest
import rustworkx as rx
from hypothesis import given, settings
from hypothesis import strategies as st
from networkx.algorithms.isomorphism import DiGraphMatcher, GraphMatcher

from embedcheck import Device, load_device, load_patch
from embedcheck.io.patchfile import patch_from_stim
from embedcheck.model.constraints import build
from embedcheck.model.device import QubitCalibration, pair
from embedcheck.model.lattices import heavy_hex
from embedcheck.place.search import find_placements
from helpers import DEMO_CHIP, FIXED_PATCH, patch_from_edges


def _pattern_edges(draw, directed):
    n = draw(st.integers(2, 6))
    edges = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)),
                          min_size=1, max_size=9))
    edges = [(a, b) for a, b in edges if a != b]
    if not directed:
        edges = sorted({tuple(sorted(e)) for e in edges})
    else:
        edges = sorted(set(edges))
    return edges


@st.composite
def pattern_and_host(draw):
    directed = draw(st.booleans())
    edges = _pattern_edges(draw, directed)
    if not edges:
        edges = [(0, 1)]
    m = draw(st.integers(3, 11))
    host = draw(st.lists(st.tuples(st.integers(0, m - 1), st.integers(0, m - 1)),
                         min_size=2, max_size=28))
    host = sorted({(a, b) for a, b in host if a != b})
    return directed, edges, m, host


@settings(max_examples=300, derandomize=True, deadline=None)
@given(pattern_and_host())
def test_raw_maps_equal_networkx_on_random_pairs(case):
    # Reference: networkx's GraphMatcher / DiGraphMatcher (an independent VF2), counting
    # subgraph monomorphisms. Patterns may be disconnected; directed cases forbid
    # direction fixes on a chip whose couplers run one way or both.
    directed, edges, m, host = case
    couplers = sorted({pair(a, b) for a, b in host})
    if directed:
        arcs = set(host)
        ways = {c: (c if c in arcs else (c[1], c[0])) for c in couplers
                if not (c in arcs and (c[1], c[0]) in arcs)}
        device = Device(name="h", qubits=tuple(range(m)), couplers=tuple(couplers), directed=ways)
        reference = nx.DiGraph()
        reference.add_nodes_from(range(m))
        reference.add_edges_from(host)
        pattern = nx.DiGraph(edges)
        expected = sum(1 for _ in DiGraphMatcher(reference, pattern).subgraph_monomorphisms_iter())
    else:
        device = Device(name="h", qubits=tuple(range(m)), couplers=tuple(couplers))
        reference = nx.Graph()
        reference.add_nodes_from(range(m))
        reference.add_edges_from(couplers)
        pattern = nx.Graph(edges)
        expected = sum(1 for _ in GraphMatcher(reference, pattern).subgraph_monomorphisms_iter())
    rules = build(forbid_direction_fixes=True) if directed else None
    result = find_placements(device, patch_from_edges(edges), limit=None, constraints=rules)
    assert result.complete and result.raw_maps == expected
    assert len(result.placements) * result.symmetry_order == expected


def _vf2_database_graph(name):
    """A graph of the VF2 benchmark database (Foggia, Sansone & Vento, 2001) as networkx
    ships it in its tests: 16-bit little-endian node count, then per node its arcs."""
    data = (importlib.resources.files("networkx.algorithms.isomorphism.tests") / name).read_bytes()
    words = struct.unpack(f"<{len(data) // 2}H", data)
    nodes, k, edges = words[0], 1, []
    for a in range(nodes):
        count = words[k]
        edges += [(a, b) for b in words[k + 1:k + 1 + count]]
        k += 1 + count
    return nodes, edges


def _device_of(nodes, edges):
    return Device(name="db", qubits=tuple(range(nodes)),
                  couplers=tuple(sorted({pair(a, b) for a, b in edges if a != b})))


def test_published_benchmark_instances_answer_like_networkx():
    # Reference: networkx's own tests on these instances (test_isomorphvf2.py).
    n_a, e_a = _vf2_database_graph("si2_b06_m200.A99")
    n_b, e_b = _vf2_database_graph("si2_b06_m200.B99")
    host = _device_of(n_b, e_b)
    sub = sorted({pair(a, b) for a, b in e_a})
    assert find_placements(host, patch_from_edges(sub), limit=1).placements
    fewer = [e for e in sub if e != (28, 29)]
    assert find_placements(host, patch_from_edges(fewer), limit=1).placements
    more = fewer + [(2, 29)]
    result = find_placements(host, patch_from_edges(more), limit=1)
    assert not result.placements and result.complete and result.reasons
    n1, e1 = _vf2_database_graph("iso_r01_s80.A99")
    n2, e2 = _vf2_database_graph("iso_r01_s80.B99")
    assert find_placements(_device_of(n2, e2),
                           patch_from_edges(sorted({pair(a, b) for a, b in e1})),
                           limit=1).placements


def test_heavy_hex_code_layout_names_its_ten_cycle():
    # The heavy-hex code graph of Phys. Rev. X 10, 011022 (2020), as rustworkx builds it,
    # has boundary cycles of 10 qubits; a heavy-hex chip's shortest cycle is 12.
    code = rx.generators.heavy_hex_graph(3)
    patch = patch_from_edges(sorted(pair(a, b) for a, b in code.edge_list()))
    chip = Device.from_lattice(heavy_hex(6, 6), name="hh")
    result = find_placements(chip, patch)
    assert not result.placements
    code_girth = len(nx.minimum_cycle_basis(nx.Graph(list(code.edge_list())))[0])
    chip_girth = nx.girth(nx.Graph(list(chip.couplers)))
    assert (code_girth, chip_girth) == (10, 12)
    # Every code cycle shorter than the chip's girth is named (networkx lists them).
    short = [c for c in nx.simple_cycles(nx.Graph(list(code.edge_list())),
                                         length_bound=chip_girth - 1)]
    assert f"the patch has {len(short)} cycles shorter than any the chip has" in \
        result.reasons[0]
    assert result.reasons[0].count("(q") == len(short) and len(short) >= 2
    names = {n: f"q{i}" for i, n in enumerate(sorted(code.node_indices(), key=str))}
    ring_pairs = {frozenset((names[c[i]], names[c[i - 1]])) for c in short for i in range(len(c))}
    assert {frozenset(p) for p in result.culprits[0].pairs} == ring_pairs
    assert f"of length {code_girth}" in result.reasons[0]
    assert f"no cycle shorter than {chip_girth}" in result.reasons[0]


def test_surface_code_on_heavy_hex_names_the_degree_four_ancillas():
    import stim
    patch = patch_from_stim(stim.Circuit.generated("surface_code:rotated_memory_z", distance=3,
                                                   rounds=2))
    result = find_placements(Device.from_lattice(heavy_hex(4, 4), name="hh"), patch)
    assert not result.placements
    ancillas = [q for q in patch.qubits_with_role("ancilla")
                if sum(1 for p in patch.interaction_counts() if patch.index[q] in p) == 4]
    assert len(ancillas) == 4
    for q in ancillas:
        assert f"{q} (ancilla)" in result.reasons[0]
    assert "largest live degree 3" in result.reasons[0]


def test_a_readout_bound_that_removes_the_only_region_is_named():
    # heavy_hex(1, 2): two heavy hexagons sharing one bond; the flagged unit's ancilla can
    # only sit on the qubit of that shared bond.
    lat = heavy_hex(1, 2)
    patch = load_patch(FIXED_PATCH)
    device = Device.from_lattice(lat, name="two-cells")
    free = find_placements(device, patch, circuits=["round"], limit=None)
    spots = {p.as_dict(patch)["a0"] for p in free.placements}
    assert len(spots) == 1
    (spot,) = spots
    cal = {q: QubitCalibration(readout_error=0.2 if q == spot else 0.01) for q in lat.qubits}
    device = Device.from_lattice(lat, name="two-cells", qubit_calibration=cal)
    rules = build(["ancilla: readout_error <= 0.05"])
    result = find_placements(device, patch, circuits=["round"], constraints=rules)
    assert not result.placements and result.complete
    assert any("'ancilla: readout_error <= 0.05' removes every placement" in r
               for r in result.reasons)


def test_budget_stops_a_hopeless_enumeration_and_says_so():
    # A 40-qubit line on a ~2400-qubit heavy-hex chip has astronomically many placements.
    chip = Device.from_lattice(heavy_hex(20, 22), name="big")
    assert 2300 < chip.num_qubits < 2500
    line40 = patch_from_edges([(i, i + 1) for i in range(39)])
    ticks = iter(range(10**9))
    result = find_placements(chip, line40, limit=None, budget_s=3.0, clock=lambda: next(ticks))
    assert result.stop_reason == "budget" and not result.complete
    assert result.raw_maps > 0 and len(result.placements) > 0
    stepped = find_placements(chip, line40, limit=None, max_maps=1000)
    assert stepped.stop_reason == "budget" and stepped.raw_maps == 1000


def test_constraints_in_the_patch_file_and_on_the_command_line(tmp_path, capsys):
    from embedcheck.cli import main
    text = FIXED_PATCH.read_text().replace(
        "rounds: 2\n", "rounds: 2\nconstraints:\n  require: ['ancilla: readout_error <= 0.01']\n"
                       "  exclude_qubits: [67]\n")
    (tmp_path / "p.yaml").write_text(text)
    import shutil
    shutil.copy(FIXED_PATCH.parent / "flagged_weight4_round.qasm", tmp_path)
    patch = load_patch(tmp_path / "p.yaml")
    device = load_device(DEMO_CHIP)
    from embedcheck import vet_patch
    vetting = vet_patch(device, patch)
    assert vetting.ranking.placements
    for p in vetting.ranking.placements:
        where = p.as_dict(patch)
        assert device.qubit_calibration[where["a0"]].readout_error <= 0.01
        assert 67 not in p.physical
    assert main(["find", str(DEMO_CHIP), str(tmp_path / "p.yaml"), "--require",
                 "coupler: two_qubit_error <= 0.009", "--format", "json"]) == 0
    import json
    data = json.loads(capsys.readouterr().out)
    assert "couplers: two_qubit_error <= 0.009" in data["constraints"]
    bad = text.replace("readout_error <= 0.01", "readout_eror <= 0.01")
    (tmp_path / "p.yaml").write_text(bad)
    assert main(["validate", str(tmp_path / "p.yaml")]) == 2
    assert "constraints.require[0]: 'readout_eror' is not a calibration figure (did you mean " \
           "'readout_error'?)" in capsys.readouterr().err


def test_near_misses_when_nothing_fits():
    import stim

    from embedcheck import vet_patch
    patch = patch_from_stim(stim.Circuit.generated("surface_code:rotated_memory_z", distance=3,
                                                   rounds=2))
    device = load_device(DEMO_CHIP)
    vetting = vet_patch(device, patch)
    assert not vetting.ranking.placements and vetting.near_misses
    best = vetting.near_misses[0]
    assert best.off_coupler_gates > 0 and best.missing_pairs
    for a, b in best.missing_pairs:
        assert not device.is_coupled(*(best.placement.as_dict(patch)[q] for q in (a, b)))


def test_parts_that_fit_alone_but_not_side_by_side():
    # A star chip (one centre, three leaves) has no two disjoint couplers.
    star = Device(name="star", qubits=(0, 1, 2, 3), couplers=((0, 1), (0, 2), (0, 3)))
    two_pairs = patch_from_edges([(0, 1), (2, 3)])
    result = find_placements(star, two_pairs)
    assert not result.placements and result.complete
    assert any("2 unconnected parts fits on its own, but not all of them side by side" in r
               for r in result.reasons)
    # A part that cannot be placed even alone is named.
    line5 = Device(name="line", qubits=tuple(range(6)),
                   couplers=((0, 1), (1, 2), (2, 3), (4, 5)))
    odd = patch_from_edges([(0, 1), (1, 2), (2, 0), (3, 4)])
    result = find_placements(line5, odd)
    assert not result.placements


def test_constraints_from_python_are_checked_like_the_command_line():
    from embedcheck import InputError
    for kwargs in ({"exclude_qubits": "3,17"}, {"region_box": (5, 0, 1, 1)},
                   {"region_box": (0, 0, 1)}, {"exclude_couplers": ["3-4"]}):
        with pytest.raises(InputError):
            build(**kwargs)
    assert build("ancilla: readout_error <= 0.03").roles     # one requirement as a string
