"""Placement search against networkx's independent matcher and Euler's formula."""
import random

import networkx as nx
import pytest
from networkx.algorithms.isomorphism import GraphMatcher

from embedcheck.model.device import Device, pair
from embedcheck.model.lattices import heavy_hex, square_grid
from embedcheck.place.search import find_placements
from helpers import patch_from_edges


def _device_from_nx(graph, name="host", **kwargs):
    graph = nx.convert_node_labels_to_integers(graph)
    return Device(name=name, qubits=tuple(graph.nodes),
                  couplers=tuple(sorted(pair(a, b) for a, b in graph.edges)), **kwargs)


def _random_pairs(count=24, seed=7):
    """Seeded pattern/host pairs from networkx generators (patterns connected, small)."""
    rng = random.Random(seed)
    pairs = []
    while len(pairs) < count:
        k = len(pairs)
        host = [nx.grid_2d_graph(3, 4), nx.hexagonal_lattice_graph(2, 2),
                nx.gnp_random_graph(11, 0.35, seed=rng.randrange(10**6)),
                nx.random_regular_graph(3, 10, seed=rng.randrange(10**6)),
                nx.cycle_graph(9), nx.petersen_graph()][k % 6]
        n = rng.randint(2, 6)
        pattern = [nx.path_graph(n), nx.cycle_graph(max(n, 3)), nx.star_graph(n - 1),
                   nx.random_labeled_tree(n, seed=rng.randrange(10**6)),
                   nx.gnp_random_graph(n, 0.6, seed=rng.randrange(10**6))][k % 5]
        if pattern.number_of_edges() == 0 or not nx.is_connected(pattern):
            continue
        pairs.append((pattern, host))
    return pairs


@pytest.mark.parametrize("pattern,host", _random_pairs())
def test_map_count_equals_networkx_monomorphisms(pattern, host):
    # Reference: networkx's VF2 implementation, an independent matcher; a monomorphism
    # (not an induced subgraph isomorphism) is exactly a swap-free placement.
    expected = sum(1 for _ in GraphMatcher(nx.convert_node_labels_to_integers(host),
                                           pattern).subgraph_monomorphisms_iter())
    result = find_placements(_device_from_nx(host), patch_from_edges(list(pattern.edges)),
                             limit=None)
    assert result.complete
    assert result.raw_maps == expected
    # The patch's symmetry group acts freely on injective maps.
    assert len(result.placements) * result.symmetry_order == expected


@pytest.mark.parametrize("rows,columns", [(2, 2), (2, 3), (3, 3)])
def test_twelve_ring_sits_once_per_face(rows, columns):
    # A 12-qubit ring fits a heavy-hex chip exactly on its hexagonal faces (the
    # shortest cycles); faces = E - V + 1 by Euler's formula.
    lat = heavy_hex(rows, columns)
    device = Device.from_lattice(lat, name="hh")
    ring = patch_from_edges([(i, (i + 1) % 12) for i in range(12)])
    result = find_placements(device, ring, limit=None)
    faces = len(lat.couplers) - len(lat.qubits) + 1
    assert len(result.placements) == faces == rows * columns
    assert result.symmetry_order == 24          # the dihedral group of a 12-cycle


def test_dead_coupler_and_dead_qubit_are_never_used():
    lat = heavy_hex(2, 2)
    dead_coupler = lat.couplers[5]
    device = Device.from_lattice(lat, name="hh", dead_couplers=frozenset({dead_coupler}),
                                 dead_qubits=frozenset({20}))
    ring = patch_from_edges([(i, (i + 1) % 12) for i in range(12)])
    result = find_placements(device, ring, limit=None)
    faces_left = sum(1 for p in result.placements
                     if dead_coupler[0] not in p.physical or dead_coupler[1] not in p.physical)
    assert len(result.placements) == faces_left
    assert all(20 not in p.physical for p in result.placements)
    assert 0 < len(result.placements) < 4


def test_limit_and_budget_say_the_result_is_incomplete():
    device = Device.from_lattice(square_grid(5, 5), name="grid")
    path = patch_from_edges([(0, 1), (1, 2), (2, 3)])
    limited = find_placements(device, path, limit=3)
    assert len(limited.placements) == 3 and limited.stop_reason == "limit"
    assert not limited.complete
    budget = find_placements(device, path, limit=None, budget_s=0.0)
    assert budget.stop_reason == "budget" and not budget.complete
    full = find_placements(device, path, limit=None)
    assert full.complete and len(full.placements) > len(budget.placements)


