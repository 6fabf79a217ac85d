"""Patches from YAML, OpenQASM 2/3, qiskit and stim agree; stim's own circuits as references."""
from collections import Counter

import pytest
import stim
from qiskit import qasm2, qasm3

from embedcheck import load_patch
from embedcheck.cli import main
from embedcheck.io.patchfile import patch_from_qiskit, patch_from_stim
from embedcheck.score.simulate import check_detectors
from helpers import DEMO_PATCH, FIXED_PATCH

# The flagged weight-4 round with helpers measured then reset (as stim's MR does), so
# roles can be inferred from any form. d0..d3 = 0..3, f0, f1 = 4, 5, a0 = 6.
ROUND_QASM2 = """OPENQASM 2.0;
include "qelib1.inc";
qreg d[4];
qreg f[2];
qreg a[1];
creg x[3];
creg z[2];
h a[0];
cx a[0], f[0];
cx a[0], f[1];
cx f[0], d[0];
cx f[0], d[1];
cx f[1], d[2];
cx f[1], d[3];
cx a[0], f[1];
cx a[0], f[0];
h a[0];
measure a[0] -> x[0];
reset a[0];
measure f[0] -> x[1];
reset f[0];
measure f[1] -> x[2];
reset f[1];
cx d[0], f[0];
cx d[1], f[0];
cx d[2], f[1];
cx d[3], f[1];
measure f[0] -> z[0];
reset f[0];
measure f[1] -> z[1];
reset f[1];
""".replace("creg x[3];", "creg xs[3];").replace("-> x[", "-> xs[").replace(
    "creg z[2];", "creg zs[2];").replace("-> z[", "-> zs[")

ROUND_STIM = """H 6
CX 6 4 6 5 4 0 4 1 5 2 5 3 6 5 6 4
H 6
MR 6 4 5
CX 0 4 1 4 2 5 3 5
MR 4 5
"""

ROUND_YAML = """embedcheck_patch: 1
name: five-forms
qubits: {data: [d0, d1, d2, d3], flag: [f0, f1], ancilla: [a0]}
circuits:
  round:
    file: round.qasm
"""


def _by_position(patch):
    """Interaction multiset, and roles, with qubits renamed by their sorted position."""
    rank = {q: i for i, q in enumerate(patch.qubits)}
    order = {"d": 0, "f": 4, "a": 6}
    if all(q[0] in order for q in patch.qubits):           # d0.. f0.. a0 -> 0..6
        rank = {q: order[q[0]] + int(q[1:]) for q in patch.qubits}
    pairs = Counter(frozenset(rank[q] for q in op.qubits)
                    for op in patch.circuits["round"].two_qubit_gates)
    return pairs, {rank[q]: r for q, r in patch.roles.items()}


def test_five_forms_give_the_same_patch(tmp_path):
    (tmp_path / "round.qasm").write_text(ROUND_QASM2)
    (tmp_path / "patch.yaml").write_text(ROUND_YAML)
    q3 = qasm3.dumps(qasm2.loads(ROUND_QASM2))
    (tmp_path / "round3.qasm").write_text(q3)
    (tmp_path / "round.stim").write_text(ROUND_STIM)
    forms = {
        "yaml": load_patch(tmp_path / "patch.yaml"),
        "openqasm2": load_patch(tmp_path / "round.qasm"),
        "openqasm3": load_patch(tmp_path / "round3.qasm"),
        "qiskit": patch_from_qiskit(qasm2.loads(ROUND_QASM2)),
        "stim": load_patch(tmp_path / "round.stim"),
        "stim object": patch_from_stim(stim.Circuit(ROUND_STIM)),
    }
    reference = _by_position(forms["yaml"])
    assert sum(reference[0].values()) == 12
    for name, patch in forms.items():
        assert _by_position(patch) == reference, name
    assert not forms["yaml"].roles_inferred and forms["stim"].roles_inferred


@pytest.mark.parametrize("task,distance", [("surface_code:rotated_memory_z", 3),
                                            ("surface_code:rotated_memory_z", 5),
                                            ("repetition_code:memory", 3),
                                            ("repetition_code:memory", 7)])
