"""Code families against stim's generated circuits: graphs, CNOT counts, detectors, distance."""
from collections import Counter

import pytest
import rustworkx as rx
import stim

from embedcheck import Device, audit_placement, find_placements, heavy_hex
from embedcheck.cli import main
from embedcheck.io.patchfile import patch_from_family as build_patch
from embedcheck.io.patchfile import patch_from_stim
from embedcheck.model.codes import family_yaml
from embedcheck.score.simulate import check_detectors, fault_distance, fault_distance_at_most


def _round_graph(patch):
    g = rx.PyGraph()
    g.add_nodes_from(range(patch.num_qubits))
    g.add_edges_from_no_data(list(patch.interaction_counts(["round"])))
    return g


@pytest.mark.parametrize("family,task,distance", [
    ("surface", "surface_code:rotated_memory_z", 3),
    ("surface", "surface_code:rotated_memory_z", 5),
    ("repetition", "repetition_code:memory", 3),
    ("repetition", "repetition_code:memory", 7),
])
def test_round_matches_stims_generated_circuit(family, task, distance):
    # Reference: stim's generated memory circuits (Gidney, Quantum 5, 497 (2021)); their
    # REPEAT body is one round.
    ours = build_patch(family, distance=distance, rounds=3)
    theirs = patch_from_stim(stim.Circuit.generated(task, distance=distance, rounds=4))
    assert theirs.rounds == 3
    assert rx.is_isomorphic(_round_graph(ours), _round_graph(theirs))
    assert len(ours.circuits["round"].two_qubit_gates) == \
        len(theirs.circuits["round"].two_qubit_gates)
    assert Counter(ours.roles.values()) == Counter(theirs.roles.values())


@pytest.mark.parametrize("family,options", [
    ("repetition", {"distance": 3}), ("repetition", {"distance": 5}),
    ("repetition", {"distance": 3, "basis": "x"}), ("repetition", {"distance": 4, "basis": "x"}),
    ("flagged", {"prep": "unitary"}), ("flagged", {"prep": "product"}),
    ("flagged", {"prep": "naive"}), ("surface", {"distance": 3}), ("surface", {"distance": 5}),
])
def test_every_family_passes_the_noiseless_check(family, options):
    for rounds in (1, 3):
        patch = build_patch(family, rounds=rounds, **options)
        assert patch.detectors and patch.observable
        assert check_detectors(patch) == []


