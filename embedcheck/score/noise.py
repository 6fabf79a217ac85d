"""A placement as a noisy stim circuit, from the chip's calibration.

Conversions (each reported figure -> stim noise channel):

- Two-qubit gate with reported average gate error r: `DEPOLARIZE2(p)` after the gate
  with p = r (d + 1) / d, d = 4, i.e. p = 5r/4. For depolarizing noise that applies one
  of the d^2 - 1 non-identity Paulis with total probability p, the average gate
  infidelity is p d / (d + 1) (Nielsen, "A simple formula for the average gate
  fidelity of a quantum dynamical operation", Phys. Lett. A 303, 249 (2002)).
- Single-qubit gate with error e: `DEPOLARIZE1(3e/2)` after it (the same formula, d = 2).
- Readout error r: a bit flip (`X_ERROR(r)`, or `Z_ERROR` for an X-basis measurement)
  just before each measurement, mid-circuit ones included.
- Reset error e: `X_ERROR(e)` just after each reset.
- Idling for t with T1, T2: `PAULI_CHANNEL_1(px, py, pz)` with px = py = (1 - e^(-t/T1))/4,
  pz = (1 - e^(-t/T2))/2 - (1 - e^(-t/T1))/4, the Pauli-twirled amplitude and phase
  damping channel (Ghosh, Fowler & Geller, Phys. Rev. A 86, 062318 (2012)), placed
  where the as-soon-as-possible schedule (`schedule.py`) has the qubit wait: before
  an operation that starts after the qubit was free (or after the circuit started,
  for a qubit that already holds state), and at the end of each circuit.

Gates that land off-coupler have no coupler error: a noisy circuit is only built for
placements where every circuit is swap-free.

    >>> round(two_qubit_depolarizing(0.008), 6), round(single_qubit_depolarizing(0.0004), 6)
    (0.01, 0.0006)
"""
from __future__ import annotations

import math

from ..model.device import Device, pair
from ..errors import InputError
from ..model.patch import Patch
from .schedule import _duration, _median_coupler_duration
from ..place.search import Placement
from .simulate import _STIM, append_detectors


def two_qubit_depolarizing(average_error: float) -> float:
    """DEPOLARIZE2 probability for a reported two-qubit average gate error (Nielsen 2002)."""
    return min(average_error * 5 / 4, 15 / 16)


def single_qubit_depolarizing(average_error: float) -> float:
    """DEPOLARIZE1 probability for a reported single-qubit average gate error (Nielsen 2002)."""
    return min(average_error * 3 / 2, 3 / 4)


def idle_pauli(t_ns: float, t1_us: float | None, t2_us: float | None) -> tuple[float, float, float]:
    """(px, py, pz) of the Pauli-twirled amplitude and phase damping channel after t_ns."""
    if not t_ns or (not t1_us and not t2_us):
        return 0.0, 0.0, 0.0
    t_us = t_ns / 1000.0
    d1 = -math.expm1(-t_us / t1_us) if t1_us else 0.0
    d2 = -math.expm1(-t_us / t2_us) if t2_us else 0.0
    px = d1 / 4
    pz = max(d2 / 2 - d1 / 4, 0.0)
    return px, px, pz


def noisy_circuit(device: Device, patch: Patch, placement: Placement, *, noise: bool = True):
    """The whole experiment on `placement` as a stim circuit with the chip's noise.

    Patch qubit i is stim qubit i. Detectors and the observable are the patch's.
    Raises `InputError` when a gate is off-coupler or cannot be simulated.
    """
    import stim

    where = placement.as_dict(patch)
    index = patch.index
    qcal = device.qubit_calibration
    median = _median_coupler_duration(device)
    circuit = stim.Circuit()
    measured = 0
    for name, again, times in patch.runs():
        body = stim.Circuit()
        count = 0
        free = {q: 0.0 for q in patch.qubits}
        started: set = set(patch.waiting(name, again))     # these idle from time 0
        for op in patch.circuits[name].operations:
            qs = op.qubits
            if op.kind == "barrier":
                t = max(free[q] for q in qs)
                for q in qs:
                    if q in started and noise:
                        _idle(body, index[q], t - free[q], qcal.get(where[q]))
                    free[q] = t
                continue
            if op.conditional:
                raise InputError(f"circuit '{name}': a gate inside an 'if' block cannot be "
                                 "simulated here", file=op.file, line=op.line)
            phys = [where[q] for q in qs]
            targets = [index[q] for q in qs]
            length = _duration(device, op, phys, median, set())   # the schedule's rule
            start = max(free[q] for q in qs)
            if noise:
                for q in qs:
                    if q in started:
                        _idle(body, index[q], start - free[q], qcal.get(where[q]))
            _append(body, device, op, phys, targets, noise, name)
            if op.kind == "measure":
                count += 1
            for q in qs:
                started.add(q)
                free[q] = start + length
        end = max(free.values(), default=0.0)
        if noise:
            for q in sorted(started, key=index.get):   # a fixed order: same circuit every run
                _idle(body, index[q], end - free[q], qcal.get(where[q]))
        for _ in range(times):
            circuit += body
        measured += count * times
    append_detectors(circuit, patch, measured)
    return circuit


def _idle(body, target, t_ns, cal) -> None:
    if t_ns <= 0 or cal is None:
        return
    px, py, pz = idle_pauli(t_ns, cal.t1_us, cal.t2_us)
    if px or pz:
        body.append("PAULI_CHANNEL_1", [target], [px, py, pz])


def _append(body, device, op, phys, targets, noise, circuit_name) -> None:
    qcal = device.qubit_calibration
    if op.kind == "measure":
        basis = op.written[-1].upper() if op.written in ("mx", "my", "mrx", "mry") else ""
        r = getattr(qcal.get(phys[0]), "readout_error", None)
        if noise and r:
            body.append("Z_ERROR" if basis == "X" else "X_ERROR", targets, r)
        body.append("M" + basis, targets)
        return
    if op.kind == "reset":
        basis = op.written[-1].upper() if op.written in ("rx", "ry", "mrx", "mry") else ""
        body.append("R" + basis, targets)
        e = getattr(qcal.get(phys[0]), "reset_error", None)
        if noise and e:
            body.append("Z_ERROR" if basis == "X" else "X_ERROR", targets, e)
        return
    gate = _STIM.get(op.name)
    if gate is None:
        raise InputError(f"circuit '{circuit_name}': '{op.written or op.name}' is not a Clifford "
                         "gate stim can simulate", file=op.file, line=op.line)
    if op.kind == "2q" and not device.is_coupled(*phys):
        raise InputError(f"circuit '{circuit_name}': gate on physical {phys[0]}-{phys[1]} is "
                         "off-coupler; only swap-free placements are simulated",
                         file=op.file, line=op.line)
    body.append(gate, targets)
    if not noise:
        return
    if op.kind == "2q":
        c = device.coupler_calibration.get(pair(*phys))
        if c is not None and c.two_qubit_error:
            body.append("DEPOLARIZE2", targets, two_qubit_depolarizing(c.two_qubit_error))
    else:
        e = getattr(qcal.get(phys[0]), "single_qubit_error", None)
        if e:
            body.append("DEPOLARIZE1", targets, single_qubit_depolarizing(e))

