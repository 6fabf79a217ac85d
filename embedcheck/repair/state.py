"""The target of a repair and the circuits over patch qubits that every method shares.

A preparation's target is the stabilizer state it makes from |0...0> (qiskit's
`StabilizerState`, over all patch qubits); a rewrite is a list of operations
`(gate, patch qubits)` on the placement's coupled pairs (`placement_edges`), written
out as OpenQASM 2 over the patch's own register names (`to_qasm`). Single-qubit
Paulis fix the signs (`pauli_correction`, solved over GF(2)).

    >>> two_qubit_count_depth([("h", ("a",)), ("cx", ("a", "b")), ("cx", ("a", "c")),
    ...                        ("cx", ("b", "d"))])
    (3, 2)
"""
from __future__ import annotations

import re
from dataclasses import replace
from typing import Any

import numpy as np

from ..audit.qiskit_views import qiskit_circuit
from ..errors import InputError
from ..io.qasm import read_qasm
from ..model import gf2
from ..model.device import Device
from ..model.patch import Circuit, Operation, Patch
from ..model.placement import Placement

__all__ = ["Ops", "ops_circuit", "pauli_correction", "placement_edges", "rewrite_circuit",
           "target_state", "to_qasm", "two_qubit_count_depth", "with_circuit"]

Ops = list[tuple[str, tuple[str, ...]]]      # (gate, patch qubits) in order


def target_state(patch: Patch, circuit: str) -> tuple[Any, tuple[str, ...], set[str]]:
    """(StabilizerState over all patch qubits, support, qubits reset at the start)."""
    from qiskit import QuantumCircuit
    from qiskit.quantum_info import StabilizerState

    if patch.circuits[circuit].qasm is None:
        raise InputError(f"circuit '{circuit}' has no OpenQASM text to rewrite")
    qc, names = qiskit_circuit(patch, circuit)
    whole = QuantumCircuit(patch.num_qubits)
    reset_at_start: set[str] = set()
    touched: set[str] = set()
    for ins in qc.data:
        op = ins.operation.name
        if op == "barrier":
            continue
        qubits = [patch.index[names[qc.find_bit(q).index]] for q in ins.qubits]
        if op == "reset":
            q = patch.qubits[qubits[0]]
            if q in touched:
                raise InputError(f"circuit '{circuit}' resets {q} after using it: not a unitary "
                                 "preparation; it cannot be proven equivalent and is not rewritten")
            reset_at_start.add(q)
            continue
        if op in ("measure", "if_else") or getattr(ins.operation, "blocks", None):
            raise InputError(f"circuit '{circuit}' measures or branches: not a unitary "
                             "preparation; it cannot be proven equivalent and is not rewritten")
        touched.update(patch.qubits[i] for i in qubits)
        whole.append(ins.operation, qubits)
    try:
        state = StabilizerState(whole)
    except Exception:
        where = _first_non_clifford(patch, circuit)
        raise InputError(f"circuit '{circuit}' is not a Clifford circuit"
                         f"{' (gate ' + where[2] + ')' if where[2] else ''}, so its state cannot "
                         "be proven equal to a rewrite; it is not rewritten",
                         file=where[0], line=where[1]) from None
    support = tuple(q for q in patch.qubits if q in touched)
    return state, support, reset_at_start


def _first_non_clifford(patch: Patch, circuit: str) -> tuple[str | None, int | None, str]:
    """(file, line, gate name) of the circuit's first gate that is never Clifford (t, tdg,
    ccx, ...: fixed gates only, as a rotation's angle decides); else the circuit's file."""
    from qiskit.circuit.library import get_standard_gate_name_mapping
    from qiskit.quantum_info import Clifford
    gates = get_standard_gate_name_mapping()
    source = patch.circuits[circuit]
    for op in source.operations:
        gate = gates.get(op.name)
        if op.kind not in ("1q", "2q") or gate is None or gate.params:
            continue
        try:
            Clifford(gate)
        except Exception:
            return op.file or source.file, op.line, f"'{op.name}'"
    return source.file, None, ""


def placement_edges(device: Device, patch: Patch,
                    placement: Placement) -> list[tuple[str, str]]:
    """Coupled pairs of patch qubits on this placement (patch-qubit names)."""
    where = placement.as_dict(patch)
    names = list(patch.qubits)
    return [(a, b) for i, a in enumerate(names) for b in names[i + 1:]
            if device.is_coupled(where[a], where[b])]


