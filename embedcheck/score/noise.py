"""The experiment as a stim circuit (the one stim writer): noiseless, or on a placement
with noise from the chip's calibration.

Operations convert one to one: h, s, sdg, x, y, z, sx, sxdg, id, cx, cz, cy, swap,
measure (keeping the basis of stim's MX/MY/MRX/MRY), reset; prep, `rounds` x round and
readout follow each other, and the patch's detectors and observable become `rec[-k]`
lookbacks. A gate inside an `if` block has no stim equivalent here and is refused, as
are non-Clifford gates. Patch qubit i is stim qubit i.

With a device and a placement, each reported figure becomes a stim noise channel:

- Two-qubit gate with reported average gate error r: `DEPOLARIZE2(p)` after the gate
  with p = r (d + 1) / d, d = 4, i.e. p = 5r/4. For depolarizing noise that applies one
  of the d^2 - 1 non-identity Paulis with total probability p, the average gate
  infidelity is p d / (d + 1) (Nielsen, "A simple formula for the average gate
  fidelity of a quantum dynamical operation", Phys. Lett. A 303, 249 (2002)).
- Single-qubit gate with error e: `DEPOLARIZE1(3e/2)` after it (the same formula, d = 2).
- Readout error r: a bit flip (`X_ERROR(r)`, or `Z_ERROR` for an X-basis measurement)
  just before each measurement, mid-circuit ones included.
- Reset error e: `X_ERROR(e)` just after each reset.
- Idling: `PAULI_CHANNEL_1(px, py, pz)` of the one idle model (`idle.py`, Ghosh, Fowler &
  Geller, Phys. Rev. A 86, 062318 (2012)) for each wait the idle rule of the one
  schedule (`schedule.py`) counts, just before the operation that ends the wait: none
  while a qubit sits in |0> (never used, or just reset in the Z basis), none before a
  reset, none after a qubit's last operation. One channel for a whole wait equals one
  per piece of it: the twirled channel's Pauli eigenvalues, exp(-t/T1) and exp(-t/T2),
  multiply.

Gates that land off-coupler have no coupler error: a noisy circuit is only built for
placements where every circuit is swap-free.

    >>> round(two_qubit_depolarizing(0.008), 6), round(single_qubit_depolarizing(0.0004), 6)
    (0.01, 0.0006)
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ops = (Operation("h", ("a",), "1q"), Operation("cx", ("a", "b"), "2q"),
    ...        Operation("measure", ("b",), "measure"))
    >>> patch = Patch("bell", ("a", "b"), dict.fromkeys("ab", "data"),
    ...               {"round": Circuit("round", ops)})
    >>> print(stim_experiment(patch))
    H 0
    CX 0 1
    M 1
"""
from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ..errors import InputError
from ..model.device import Device, pair
from ..model.patch import Operation, Patch
from ..model.placement import Placement, check_placements
from .idle import idle_channel
from .schedule import RunIdle, run_idles

if TYPE_CHECKING:
    import stim

__all__ = ["STIM_GATES", "append_detectors", "noisy_circuit", "single_qubit_depolarizing",
           "stim_experiment", "two_qubit_depolarizing"]

STIM_GATES = {"h": "H", "s": "S", "sdg": "S_DAG", "x": "X", "y": "Y", "z": "Z", "sx": "SQRT_X",
              "sxdg": "SQRT_X_DAG", "id": "I", "cx": "CX", "cz": "CZ", "cy": "CY", "swap": "SWAP"}


def two_qubit_depolarizing(average_error: float) -> float:
    """DEPOLARIZE2 probability for a reported two-qubit average gate error (Nielsen 2002)."""
    return min(average_error * 5 / 4, 15 / 16)


def single_qubit_depolarizing(average_error: float) -> float:
    """DEPOLARIZE1 probability for a reported single-qubit average gate error (Nielsen 2002)."""
    return min(average_error * 3 / 2, 3 / 4)


def noisy_circuit(device: Device, patch: Patch, placement: Placement) -> stim.Circuit:
    """The whole experiment on `placement` as a stim circuit with the chip's noise.

    Raises `InputError` when a gate is off-coupler or cannot be simulated.
    """
    return stim_experiment(patch, device=device, placement=placement)


def stim_experiment(patch: Patch, *, device: Device | None = None,
                    placement: Placement | None = None, detectors: bool = True) -> stim.Circuit:
    """The whole experiment as a `stim.Circuit`: noiseless (barriers become TICKs), or,
    given a device and a placement, with the chip's noise (see the module docstring)."""
    import stim

    circuit = stim.Circuit()
    measured = 0
    if device is not None and placement is not None:
        grid = check_placements(device, patch, [placement])
        for run in run_idles(patch, grid, device.calibration_arrays, record_waits=True):
            body, count = _noisy_run(patch, run, device, placement)
            for _ in range(run.times):
                circuit += body
            measured += count * run.times
    else:
        for name, _, times in patch.runs():
            body, count = _plain_run(patch, name)
            for _ in range(times):
                circuit += body
            measured += count * times
    if detectors:
        append_detectors(circuit, patch, measured)
    return circuit