def test_stim_generated_circuits_as_stim_and_as_its_openqasm(task, distance, tmp_path):
    # Reference: stim's own generated circuits (Gidney, Quantum 5, 497 (2021)).
    circuit = stim.Circuit.generated(task, distance=distance, rounds=4)
    flat = circuit.flattened()
    stim_cx = [(a.value, b.value) for inst in flat if inst.name == "CX"
               for a, b in zip(inst.targets_copy()[::2], inst.targets_copy()[1::2], strict=False)]
    used = {q for pair in stim_cx for q in pair} | {t.value for inst in flat
                                                    if inst.name in ("M", "MR", "R")
                                                    for t in inst.targets_copy()}
    ancillas = distance ** 2 - 1 if task.startswith("surface") else distance - 1
    data = distance ** 2 if task.startswith("surface") else distance
    forms = [patch_from_stim(circuit)]
    for version in (2, 3):
        path = tmp_path / f"c{version}.qasm"
        path.write_text(circuit.to_qasm(open_qasm_version=version, skip_dets_and_obs=True))
        forms.append(load_patch(path))
    for patch in forms:
        total = sum(len(patch.circuits[n].two_qubit_gates) * t for n, t in patch.experiment())
        assert total == len(stim_cx)
        assert patch.num_qubits == len(used) == data + ancillas
        roles = Counter(patch.roles.values())
        assert roles == {"data": data, "ancilla": ancillas}
    # The stim form keeps stim's gate list exactly, in order.
    p = forms[0]
    ours = [tuple(int(q[1:]) for q in op.qubits) for n, t in p.experiment()
            for _ in range(t) for op in p.circuits[n].two_qubit_gates]
    assert ours == stim_cx
    assert len(p.detectors) == circuit.num_detectors and check_detectors(p) == []


def test_source_lines_survive_comments_includes_and_definitions(tmp_path):
    text = """// a comment line
OPENQASM 2.0;
include "qelib1.inc";
// another comment
gate entangle a, b {
  h a;
  cx a, b;
}
qreg q[3];

entangle q[0], q[1];   // line 11
cx q[1],
   q[2];               // a statement over two lines, starting at 12
"""
    path = tmp_path / "c.qasm"
    path.write_text(text)
    gates = load_patch(path).circuits["round"].two_qubit_gates
    assert [(g.line, g.written) for g in gates] == [(11, "entangle"), (12, "cx")]


def test_samples_declare_deterministic_detectors():
    # Reference: stim refuses a detector error model when a detector is random.
    for f in (DEMO_PATCH, FIXED_PATCH):
        patch = load_patch(f)
        assert len(patch.detectors) == 12 and len(patch.observable) == 4
        assert check_detectors(patch) == []


def test_a_missing_cnot_makes_a_detector_random(tmp_path):
    text = FIXED_PATCH.read_text().replace("file: flagged_weight4_round.qasm", "file: round.qasm")
    (tmp_path / "p.yaml").write_text(text)
    broken = (FIXED_PATCH.parent / "flagged_weight4_round.qasm").read_text()
    broken = broken.replace("cx a[0], f[1];\ncx f[0], d[0];", "cx f[0], d[0];", 1)
    (tmp_path / "round.qasm").write_text(broken)
    problems = check_detectors(load_patch(tmp_path / "p.yaml"))
    assert any("X_first" in p.message for p in problems), problems


@pytest.mark.parametrize("change,expected", [
    (('"round[1]:zcheck[0]", "readout:m[0]"', '"round[1]:zcheck[7]", "readout:m[0]"'),
     "detectors[10].measurements[0]: 'round[1]:zcheck[7]': no measurement of circuit 'round' "
     "writes bit 'zcheck[7]'"),
    (('"round[0]:xcheck[0]", "round[1]:xcheck[0]"', '"round[0]:xcheck[0]", "round[2]:xcheck[0]"'),
     "'round[2]:xcheck[0]': circuit 'round' runs 2 time(s)"),
    (('observable: ["readout:m[0]"', 'observable: ["readuot:m[0]"'),
     "the patch has no circuit 'readuot' (did you mean 'readout'?)"),
])
def test_bad_detectors(tmp_path, capsys, change, expected):
    text = DEMO_PATCH.read_text().replace(*change)
    assert text != DEMO_PATCH.read_text()
    (tmp_path / "p.yaml").write_text(text)
    (tmp_path / "flagged_weight4_round.qasm").write_text(
        (DEMO_PATCH.parent / "flagged_weight4_round.qasm").read_text())
    assert main(["validate", str(tmp_path / "p.yaml")]) == 2
    err = capsys.readouterr().err
    assert expected in err and err.count("\n") == 1