def pauli_correction(patch: Patch, state: Any, ops: Ops) -> Ops | None:
    """Single-qubit Paulis P with P C|0> = target state, or None when none exists."""
    from qiskit.quantum_info import StabilizerState
    made = StabilizerState(ops_circuit(patch, ops))
    target_tab = state.clifford.stab
    made_tab = made.clifford.stab
    n = patch.num_qubits
    # Same group up to signs? Each target generator must be a product of made generators.
    made_xz = made_tab[:, :2 * n].astype(np.uint8)
    target_xz = target_tab[:, :2 * n].astype(np.uint8)
    if gf2.rank(np.vstack([made_xz, target_xz])) != gf2.rank(made_xz):
        return None
    from qiskit.quantum_info import Pauli
    flips = []
    for label in made.clifford.to_labels(mode="S"):
        # Sign of made generator g in the target state: measure its expectation.
        value = state.expectation_value(Pauli(label))
        if abs(abs(value) - 1) > 1e-9:
            return None
        flips.append(value < 0)
    # Find P (x, z bits) anticommuting exactly with the flipped generators:
    # symplectic product of P with g = sum(x_P z_g + z_P x_g) mod 2.
    a = np.hstack([made_xz[:, n:], made_xz[:, :n]])          # rows: (z_g, x_g)
    solution = gf2.solve(a, np.array(flips, dtype=np.uint8))
    if solution is None:
        return None
    x_bits, z_bits = solution[:n], solution[n:]
    out: Ops = []
    for i in range(n):
        if x_bits[i] and z_bits[i]:
            out.append(("y", (patch.qubits[i],)))
        elif x_bits[i]:
            out.append(("x", (patch.qubits[i],)))
        elif z_bits[i]:
            out.append(("z", (patch.qubits[i],)))
    return out


def ops_circuit(patch: Patch, ops: Ops) -> Any:
    from qiskit import QuantumCircuit
    qc = QuantumCircuit(patch.num_qubits)
    for name, qubits in ops:
        getattr(qc, name)(*[patch.index[q] for q in qubits])
    return qc


def two_qubit_count_depth(ops: Ops) -> tuple[int, int]:
    level: dict[str, int] = {}
    count = depth = 0
    for _name, qubits in ops:
        if len(qubits) != 2:
            continue
        count += 1
        d = max(level.get(q, 0) for q in qubits) + 1
        for q in qubits:
            level[q] = d
        depth = max(depth, d)
    return count, depth


def to_qasm(patch: Patch, ops: Ops) -> str:
    """OpenQASM 2 of the repaired preparation, registers named as the patch's qubits."""
    registers: dict[str, set[int | None]] = {}
    for q in patch.qubits:
        m = re.fullmatch(r"(.*?)(\d+)", q)
        reg, i = (m.group(1), int(m.group(2))) if m and m.group(1) else (q, None)
        registers.setdefault(reg, set()).add(i)
    lines = ["OPENQASM 2.0;", 'include "qelib1.inc";']
    for reg, idx in registers.items():
        size = max(i for i in idx if i is not None) + 1 if None not in idx else 1
        lines.append(f"qreg {reg}[{size}];")

    def ref(q: str) -> str:
        m = re.fullmatch(r"(.*?)(\d+)", q)
        return f"{m.group(1)}[{m.group(2)}]" if m and m.group(1) else f"{q}[0]"
    lines += [f"reset {ref(q)};" for q in patch.qubits]
    for name, qubits in ops:
        lines.append(f"{name} {', '.join(ref(q) for q in qubits)};")
    return "\n".join(lines) + "\n"


def rewrite_circuit(patch: Patch, name: str, ops: Ops) -> Circuit:
    """The circuit `name` made of `ops`, with its OpenQASM 2 text (`to_qasm`) and the
    operations our reader gives for that text (resets of every patch qubit, then `ops`,
    each with its line), built directly when every patch qubit's name round-trips
    through a register and index (d0 <-> d[0]), else read back with `read_qasm`."""
    text = to_qasm(patch, ops)
    if not all(_round_trips(q) for q in patch.qubits) or \
            not all(gate in _DIRECT_GATES for gate, _ in ops):
        return Circuit(name, tuple(read_qasm(text)), text, None)
    lines = text.splitlines()
    first = len(lines) - len(patch.qubits) - len(ops) + 1      # line of the first reset
    made = [Operation("reset", (q,), "reset", line=first + k, text=lines[first + k - 1],
                      written="reset") for k, q in enumerate(patch.qubits)]
    start = first + len(patch.qubits)
    made += [Operation(gate, tuple(qubits), "2q" if len(qubits) == 2 else "1q", line=start + k,
                       text=lines[start + k - 1], written=gate)
             for k, (gate, qubits) in enumerate(ops)]
    return Circuit(name, tuple(made), text, None)


# Gates a rewrite uses that our reader keeps as they are (one CNOT, or one 1q gate).
_DIRECT_GATES = frozenset({"cx", "h", "s", "sdg", "x", "y", "z", "sx", "sxdg", "id"})


def _round_trips(q: str) -> bool:
    m = re.fullmatch(r"(.*?)(\d+)", q)
    return bool(m and m.group(1) and str(int(m.group(2))) == m.group(2))


def with_circuit(patch: Patch, name: str, circuit: Circuit) -> Patch:
    circuits = dict(patch.circuits)
    circuits[name] = circuit
    return replace(patch, circuits=circuits)
