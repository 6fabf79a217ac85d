"""Our OpenQASM reader against qiskit's importers, and the flagged check's published counts."""
from collections import Counter

import pytest
from qiskit import qasm2, transpile
from qiskit.circuit.random import random_circuit

from embedcheck import InputError, load_patch
from embedcheck.io.qasm import read_qasm
from helpers import DEMO_PATCH


def _our_pairs(text):
    return Counter(frozenset(op.qubits) for op in read_qasm(text) if op.kind == "2q")


def _qiskit_pairs(text):
    """CNOT count per qubit pair from qiskit's own importer and standard decompositions."""
    qc = qasm2.loads(text, custom_instructions=qasm2.LEGACY_CUSTOM_INSTRUCTIONS)
    out = transpile(qc, basis_gates=["cx", "u", "measure", "reset"], optimization_level=0)
    names = {}
    for bit in out.qubits:
        reg, i = out.find_bit(bit).registers[0]
        names[bit] = f"{reg.name}{i}"
    return Counter(frozenset(names[q] for q in ins.qubits) for ins in out.data
                   if ins.operation.name == "cx")


@pytest.mark.parametrize("seed", range(8))
def test_random_circuits_give_qiskits_cnot_pairs(seed):
    # Reference: qiskit's OpenQASM 2 importer and its standard gate decompositions.
    qc = random_circuit(5, 6, max_operands=3, seed=seed)
    text = qasm2.dumps(qc)
    assert _our_pairs(text) == _qiskit_pairs(text)


def test_custom_gates_broadcast_and_swap_unroll_like_qiskit():
    text = """OPENQASM 2.0;
include "qelib1.inc";
gate pairup a, b { h a; cx a, b; cz b, a; }
qreg q[3];
qreg r[3];
cx q, r;
pairup q[0], r[2];
swap q[1], q[2];
ccx q[0], q[1], r[0];
"""
    assert _our_pairs(text) == _qiskit_pairs(text)
    swaps = [op for op in read_qasm(text) if op.written == "swap"]
    assert len([op for op in swaps if op.kind == "2q"]) == 3
    assert {op.line for op in swaps} == {8}


def test_flagged_weight4_round_counts():
    # Flagged weight-4 X check: 8 CNOTs; two weight-2 Z checks: 4 CNOTs; 5 measurements
    # per round (Chamberland et al., Phys. Rev. X 10, 011022 (2020), the flagged
    # check circuits of the heavy-hex code; also common practice).
    patch = load_patch(DEMO_PATCH)
    ops = patch.circuits["round"].operations
    split = max(i for i, op in enumerate(ops) if op.kind == "measure" and op.qubits == ("f1",)
                and i < len(ops) - 2) + 1          # after the X check's last measurement
    x_part, z_part = ops[:split], ops[split:]
    assert sum(op.kind == "2q" for op in x_part) == 8
    assert sum(op.kind == "2q" for op in z_part) == 4
    assert sum(op.kind == "measure" for op in ops) == 5
    assert {q for op in x_part if op.kind == "measure" for q in op.qubits} == {"a0", "f0", "f1"}
    assert all(set(op.qubits) <= {"d0", "d1", "d2", "d3", "f0", "f1"}
               for op in z_part if op.kind == "2q")


def test_openqasm3_gives_the_same_interaction_graph_as_openqasm2():
    q2 = (DEMO_PATCH.parent / "flagged_weight4_round.qasm").read_text()
    qc = qasm2.loads(q2)
    from qiskit import qasm3
    q3 = qasm3.dumps(qc)
    assert "OPENQASM 3" in q3
    assert _our_pairs(q3) == _our_pairs(q2)
    ours3 = read_qasm(q3)
    assert sum(op.kind == "measure" for op in ours3) == 5


