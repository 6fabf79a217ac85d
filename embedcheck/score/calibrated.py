"""Calibration noise for any stim circuit: your circuit, a chip, and where it sits on the chip.

`noisy(circuit, device, placement)` reads a noiseless `stim.Circuit` as a patch (split at its
REPEAT block into preparation, round and readout, detectors and observables as stim gives
them: `io.patchfile.patch_from_stim`; the result is flattened, the REPEAT unrolled), places
its qubit i on chip qubit `placement[i]`, and writes it back on the same qubit numbers with
the chip's noise by the same conversions and the same schedule and
idle model as every other figure here (`noise.stim_experiment`, README "Cost model"): two-
and single-qubit depolarizing from the reported gate errors, readout and reset flips,
idling from T1/T2 and the as-soon-as-possible schedule. `noisy_tasks` makes one
`sinter.Task` per placement, for users who sample with sinter. Off-coupler gates have no
calibrated error, so a placement that puts one off the couplers is refused.

    >>> import stim
    >>> from embedcheck import Device, square_grid, CouplerCalibration
    >>> chip = Device.from_lattice(square_grid(1, 3), name="line3", coupler_calibration={
    ...     (0, 1): CouplerCalibration(0.008, 300.0), (1, 2): CouplerCalibration(0.008, 300.0)})
    >>> bell = stim.Circuit("R 0 1\\nH 0\\nCX 0 1\\nM 0 1\\nDETECTOR rec[-1] rec[-2]")
    >>> print(noisy(bell, chip, [1, 2]))     # stim qubits 0, 1 on chip qubits 1, 2
    R 0 1
    H 0
    CX 0 1
    DEPOLARIZE2(0.01) 0 1
    M 0 1
    DETECTOR rec[-1] rec[-2]
"""
from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from ..errors import InputError
from ..model.device import Device
from ..model.placement import Placement, check_placements, off_coupler_counts
from .noise import noisy_circuit

__all__ = ["noisy", "noisy_tasks"]


def noisy(circuit: Any, device: Device, placement: Mapping[int, int] | Sequence[int]) -> Any:
    """`circuit` (a noiseless `stim.Circuit`) with `device`'s noise, its qubit i on chip
    qubit `placement[i]` (a sequence indexed by stim qubit, or a dict)."""
    patch, where = _placed(circuit, device, placement)
    return _renumbered(noisy_circuit(device, patch, where), patch)


def noisy_tasks(circuit: Any, device: Device,
                placements: Sequence[Mapping[int, int] | Sequence[int]], *,
                decoder: str = "pymatching") -> list[Any]:
    """One `sinter.Task` per placement: the noisy circuit, its detector error model, and
    `json_metadata` naming the chip and the placement (sinter groups results by it)."""
    import sinter
    tasks = []
    for placement in placements:
        patch, where = _placed(circuit, device, placement)
        noisy_one = _renumbered(noisy_circuit(device, patch, where), patch)
        tasks.append(sinter.Task(
            circuit=noisy_one, decoder=decoder,
            detector_error_model=noisy_one.detector_error_model(decompose_errors=True),
            json_metadata={"chip": device.name, "placement": list(where.physical)}))
    return tasks


def _renumbered(circuit: Any, patch: Any) -> Any:
    """The noisy circuit on the user's own qubit numbers (it is written on the patch's qubit
    order, 0..n-1: stim qubit i is patch qubit 'qi')."""
    import stim
    back = [int(q[1:]) for q in patch.qubits]
    if back == list(range(len(back))):
        return circuit
    out = stim.Circuit()
    for inst in circuit.flattened():
        targets = [stim.GateTarget(back[t.value]) if t.is_qubit_target else t
                   for t in inst.targets_copy()]
        out.append(inst.name, targets, inst.gate_args_copy())
    return out


def _placed(circuit: Any, device: Device,
            placement: Mapping[int, int] | Sequence[int]) -> tuple[Any, Placement]:
    from ..io.patchfile import patch_from_stim
    patch = patch_from_stim(circuit, name="circuit")
    indices = [int(q[1:]) for q in patch.qubits]             # stim qubit i is named 'qi'
    try:
        physical = tuple(int(placement[i]) for i in indices)
    except (KeyError, IndexError):
        missing = next(i for i in indices if (i not in placement if isinstance(placement, Mapping)
                                              else i >= len(placement)))
        raise InputError(f"placement: no chip qubit given for stim qubit {missing}") from None
    except (TypeError, ValueError):
        raise InputError("placement: give a chip qubit number for each stim qubit") from None
    where = Placement(physical)
    check_placements(device, patch, [where])
    if off_coupler_counts(device, patch, [where], list(patch.circuits)).any():
        raise InputError("placement: some two-qubit gates land on chip qubits with no coupler; "
                         "calibration noise is defined for gates on couplers only (find a "
                         "swap-free placement with embedcheck.find_placements)")
    return patch, where