def test_a_missing_cnot_fails_and_names_the_detector(tmp_path, capsys):
    text = family_yaml("surface", distance=3, rounds=2)
    first_cx = next(line for line in text.splitlines() if line.strip().startswith("cx"))
    broken = text.replace(first_cx + "\n", "", 1)
    path = tmp_path / "broken.yaml"
    path.write_text(broken)
    assert main(["validate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "is random without noise" in err and "round[" in err and "syn[" in err
    assert err.count("\n") == 1


@pytest.mark.parametrize("family,task,distance", [
    ("repetition", "repetition_code:memory", 3), ("repetition", "repetition_code:memory", 5),
    ("surface", "surface_code:rotated_memory_z", 3),
    ("surface", "surface_code:rotated_memory_z", 5),
])
def test_fault_distance_equals_the_distance_as_for_stims_circuits(family, task, distance):
    ours = fault_distance(build_patch(family, distance=distance, rounds=3))
    theirs = fault_distance(patch_from_stim(stim.Circuit.generated(task, distance=distance,
                                                                   rounds=3)))
    assert ours == theirs == distance


def test_big_circuits_get_a_graphlike_bound_like_stims_own(tmp_path, capsys):
    # Above 150 detectors the exhaustive search is skipped; the bound from graphlike faults
    # must agree with the same bound on stim's generated circuit of that size.
    ours = build_patch("surface", distance=7, rounds=7)
    assert len(ours.detectors) > 150 and fault_distance(ours) is None
    theirs = patch_from_stim(stim.Circuit.generated("surface_code:rotated_memory_z",
                                                    distance=7, rounds=7))
    assert fault_distance_at_most(ours) == fault_distance_at_most(theirs) == 7
    out = tmp_path / "s7.yaml"
    assert main(["code", "surface", "--distance", "7", "--rounds", "7", "-o", str(out)]) == 0
    assert "fault distance at most 7 (graphlike" in capsys.readouterr().err


def test_the_flagged_family_fits_heavy_hex_with_no_added_gates():
    patch = build_patch("flagged", rounds=2)
    device = Device.from_lattice(heavy_hex(2, 2), name="hh")
    result = find_placements(device, patch, limit=None)
    assert result.placements
    assert audit_placement(device, patch, result.placements[0]).swap_free


def test_code_command_writes_a_valid_patch(tmp_path, capsys):
    out = tmp_path / "rep.yaml"
    assert main(["code", "repetition", "--distance", "5", "--rounds", "3", "-o", str(out)]) == 0
    assert "fault distance 5" in capsys.readouterr().err
    assert main(["validate", str(out)]) == 0
    assert main(["code", "surface", "--distance", "4"]) == 2
    assert "odd distance" in capsys.readouterr().err


@pytest.mark.parametrize("d", [3, 5, 7])
def test_heavy_hex_code_layout_matches_rustworkx(d):
    # Reference: rustworkx.generators.heavy_hex_graph(d), whose docstring cites the same
    # paper's lattice figure; (5d^2 - 2d - 1)/2 qubits and d^2 data qubits (Chamberland
    # et al., Phys. Rev. X 10, 011022 (2020); also qiskit's CouplingMap.from_heavy_hex).
    patch = build_patch("heavy-hex", distance=d, rounds=2)
    g = rx.PyGraph()
    g.add_nodes_from(range(patch.num_qubits))
    g.add_edges_from_no_data(list(patch.interaction_counts()))
    assert rx.is_isomorphic(g, rx.generators.heavy_hex_graph(d))
    assert patch.num_qubits == (5 * d * d - 2 * d - 1) // 2
    assert len(patch.qubits_with_role("data")) == d * d


@pytest.mark.parametrize("family", ["heavy-hex", "heavy-hex-chipfit"])
@pytest.mark.parametrize("d", [3, 5])
def test_heavy_hex_families_are_sound(family, d):
    patch = build_patch(family, distance=d, rounds=2)
    assert check_detectors(patch) == []
    assert fault_distance(patch) == d


def test_the_chip_fitting_variant_embeds_in_heavy_hex_and_the_paper_layout_does_not():
    from embedcheck.place.graphs import shortest_cycle
    chip = Device.from_lattice(heavy_hex(6, 6), name="hh")
    variant = build_patch("heavy-hex-chipfit", distance=3, rounds=2)
    assert shortest_cycle(variant.num_qubits, list(variant.interaction_counts())) == 12
    placed = find_placements(chip, variant, limit=1)
    assert placed.placements and audit_placement(chip, variant, placed.placements[0]).swap_free
    paper = find_placements(chip, build_patch("heavy-hex", distance=3, rounds=2))
    assert not paper.placements and "of length 10: " in paper.reasons[0]


@pytest.mark.parametrize("family", ["heavy-hex", "heavy-hex-chipfit", "surface"])
def test_matching_gains_from_distance_five_under_uniform_noise(family):
    # Below threshold a bigger code must decode better (the point of the heavy-hex code
    # paper, Chamberland et al., Phys. Rev. X 10, 011022 (2020): a threshold exists for the
    # Z memory). Before the bulk flags were folded into the Z detectors, stim's model split
    # the flag hook into pieces that gave matching a distance-3 graph at d = 5, and d = 5
    # decoded five times worse than d = 3 at p = 0.001. stim's graphlike distance and the
    # fault distance did not see it; sampling does.
    import networkx as nx
    import numpy as np
    import pymatching

    from embedcheck import CouplerCalibration, Placement, QubitCalibration, noisy_circuit
    p, rates = 0.001, {}
    for d in (3, 5):
        patch = build_patch(family, distance=d, rounds=d)
        graph = nx.Graph()
        graph.add_nodes_from(range(patch.num_qubits))
        for circuit in patch.circuits.values():
            graph.add_edges_from(tuple(patch.index[q] for q in op.qubits)
                                 for op in circuit.two_qubit_gates)
        device = Device.from_graph(
            graph, name="own", coupler_calibration={tuple(sorted(e)): CouplerCalibration(
                4 * p / 5, 300.0) for e in graph.edges},
            qubit_calibration={q: QubitCalibration(readout_error=p, single_qubit_error=2 * p / 3,
                                                   reset_error=p) for q in graph.nodes})
        circuit = noisy_circuit(device, patch, Placement(tuple(range(patch.num_qubits))))
        matching = pymatching.Matching.from_detector_error_model(
            circuit.detector_error_model(decompose_errors=True))
        dets, obs = circuit.compile_detector_sampler(seed=11).sample(40_000,
                                                                     separate_observables=True)
        rates[d] = int(np.sum(np.any(matching.decode_batch(dets) != obs, axis=1)))
    assert rates[5] * 2 < rates[3], rates        # measured: 0.00018 against 0.00097


def test_code_shows_its_stages_on_a_terminal(tmp_path, capsys, monkeypatch):
    # Before: 'code surface --distance 7 --rounds 3' ran two minutes with nothing shown
    # (stim's fault-distance search reports nothing while it runs, so its stage is named).
    import sys

    from embedcheck.pipeline.codes import build_code
    seen = []
    build_code("surface", distance=3, rounds=1, progress=seen.append)
    assert seen == ["writing the patch", "checking 8 detectors without noise",
                    "fault distance: stim's exhaustive search over 8 detectors (the longest "
                    "step)"]
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True)
    assert main(["code", "surface", "--distance", "3", "--rounds", "1",
                 "-o", str(tmp_path / "s.yaml")]) == 0
    err = capsys.readouterr().err
    assert "  code: fault distance: stim's exhaustive search over 8 detectors" in err
    assert err.rstrip().splitlines()[-1].strip().startswith("wrote ")    # the line cleared
