"""Regression tests for defects a code review found (each test names the defect)."""
import json
import textwrap

import pytest

from embedcheck import Device, InputError, audit_placement, load_device, load_patch, vet_patch
from embedcheck.cli import main
from embedcheck.io.qasm import read_qasm
from embedcheck.io.stimfile import read_stim
from embedcheck.model.constraints import build
from embedcheck.model.device import QubitCalibration
from embedcheck.model.lattices import line
from embedcheck.model.patch import Circuit, Patch
from embedcheck.place.search import find_placements
from embedcheck.score.simulate import check_detectors
from helpers import TEST_DATA

DATA = TEST_DATA


def test_the_listed_placement_is_the_best_member_of_its_symmetry_orbit():
    # The round's symmetries do not see the preparation: a member of the same orbit
    # needs fewer off-coupler preparation gates, and that member must be the one listed.
    device, patch = load_device(DATA / "wheel.yaml"), load_patch(DATA / "star.yaml")
    vetting = vet_patch(device, patch)
    best = vetting.best_audit
    prep = next(c for c in best.circuits if c.circuit == "prep")
    assert len(prep.off_coupler) == 2


def test_unconstrained_qubits_never_get_a_missing_physical_qubit():
    device = Device.from_lattice(line(3), name="l3", qubit_calibration={
        0: QubitCalibration(readout_error=0.001), 1: QubitCalibration(readout_error=0.2),
        2: QubitCalibration(readout_error=0.2)})
    ops = (read_qasm('OPENQASM 2.0; include "qelib1.inc"; qreg d[2]; qreg a[1]; creg c[1]; '
                     'cx d[0], d[1]; measure a[0] -> c[0];'))
    patch = Patch("iso", ("d0", "d1", "a0"), {"d0": "data", "d1": "data", "a0": "ancilla"},
                  {"round": Circuit("round", tuple(ops))})
    result = find_placements(device, patch, constraints=build(["ancilla: readout_error <= 0.01"]))
    assert all(min(p.physical) >= 0 for p in result.placements)
    assert all(p.as_dict(patch)["a0"] == 0 for p in result.placements)


def test_openqasm_cz_unrolls_to_gates_stim_can_run():
    text = ('OPENQASM 2.0; include "qelib1.inc"; qreg q[2]; creg c[1]; h q[0]; '
            'cz q[0], q[1]; h q[1]; measure q[1] -> c[0];')
    ops = read_qasm(text)
    assert {op.name for op in ops if op.kind == "1q"} <= {"h", "s", "sdg", "x", "y", "z"}
    patch = Patch("cz", ("q0", "q1"), {"q0": "data", "q1": "data"},
                  {"round": Circuit("round", tuple(ops), text)})
    assert check_detectors(patch) == []


def test_cz_has_no_direction_on_a_directed_chip():
    device = Device.from_lattice(line(3), name="d", directed={(0, 1): (0, 1), (1, 2): (1, 2)})
    text = 'OPENQASM 2.0; include "qelib1.inc"; qreg q[3]; cz q[1], q[0]; cz q[2], q[1];'
    patch = Patch("cz", ("q0", "q1", "q2"), dict.fromkeys(("q0", "q1", "q2"), "data"),
                  {"round": Circuit("round", tuple(read_qasm(text)), text)})
    result = find_placements(device, patch, constraints=build(forbid_direction_fixes=True))
    assert result.placements
    assert all(c.direction_fixes == 0 for c in
               audit_placement(device, patch, result.placements[0]).circuits)


def test_register_names_that_collide_are_refused():
    with pytest.raises(InputError) as err:
        read_qasm('OPENQASM 2.0; include "qelib1.inc"; qreg q[11]; qreg q1[1];', file="c.qasm")
    assert "both give a qubit named 'q10'" in str(err.value)


@pytest.mark.parametrize("text", ["M 0\nMZZ 0 1\n", "M 0\nMPAD 0\nDETECTOR rec[-1]\n"])
def test_stim_pair_measurements_and_padding_are_refused(text):
    with pytest.raises(InputError) as err:
        read_stim(text, file="x.stim")
    assert "not supported yet" in str(err.value)


def test_figure_undetected_on_request_and_json_without_infinity(tmp_path, capsys):
    out = tmp_path / "rep.yaml"
    assert main(["code", "repetition", "--distance", "3", "--rounds", "2", "-o", str(out)]) == 0
    chip = tmp_path / "line.yaml"
    assert main(["generate", "line", "--size", "7", "-o", str(chip)]) == 0
    capsys.readouterr()
    assert main(["find", str(chip), str(out), "--figure", "undetected", "--format", "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["ranked_by"] == "undetected"
    snap = tmp_path / "snap.yaml"
    snap.write_text(textwrap.dedent("""\
        embedcheck_chip: 1
        name: snap
        family: {kind: line, size: 7}
        snapshots:
          - {timestamp: '2026-11-29T06:00:00Z', dead_qubits: [3], defaults: {two_qubit_error: 0.01}}
          - {timestamp: '2026-11-30T06:00:00Z', defaults: {two_qubit_error: 0.01}}
        """))
    assert main(["find", str(snap), str(out), "--format", "json"]) == 0
    text = capsys.readouterr().out
    assert "Infinity" not in text and "NaN" not in text
    json.loads(text)


def test_parts_keep_their_gate_directions():
    device = Device(name="v", qubits=tuple(range(6)), couplers=((0, 1), (1, 2), (3, 4), (4, 5)),
                    directed={(0, 1): (1, 0), (1, 2): (1, 2), (3, 4): (4, 3), (4, 5): (4, 5)})
    text = ('OPENQASM 2.0; include "qelib1.inc"; qreg q[6]; cx q[1], q[0]; cx q[1], q[2]; '
            'cx q[4], q[3]; cx q[5], q[4];')
    names = tuple(f"q{i}" for i in range(6))
    patch = Patch("v", names, dict.fromkeys(names, "data"),
                  {"round": Circuit("round", tuple(read_qasm(text)), text)})
    result = find_placements(device, patch, constraints=build(forbid_direction_fixes=True))
    assert not result.placements
    assert not any("q0, q1, q2 cannot be placed" in r for r in result.reasons)
