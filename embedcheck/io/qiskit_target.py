"""Chips from and to qiskit `Target`s: couplers, native directions, native gate, errors,
durations and T1/T2 both ways (dead qubits and couplers are left out of a target).

    >>> from embedcheck.model.device import CouplerCalibration, Device
    >>> dev = Device(name="pair", qubits=(0, 1), couplers=((0, 1),), directed={(0, 1): (0, 1)},
    ...              coupler_calibration={(0, 1): CouplerCalibration(0.01, 300.0)})
    >>> back = device_from_target(device_target(dev), name="again")
    >>> back.couplers, dict(back.directed), back.coupler_calibration[(0, 1)].two_qubit_error
    (((0, 1),), {(0, 1): (0, 1)}, 0.01)
"""
from __future__ import annotations

from typing import Any

from ..errors import InputError
from ..model.device import CouplerCalibration, Device, QubitCalibration, pair

__all__ = ["device_from_target", "device_target"]

_NS, _US = 1e-9, 1e-6


def _native_gate(name: str) -> Any:
    from qiskit.circuit.library import CXGate, CZGate, ECRGate
    return {"cx": CXGate, "cz": CZGate, "ecr": ECRGate}[name]()


def device_target(device: Device) -> Any:
    """A qiskit `Target` of the live chip, carrying its calibration.

    The native two-qubit gate sits on every live coupler, in its native direction only
    for directed couplers; sx, x and rz on live qubits carry the single-qubit error
    and duration, measure the readout error and duration, reset the reset error; T1
    and T2 go into the qubit properties. Dead qubits and couplers are left out. The
    control-flow operations are listed too: without them qiskit refuses circuits with
    classically-controlled blocks.
    """
    from qiskit.circuit import (
        ForLoopOp,
        IfElseOp,
        Measure,
        Parameter,
        Reset,
        SwitchCaseOp,
        WhileLoopOp,
    )
    from qiskit.circuit.library import RZGate, SXGate, XGate
    from qiskit.providers.backend import QubitProperties
    from qiskit.transpiler import InstructionProperties, Target

    def props(error: float | None, duration_ns: float | None) -> Any:
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
        cc = device.coupler_calibration.get((a, b))
        p = (cc.two_qubit_error, cc.duration_ns) if cc else (None, None)
        for e in ([device.directed[(a, b)]] if (a, b) in device.directed else [(a, b), (b, a)]):
            two[e] = props(*p)
    target.add_instruction(_native_gate(device.native_two_qubit_gate), two)
    live = device.live_qubits
    empty = QubitCalibration()

    def one(key_error: str, key_duration: str | None) -> dict[tuple[int], Any]:
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


def device_from_target(target: Any, *, name: str) -> Device:
    """A `Device` from a qiskit `Target`: couplers, directions, native gate, calibration.

    A coupler whose two-qubit gate the target lists in one direction only is directed.
    Errors and durations are read from the instruction properties (durations in ns),
    T1/T2 from the qubit properties (in us).
    """
    names = [op for op in ("cx", "cz", "ecr") if op in target.operation_names]
    if not names:
        raise InputError("the target has no cx, cz or ecr gate")
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


def _prop(target: Any, op: str, q: int) -> Any:
    if op not in target.operation_names:
        return None
    return target[op].get((q,))


def _error(target: Any, op: str, q: int) -> float | None:
    p = _prop(target, op, q)
    return p.error if p is not None else None


def _ns(p: Any) -> float | None:
    return None if p is None or p.duration is None else round(p.duration / _NS, 9)