def test_degree_reason_when_nothing_fits():
    device = Device.from_lattice(heavy_hex(2, 2), name="hh")
    star = patch_from_edges([(0, k) for k in range(1, 5)])    # a qubit with 4 partners
    result = find_placements(device, star)
    assert not result.placements and result.complete
    assert "4 or more" in result.reasons[0] and "largest live degree 3" in result.reasons[0]


def test_odd_cycle_on_bipartite_chip_has_no_placement():
    device = Device.from_lattice(square_grid(4, 4), name="grid")
    triangle = patch_from_edges([(0, 1), (1, 2), (2, 0)])
    result = find_placements(device, triangle)
    assert not result.placements and result.complete and result.reasons


def test_qubits_without_gates_are_placed_nearby_on_free_qubits():
    device = Device.from_lattice(square_grid(3, 3), name="grid", dead_qubits=frozenset({1}))
    patch = patch_from_edges([(0, 1)])
    patch = type(patch)(patch.name, patch.qubits + ("idle",), {**patch.roles, "idle": "data"},
                        patch.circuits)
    result = find_placements(device, patch, limit=None)
    for p in result.placements:
        assert len(set(p.physical)) == 3 and 1 not in p.physical


def test_a_tiny_budget_never_reads_as_no_placement(capsys):
    # With too little time the verdict is 'unknown' and the report says INCOMPLETE, never
    # that nothing fits; a circuit without two-qubit gates fits without a search.
    import json

    from embedcheck import load_device, load_patch, vet_patch
    from embedcheck.cli import main
    from helpers import DEMO_CHIP, FIXED_PATCH
    device, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    v = vet_patch(device, patch, budget_s=0.0)
    assert not v.complete
    fits = {f.circuit: f.fits_alone for f in v.fits}
    assert fits["readout"] is True and fits["round"] is None
    assert main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--budget-s", "0.000001"]) == 0
    out = capsys.readouterr().out
    assert "INCOMPLETE" in out and "No placement makes" not in out and "unknown" in out
    main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--budget-s", "0.000001", "--format", "json"])
    data = json.loads(capsys.readouterr().out)
    assert data["complete"] is False and data["search"]["complete"] is False
    full = vet_patch(device, patch)
    assert full.complete and all(f.fits_alone for f in full.fits)


def test_the_api_refuses_what_the_command_line_refuses():
    # Bad requests and impossible placements are InputErrors with a reason, not KeyErrors,
    # TypeErrors or silently accepted nonsense.
    from embedcheck import (
        InputError,
        Placement,
        audit_placement,
        load_device,
        load_patch,
        rank_placements,
    )
    from helpers import DEMO_CHIP, FIXED_PATCH
    device, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    for kwargs, words in (({"circuits": ["rund"]}, "did you mean 'round'"),
                          ({"limit": "10"}, "limit must be a whole number"),
                          ({"processes": 0}, "processes must be"),
                          ({"budget_s": -1}, "budget_s must be")):
        with pytest.raises(InputError, match=words):
            find_placements(device, patch, **kwargs)
    assert find_placements(device, patch, circuits="round", limit=1).circuits == ("round",)
    for physical, words in (((1,) * 7, "two patch qubits on one chip qubit"),
                            ((0, 1, 2, 3, 4, 5, 1000), "a0=1000 is not a qubit"),
                            ((0, 1, 2), "gives 3 physical qubits for a patch of 7")):
        with pytest.raises(InputError, match=words):
            audit_placement(device, patch, Placement(physical))
        with pytest.raises(InputError, match=words):
            rank_placements(device, patch, [Placement(physical)])


def test_empty_patches_numpy_numbers_and_huge_qubit_numbers():
    import numpy as np

    from embedcheck import (
        InputError,
        Placement,
        load_device,
        load_patch,
        rank_placements,
        vet_patch,
    )
    from embedcheck.model.patch import Patch
    from helpers import DEMO_CHIP, FIXED_PATCH
    device, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    empty = Patch("empty", (), {}, {})
    assert len(vet_patch(device, empty).ranking.placements) == 1   # the empty placement
    assert find_placements(device, patch, limit=np.int64(3), processes=np.int64(1),
                           budget_s=np.float32(5)).placements
    with pytest.raises(InputError, match="is not a qubit"):
        rank_placements(device, patch, [Placement((0, 1, 2, 3, 4, 5, 10**11))])
