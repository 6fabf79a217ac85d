"""qiskit views of our data, for the transpiler cross-check and the router estimate.

A patch circuit's OpenQASM text is loaded with qiskit's own importers (qasm2, or
qasm3 through `qiskit-qasm3-import`), so the cross-check does not share our parser.
The chip becomes a `CouplingMap` of its live couplers in both directions.
"""
from __future__ import annotations

from ..model.device import CouplerCalibration, Device, QubitCalibration, pair
from ..io.qasm import declared_qubits, qasm_version
from ..model.patch import Patch
from ..place.search import Placement



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
    # qiskit keeps the declaration order; our own reader gives each declared qubit its
    # patch name (a scalar `qubit a;` has no register in qiskit, so names cannot come
    # from registers alone).
    names = declared_qubits(text)
    if len(names) != qc.num_qubits:
        raise ValueError(f"circuit '{circuit}': qiskit reads {qc.num_qubits} qubits, "
                         f"our reader {len(names)}")
    return qc, names


_NS, _US = 1e-9, 1e-6


def _native_gate(name: str):
    from qiskit.circuit.library import CXGate, CZGate, ECRGate
    return {"cx": CXGate, "cz": CZGate, "ecr": ECRGate}[name]()


def device_target(device: Device):
    """A qiskit `Target` of the live chip, carrying its calibration.

    The native two-qubit gate sits on every live coupler, in its native direction only
    for directed couplers; sx, x and rz on live qubits carry the single-qubit error
    and duration, measure the readout error and duration, reset the reset error; T1
    and T2 go into the qubit properties. Dead qubits and couplers are left out. The
    control-flow operations are listed too: without them qiskit refuses circuits with
    classically-controlled blocks.
    """
    from qiskit.circuit import (ForLoopOp, IfElseOp, Measure, Parameter, Reset, SwitchCaseOp,
                                WhileLoopOp)
    from qiskit.circuit.library import RZGate, SXGate, XGate
    from qiskit.providers.backend import QubitProperties
    from qiskit.transpiler import InstructionProperties, Target

    def props(error, duration_ns):
        return InstructionProperties(error=error,
                                     duration=None if duration_ns is None else duration_ns * _NS)

    n = max(device.qubits) + 1
    qcal = device.qubit_calibration
    qubit_props = []
    for q in range(n):
        c = qcal.get(q)
        qubit_props.append(QubitProperties(
            t1=c.t1_us * _US if c and c.t1_us else None,
            t2=c.t2_us * _US if c and c.t2_us else None))
    target = Target(num_qubits=n, qubit_properties=qubit_props)
    two = {}
    for a, b in device.live_couplers:
        c = device.coupler_calibration.get((a, b))
        p = (c.two_qubit_error, c.duration_ns) if c else (None, None)
        for e in ([device.directed[(a, b)]] if (a, b) in device.directed else [(a, b), (b, a)]):
            two[e] = props(*p)
    target.add_instruction(_native_gate(device.native_two_qubit_gate), two)
    live = device.live_qubits
    empty = QubitCalibration()

    def one(key_error, key_duration):
        return {(q,): props(getattr(qcal.get(q, empty), key_error),
                            getattr(qcal.get(q, empty), key_duration) if key_duration else None)
                for q in live}
    target.add_instruction(SXGate(), one("single_qubit_error", "single_qubit_duration_ns"))
    target.add_instruction(XGate(), one("single_qubit_error", "single_qubit_duration_ns"))
    target.add_instruction(RZGate(Parameter("theta")),
                           {(q,): InstructionProperties(error=0.0, duration=0.0) for q in live})
    target.add_instruction(Measure(), one("readout_error", "measurement_duration_ns"))
    target.add_instruction(Reset(), one("reset_error", None))
    for op, name in ((IfElseOp, "if_else"), (WhileLoopOp, "while_loop"),
                     (ForLoopOp, "for_loop"), (SwitchCaseOp, "switch_case")):
        target.add_instruction(op, name=name)
    return target


def device_from_target(target, *, name: str) -> Device:
    """A `Device` from a qiskit `Target`: couplers, directions, native gate, calibration.

    A coupler whose two-qubit gate the target lists in one direction only is directed.
    Errors and durations are read from the instruction properties (durations in ns),
    T1/T2 from the qubit properties (in us).
    """
    names = [op for op in ("cx", "cz", "ecr") if op in target.operation_names]
    if not names:
        raise ValueError("the target has no cx, cz or ecr gate")
    native = names[0]
    qargs = {tuple(q) for q in target[native]}
    couplers, directed, ccal = set(), {}, {}
    for a, b in sorted(qargs):
        key = pair(a, b)
        couplers.add(key)
        if (b, a) not in qargs:
            directed[key] = (a, b)
        if key not in ccal or (a, b) == key:
            p = target[native][(a, b)]
            ccal[key] = CouplerCalibration(p.error if p else None, _ns(p))
    qcal = {}
    for q in range(target.num_qubits):
        qp = target.qubit_properties[q] if target.qubit_properties else None
        qcal[q] = QubitCalibration(
            readout_error=_error(target, "measure", q),
            single_qubit_error=_error(target, "sx", q),
            reset_error=_error(target, "reset", q),
            t1_us=qp.t1 / _US if qp is not None and qp.t1 else None,
            t2_us=qp.t2 / _US if qp is not None and qp.t2 else None,
            single_qubit_duration_ns=_ns(_prop(target, "sx", q)),
            measurement_duration_ns=_ns(_prop(target, "measure", q)))
    return Device(name=name, qubits=tuple(range(target.num_qubits)),
                  couplers=tuple(sorted(couplers)), qubit_calibration=qcal,
                  coupler_calibration=ccal, directed=directed, native_two_qubit_gate=native)