def append_detectors(circuit: stim.Circuit, patch: Patch, measured: int) -> None:
    """The patch's detectors and observable, as lookbacks from `measured` measurements."""
    import stim
    for det in patch.detectors:
        circuit.append("DETECTOR", [stim.target_rec(m - measured) for m in det.measurements])
    if patch.observable:
        circuit.append("OBSERVABLE_INCLUDE",
                       [stim.target_rec(m - measured) for m in patch.observable], 0)


def _plain_run(patch: Patch, name: str) -> tuple[stim.Circuit, int]:
    import stim

    body = stim.Circuit()
    count = 0
    index = patch.index
    for op in patch.circuits[name].operations:
        if op.kind == "barrier":
            body.append("TICK")
            continue
        _refuse_conditional(op, name)
        _append(body, op, [index[q] for q in op.qubits], name, None, ())
        count += op.kind == "measure"
    return body, count


def _noisy_run(patch: Patch, run: RunIdle, device: Device,
               placement: Placement) -> tuple[stim.Circuit, int]:
    """One run of a circuit with noise: each operation's noise, and before it the idle
    channel of every wait the idle rule counts (`schedule.py`), one channel per wait."""
    import stim

    timing = run.timing
    assert timing.waits is not None
    where = placement.as_dict(patch)
    index = patch.index
    qcal = device.qubit_calibration
    body = stim.Circuit()
    count = 0
    seen: set[str] = set()
    entry = dict(zip(run.entry_rows.tolist(), run.entry[:, 0].tolist(), strict=True))
    for op, waits in zip(patch.circuits[run.circuit].operations, timing.waits, strict=True):
        if op.kind == "barrier":
            continue
        qs = op.qubits
        _refuse_conditional(op, run.circuit)
        for q, wait in zip(qs, waits, strict=True):
            t = float(wait[0])
            if q not in seen:                 # its wait reaches back into the runs before
                seen.add(q)
                t += entry.get(index[q], 0.0)
            _idle(body, index[q], t, qcal.get(where[q]))
        _append(body, op, [index[q] for q in qs], run.circuit, device, [where[q] for q in qs])
        count += op.kind == "measure"
    return body, count


def _refuse_conditional(op: Operation, name: str) -> None:
    if op.conditional:
        raise InputError(f"circuit '{name}': a gate inside an 'if' block cannot be "
                         "simulated here", file=op.file, line=op.line)


def _idle(body: stim.Circuit, target: int, t_ns: float, cal: Any) -> None:
    if t_ns <= 0 or cal is None:
        return
    channel = idle_channel(t_ns, cal.t1_us, cal.t2_us)
    px, pz = channel.px, channel.pz
    if px or pz:
        body.append("PAULI_CHANNEL_1", [target], [float(px), float(px), float(pz)])


def _append(body: stim.Circuit, op: Operation, targets: list[int], circuit_name: str,
            device: Device | None, phys: Any) -> None:
    """One operation, with its noise when a device is given (`phys`: its physical qubits)."""
    qcal = device.qubit_calibration if device is not None else {}
    if op.kind == "measure":
        basis = op.written[-1].upper() if op.written in ("mx", "my", "mrx", "mry") else ""
        r = getattr(qcal.get(phys[0]), "readout_error", None) if device is not None else None
        if r:
            body.append("Z_ERROR" if basis == "X" else "X_ERROR", targets, r)
        body.append("M" + basis, targets)
        return
    if op.kind == "reset":
        basis = op.written[-1].upper() if op.written in ("rx", "ry", "mrx", "mry") else ""
        body.append("R" + basis, targets)
        e = getattr(qcal.get(phys[0]), "reset_error", None) if device is not None else None
        if e:
            body.append("Z_ERROR" if basis == "X" else "X_ERROR", targets, e)
        return
    gate = STIM_GATES.get(op.name)
    if gate is None:
        raise InputError(f"circuit '{circuit_name}': '{op.written or op.name}' is not a Clifford "
                         "gate stim can simulate", file=op.file, line=op.line)
    if device is None:
        body.append(gate, targets)
        return
    if op.kind == "2q" and not device.is_coupled(*phys):
        raise InputError(f"circuit '{circuit_name}': gate on physical {phys[0]}-{phys[1]} is "
                         "off-coupler; only swap-free placements are simulated",
                         file=op.file, line=op.line)
    body.append(gate, targets)
    if op.kind == "2q":
        c = device.coupler_calibration.get(pair(*phys))
        if c is not None and c.two_qubit_error:
            body.append("DEPOLARIZE2", targets, two_qubit_depolarizing(c.two_qubit_error))
    else:
        e = getattr(qcal.get(phys[0]), "single_qubit_error", None)
        if e:
            body.append("DEPOLARIZE1", targets, single_qubit_depolarizing(e))