def test_gates_in_if_blocks_count_and_are_marked():
    text = """OPENQASM 3.0;
include "stdgates.inc";
qubit[2] q;
bit[1] c;
c[0] = measure q[0];
if (c[0]) {
  cx q[0], q[1];
}
"""
    ops = read_qasm(text, file="t.qasm")
    gate = next(op for op in ops if op.kind == "2q")
    assert gate.conditional and gate.line == 7 and gate.text == "cx q[0], q[1];"


def test_inline_lines_are_lines_of_the_yaml_file():
    patch = load_patch(DEMO_PATCH)
    lines = DEMO_PATCH.read_text().splitlines()
    for op in patch.circuits["prep"].operations:
        assert lines[op.line - 1].strip() == op.text


HEAD2 = 'OPENQASM 2.0; include "qelib1.inc";\nqreg q[2];\n'


@pytest.mark.parametrize("text,expected", [
    (HEAD2 + "cx q[0] q[1];", "t.qasm:3: OpenQASM syntax error"),
    (HEAD2 + "foo q[0], q[1];", "t.qasm:3: unknown gate 'foo'"),
    (HEAD2 + "cx q[0], q[2];", "t.qasm:3: index 2 is outside register 'q'"),
    (HEAD2 + "cx q[0], r[0];", "t.qasm:3: qubit register 'r' is not declared"),
    (HEAD2 + "cx q[0], q[0];", "t.qasm:3: 'cx' acts twice on qubit q0"),
])
def test_bad_qasm_names_file_and_line(text, expected):
    with pytest.raises(InputError) as err:
        read_qasm(text, file="t.qasm")
    assert str(err.value).startswith(expected)


@pytest.mark.parametrize("text,expected", [
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\ncnot q[0], q[1];',
     ":4: unknown gate 'cnot'"),
    ('OPENQASM 2.0;\ninclude "mine.inc";\nqreg q[2];', ':2: include "mine.inc" is not supported'),
    ("OPENQASM 2.0;\nqreg q[2];\nh q[0];", ":3: gate 'h' is not defined: include the standard"),
    ("OPENQASM 4.0;\nqreg q[2];", ":1: OPENQASM 4.0 is not supported"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\nqreg q[3];',
     ":4: register 'q' is declared twice"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\nmeasure q[0] -> x[0];',
     ":4: classical register 'x' is not declared"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\nu3(1, 2) q[0];',
     ":4: gate 'u3' takes 3 parameter(s), got 2"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[3];\ncx q[0], q[1], q[2];',
     ":4: gate 'cx' acts on 2 qubit(s), got 3"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[3];\nccx q[0], q[1];',
     ":4: gate 'ccx' acts on 3 qubit(s), got 2"),
    ('OPENQASM 2.0;\ninclude "qelib1.inc";\nopaque magic a, b;\nqreg q[2];',
     ":3: opaque gates are not supported"),
    ('OPENQASM 3.0;\ninclude "stdgates.inc";\nqubit[2] q;\nfor int i in [0:1] { x q[i]; }',
     ":4: for loops are not supported yet"),
])
def test_more_bad_qasm(text, expected, capsys):
    with pytest.raises(InputError) as err:
        read_qasm(text, file="t.qasm")
    assert expected in str(err.value)
    assert capsys.readouterr().err == ""        # the parser's own chatter is not shown


def test_plain_text_is_a_syntax_error_without_chatter(capsys):
    with pytest.raises(InputError) as err:
        read_qasm("hello: this is not a circuit", file="t.qasm")
    assert "t.qasm:1: OpenQASM syntax error" in str(err.value)
    assert capsys.readouterr().err == ""


def test_the_common_gate_table_matches_qiskits_standard_gates():
    # Reference: qiskit's standard gate library (the reader skips importing it for these).
    from qiskit.circuit.library import get_standard_gate_name_mapping

    from embedcheck.io.qasm import COMMON_GATE_PARAMETERS
    gates = get_standard_gate_name_mapping()
    assert {name: len(gates[name].params) for name in COMMON_GATE_PARAMETERS} == \
        COMMON_GATE_PARAMETERS