def test_role_registers_and_a_register_that_does_not_exist(tmp_path, capsys):
    (tmp_path / "round.qasm").write_text(ROUND_QASM2)
    yaml = ROUND_YAML.replace("qubits: {data: [d0, d1, d2, d3], flag: [f0, f1], ancilla: [a0]}",
                              "role_registers: {data: [d], flag: [f], ancilla: [a]}")
    (tmp_path / "p.yaml").write_text(yaml)
    patch = load_patch(tmp_path / "p.yaml")
    assert patch.qubits_with_role("flag") == ("f0", "f1") and not patch.roles_inferred
    (tmp_path / "p.yaml").write_text(yaml.replace("ancilla: [a]", "ancilla: [anc]"))
    assert main(["validate", str(tmp_path / "p.yaml")]) == 2
    assert "role_registers.ancilla[0]: register 'anc' is not used" in capsys.readouterr().err


def test_show_patch_reports_inferred_roles(tmp_path, capsys):
    (tmp_path / "round.stim").write_text(ROUND_STIM)
    assert main(["show", str(tmp_path / "round.stim")]) == 0
    out = capsys.readouterr().out
    assert "inferred" in out and "flag     q4, q5" in out


def test_a_single_round_file_calls_its_measured_qubits_helpers(tmp_path):
    # One round, ancilla measured once at the end and never reset: still the ancilla,
    # since data are read out after the rounds, not in them.
    from embedcheck import load_patch
    path = tmp_path / "one.qasm"
    path.write_text('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg d[2];\nqreg a[1];\ncreg c[1];\n'
                    'cx d[0], a[0];\ncx d[1], a[0];\nmeasure a[0] -> c[0];\n')
    patch = load_patch(path)
    assert patch.roles == {"d0": "data", "d1": "data", "a0": "ancilla"} and patch.roles_inferred
    everything = tmp_path / "all.qasm"                 # a file measuring every qubit it uses
    everything.write_text('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\ncreg c[2];\n'
                          'cx q[0], q[1];\nmeasure q[0] -> c[0];\nmeasure q[1] -> c[1];\n')
    assert set(load_patch(everything).roles.values()) == {"data"}


def test_data_read_out_in_the_y_basis_stay_data(tmp_path):
    # Issue 16: a colour-code patch (7 data, 3 ancillas measuring the X checks, then Z
    # checks through the same ancillas) whose readout measures every data qubit in the
    # Y basis as qiskit writes it (sdg; h; measure; then h; s to undo the basis change).
    # The single-qubit gates after the readout are not "acted on again": the data stay
    # data, the three reused ancillas stay ancillas.
    from embedcheck import load_patch
    checks = [(0, 1, 2, 3), (1, 2, 4, 5), (2, 3, 5, 6)]      # the [[7,1,3]] code's faces
    round_lines = ["reset a;", "h a;"]
    round_lines += [f"cx a[{k}], d[{q}];" for k, face in enumerate(checks) for q in face]
    round_lines += ["h a;", "measure a -> xs;", "reset a;"]
    round_lines += [f"cx d[{q}], a[{k}];" for k, face in enumerate(checks) for q in face]
    round_lines += ["measure a -> zs;"]
    header = 'OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg d[7];\nqreg a[3];\n'
    readout = "creg m[7];\nsdg d;\nh d;\nmeasure d -> m;\nh d;\ns d;\n"
    block = lambda text: "\n".join("      " + line for line in text.splitlines())   # noqa: E731
    (tmp_path / "colour.yaml").write_text(
        "embedcheck_patch: 1\nname: colour\nrounds: 2\ncircuits:\n  round:\n    qasm: |\n"
        + block(header + "creg xs[3];\ncreg zs[3];\n" + "\n".join(round_lines)) + "\n"
        + "  readout:\n    qasm: |\n" + block(header + readout) + "\n")
    roles = load_patch(tmp_path / "colour.yaml").roles
    assert [q for q, r in roles.items() if r == "data"] == [f"d{i}" for i in range(7)]
    assert [q for q, r in roles.items() if r == "ancilla"] == ["a0", "a1", "a2"]
