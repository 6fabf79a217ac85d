"""qiskit views of our data, for the transpiler cross-check and the router estimate.

A patch circuit's OpenQASM text is loaded with qiskit's own importers (qasm2, or
qasm3 through `qiskit-qasm3-import`), so the cross-check does not share our parser.
The chip becomes a `CouplingMap` of its live couplers in both directions.
"""
from __future__ import annotations

from .device import Device
from .io.qasm import qasm_version
from .patch import Patch
from .search import Placement



def qiskit_circuit(patch: Patch, circuit: str):
    """The named circuit as a qiskit `QuantumCircuit`, and its qubits' patch names."""
    from qiskit import qasm2, qasm3

    text = patch.circuits[circuit].qasm
    if text is None:
        raise ValueError(f"circuit '{circuit}' has no OpenQASM text")
    if qasm_version(text) == 2:
        qc = qasm2.loads(text, custom_instructions=qasm2.LEGACY_CUSTOM_INSTRUCTIONS)
    else:
        qc = qasm3.loads(text)
    names = []
    for bit in qc.qubits:
        regs = qc.find_bit(bit).registers
        if regs:
            reg, i = regs[0]
            names.append(f"{reg.name}{i}" if reg.size > 1 or reg.name not in patch.index
                         else reg.name)
        else:
            names.append(f"q{qc.find_bit(bit).index}")
    return qc, names


def device_target(device: Device):
    """A qiskit `Target`: CNOT both ways on live couplers, u/measure/reset on live qubits.

    The control-flow operations are listed too: without them qiskit refuses circuits
    with classically-controlled blocks.
    """
    from qiskit.circuit import (ForLoopOp, IfElseOp, Measure, Parameter, Reset, SwitchCaseOp,
                                WhileLoopOp)
    from qiskit.circuit.library import CXGate, UGate
    from qiskit.transpiler import Target

    target = Target(num_qubits=max(device.qubits) + 1)
    live = [(q,) for q in device.live_qubits]
    target.add_instruction(CXGate(), {e: None for a, b in device.live_couplers
                                      for e in ((a, b), (b, a))})
    theta, phi, lam = Parameter("theta"), Parameter("phi"), Parameter("lam")
    target.add_instruction(UGate(theta, phi, lam), {q: None for q in live})
    target.add_instruction(Measure(), {q: None for q in live})
    target.add_instruction(Reset(), {q: None for q in live})
    for op, name in ((IfElseOp, "if_else"), (WhileLoopOp, "while_loop"),
                     (ForLoopOp, "for_loop"), (SwitchCaseOp, "switch_case")):
        target.add_instruction(op, name=name)
    return target


def transpile_on_placement(device: Device, patch: Patch, circuit: str, placement: Placement,
                           *, seed: int = 11) -> dict:
    """Transpile one circuit with the placement as initial layout; count two-qubit gates.

    optimization_level=0: higher levels cancel and resynthesise gates, which would hide
    both real and added gates.
    """
    from qiskit import transpile

    qc, names = qiskit_circuit(patch, circuit)
    where = placement.as_dict(patch)
    spare = iter(q for q in sorted(set(device.live_qubits) - set(placement.physical)))
    layout = [where[n] if n in where else next(spare) for n in names]
    out = transpile(qc, target=device_target(device), initial_layout=layout,
                    optimization_level=0, seed_transpiler=seed)
    return {"two_qubit_gates": _count_two_qubit(out), "circuit": out}


def _count_two_qubit(qc) -> int:
    total = 0
    for ins in qc.data:
        blocks = getattr(ins.operation, "blocks", ())
        if blocks:
            total += sum(_count_two_qubit(b) for b in blocks)
        elif len(ins.qubits) == 2 and ins.operation.name != "barrier":
            total += 1
    return total
