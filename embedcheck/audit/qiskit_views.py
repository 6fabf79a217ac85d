"""qiskit views of our data, for the transpiler cross-check, the router estimate, placed
OpenQASM 3 and qiskit's own layout choice.

A patch circuit's OpenQASM text is loaded with qiskit's own importers (qasm2, or
qasm3 through `qiskit-qasm3-import`), so the cross-check does not share our parser.
The chip becomes a qiskit `Target` of its live couplers (`embedcheck.io.qiskit_target`).

    >>> from embedcheck.io.patchfile import patch_from_qiskit
    >>> from qiskit import QuantumCircuit
    >>> qc = QuantumCircuit(2)
    >>> _ = qc.cx(0, 1)
    >>> patch = patch_from_qiskit(qc)
    >>> circuit, names = qiskit_circuit(patch, "round")
    >>> circuit.num_qubits, names
    (2, ['q0', 'q1'])
"""
from __future__ import annotations

from typing import Any

from ..errors import InputError, InternalError
from ..io.qasm import declared_qubits, qasm_version
from ..io.qiskit_target import device_target
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement

__all__ = ["experiment_circuit", "initial_layout", "placed_qasm3", "qiskit_circuit",
           "qiskit_layout", "sdk_layout", "transpile_on_placement"]


def qiskit_circuit(patch: Patch, circuit: str) -> tuple[Any, list[str]]:
    """The named circuit as a qiskit `QuantumCircuit`, and its qubits' patch names."""
    from qiskit import qasm2, qasm3

    text = patch.circuits[circuit].qasm
    if text is None:
        raise InputError(f"circuit '{circuit}' of patch '{patch.name}' has no OpenQASM text "
                         "(it comes from a stim file): qiskit cannot read it",
                         file=patch.source)
    if qasm_version(text) == 2:
        qc = qasm2.loads(text, custom_instructions=qasm2.LEGACY_CUSTOM_INSTRUCTIONS)
    else:
        qc = qasm3.loads(text)
    # qiskit keeps the declaration order; our own reader gives each declared qubit its
    # patch name (a scalar `qubit a;` has no register in qiskit, so names cannot come
    # from registers alone).
    names = declared_qubits(text)
    if len(names) != qc.num_qubits:
        raise InternalError(f"circuit '{circuit}': qiskit reads {qc.num_qubits} qubits, "
                            f"our reader {len(names)}")
    return qc, names


def transpile_on_placement(device: Device, patch: Patch, circuit: str, placement: Placement,
                           *, seed: int = 11, target: Any = None) -> dict[str, Any]:
    """Transpile one circuit with the placement as initial layout; count two-qubit gates.

    optimization_level=0: higher levels cancel and resynthesise gates, which would hide
    both real and added gates. `target` is the device's qiskit `Target`
    (`io.qiskit_target.device_target`), for callers that transpile many times.
    """
    from qiskit import transpile

    qc, names = qiskit_circuit(patch, circuit)
    layout = _layout_list(device, patch, names, placement)
    out = transpile(qc, target=device_target(device) if target is None else target,
                    initial_layout=layout,
                    optimization_level=0, seed_transpiler=seed)
    return {"two_qubit_gates": _count_two_qubit(out), "circuit": out}


def initial_layout(device: Device, patch: Patch, circuit: str, placement: Placement) -> list[int]:
    """The placement as qiskit's `initial_layout` list for the named circuit.

    Entry i is the physical qubit of the circuit's i-th qubit (as qiskit's importer
    orders them); pass it to `transpile(..., initial_layout=...)`.
    """
    _, names = qiskit_circuit(patch, circuit)
    return _layout_list(device, patch, names, placement)


def qiskit_layout(device: Device, patch: Patch, circuit: str, placement: Placement) -> Any:
    """The placement as a qiskit `Layout` over the named circuit's qubits."""
    from qiskit.transpiler import Layout

    qc, names = qiskit_circuit(patch, circuit)
    physical = _layout_list(device, patch, names, placement)
    return Layout(dict(zip(qc.qubits, physical, strict=True)))


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


def _layout_list(device: Device, patch: Patch, names: list[str],
                 placement: Placement) -> list[int]:
    where = placement.as_dict(patch)
    spare = iter(q for q in sorted(set(device.live_qubits) - set(placement.physical)))
    return [where[n] if n in where else next(spare) for n in names]


def _count_two_qubit(qc: Any) -> int:
    total = 0
    for ins in qc.data:
        blocks = getattr(ins.operation, "blocks", ())
        if blocks:
            total += sum(_count_two_qubit(b) for b in blocks)
        elif len(ins.qubits) == 2 and ins.operation.name != "barrier":
            total += 1
    return total


def experiment_circuit(patch: Patch) -> Any:
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


def sdk_layout(device: Device, patch: Patch, *, seed: int = 11,
               call_limit: int = 10_000_000) -> tuple[Placement | None, str]:
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