def _prop(target, op, q):
    if op not in target.operation_names:
        return None
    return target[op].get((q,))


def _error(target, op, q):
    p = _prop(target, op, q)
    return p.error if p is not None else None


def _ns(p):
    return None if p is None or p.duration is None else round(p.duration / _NS, 9)


def transpile_on_placement(device: Device, patch: Patch, circuit: str, placement: Placement,
                           *, seed: int = 11) -> dict:
    """Transpile one circuit with the placement as initial layout; count two-qubit gates.

    optimization_level=0: higher levels cancel and resynthesise gates, which would hide
    both real and added gates.
    """
    from qiskit import transpile

    qc, names = qiskit_circuit(patch, circuit)
    layout = _layout_list(device, patch, names, placement)
    out = transpile(qc, target=device_target(device), initial_layout=layout,
                    optimization_level=0, seed_transpiler=seed)
    return {"two_qubit_gates": _count_two_qubit(out), "circuit": out}


def initial_layout(device: Device, patch: Patch, circuit: str, placement: Placement) -> list[int]:
    """The placement as qiskit's `initial_layout` list for the named circuit.

    Entry i is the physical qubit of the circuit's i-th qubit (as qiskit's importer
    orders them); pass it to `transpile(..., initial_layout=...)`.
    """
    _, names = qiskit_circuit(patch, circuit)
    return _layout_list(device, patch, names, placement)


def qiskit_layout(device: Device, patch: Patch, circuit: str, placement: Placement):
    """The placement as a qiskit `Layout` over the named circuit's qubits."""
    from qiskit.transpiler import Layout

    qc, names = qiskit_circuit(patch, circuit)
    physical = _layout_list(device, patch, names, placement)
    return Layout({bit: p for bit, p in zip(qc.qubits, physical)})


def placed_qasm3(device: Device, patch: Patch, circuit: str, placement: Placement) -> str:
    """The circuit on the placement's physical qubits ($n) in the chip's native gates.

    Translated by qiskit at optimization_level=0 with the placement as initial layout;
    meant for swap-free circuits (the caller checks with the audit first).
    """
    from qiskit import qasm3

    out = transpile_on_placement(device, patch, circuit, placement)["circuit"]
    where = " ".join(f"{q}=${p}" for q, p in placement.as_dict(patch).items())
    head = (f"// Placed by embedcheck: circuit '{circuit}' of patch '{patch.name}' on chip "
            f"'{device.name}'\n// placement {where}\n// native gates from qiskit's transpiler "
            "at optimization_level=0\n")
    return head + qasm3.dumps(out)


def _layout_list(device, patch, names, placement):
    where = placement.as_dict(patch)
    spare = iter(q for q in sorted(set(device.live_qubits) - set(placement.physical)))
    return [where[n] if n in where else next(spare) for n in names]


def _count_two_qubit(qc) -> int:
    total = 0
    for ins in qc.data:
        blocks = getattr(ins.operation, "blocks", ())
        if blocks:
            total += sum(_count_two_qubit(b) for b in blocks)
        elif len(ins.qubits) == 2 and ins.operation.name != "barrier":
            total += 1
    return total


def experiment_circuit(patch: Patch):
    """The whole experiment (prep, rounds x round, readout) as one qiskit circuit on the
    patch's qubits (qubit i is patch qubit i), or None when a circuit has no OpenQASM."""
    from qiskit import QuantumCircuit

    parts = []
    for name, times in patch.experiment():
        if patch.circuits[name].qasm is None:
            return None
        qc, names = qiskit_circuit(patch, name)
        parts += [(qc, names)] * times
    clbits = sum(qc.num_clbits for qc, _ in parts)
    whole = QuantumCircuit(patch.num_qubits, clbits)
    offset = 0
    for qc, names in parts:
        qubits = [patch.index[n] if n in patch.index else None for n in names]
        if None in qubits:       # a declared qubit the patch does not use: leave it out
            keep = [i for i, q in enumerate(qubits) if q is not None]
            if len(keep) != len(qubits):
                return None
        whole.compose(qc, qubits=qubits, clbits=list(range(offset, offset + qc.num_clbits)),
                      inplace=True)
        offset += qc.num_clbits
    return whole


def sdk_layout(device: Device, patch: Patch, *, seed: int = 11, call_limit: int = 10_000_000):
    """The placement qiskit's own VF2Layout pass picks for the whole experiment, or None.

    VF2Layout searches layouts that need no routing on the chip's `Target` and keeps
    the one its own error model likes best; it finds none when the experiment needs
    routing everywhere.
    """
    from qiskit.converters import circuit_to_dag
    from qiskit.transpiler.passes import VF2Layout

    circuit = experiment_circuit(patch)
    if circuit is None:
        return None, "a circuit has no OpenQASM text for qiskit"
    layout_pass = VF2Layout(target=device_target(device), seed=seed, call_limit=call_limit)
    layout_pass.run(circuit_to_dag(circuit))
    layout = layout_pass.property_set["layout"]
    reason = layout_pass.property_set["VF2Layout_stop_reason"]
    if layout is None:
        return None, f"VF2Layout found no layout ({getattr(reason, 'value', reason)})"
    physical = tuple(layout[circuit.qubits[i]] for i in range(patch.num_qubits))
    return Placement(physical), "found"
