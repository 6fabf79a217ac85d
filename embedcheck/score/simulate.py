"""The experiment's noiseless sanity check, and its circuit-level fault distance.

`check_detectors(patch)` asks stim whether every declared detector and the
observable are deterministic without noise: stim refuses to build a detector error
model when one is not (stim's `Circuit.detector_error_model`, Gidney, "Stim: a fast
stabilizer circuit simulator", Quantum 5, 497 (2021)). A detector that fails is a
bug in the circuit or its declaration, not a layout problem. The circuit comes from
the one stim writer (`noise.stim_experiment`).

`fault_distance(patch)` is the fewest faults that flip the observable and no detector
(stim's search for undetectable logical errors), with a generic fault after every
operation, so that it is a property of the circuit, not of a calibration.

    >>> from embedcheck.io.patchfile import patch_from_family
    >>> patch = patch_from_family("repetition", distance=3, rounds=2)
    >>> check_detectors(patch), fault_distance(patch)
    ([], 3)
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from ..model.patch import Detector, Patch, observable_is_detector_parity
from .noise import stim_experiment

if TYPE_CHECKING:
    import stim

__all__ = ["DetectorProblem", "check_detectors", "fault_distance", "fault_distance_at_most"]


@dataclass(frozen=True, kw_only=True)
class DetectorProblem:
    """A declared detector (or, with `detector` None, the observable) that is random
    without noise; `message` says so in plain words."""

    message: str
    detector: Detector | None = None

    def __str__(self) -> str:
        return self.message


def check_detectors(patch: Patch) -> list[DetectorProblem]:
    """Problems with the declared detectors and observable (empty when sound)."""
    circuit = stim_experiment(patch)
    try:                                  # the usual case: everything is deterministic
        circuit.detector_error_model()
        return []
    except ValueError:
        pass
    problems = []
    for det in patch.detectors:
        single = stim_experiment(replace(patch, detectors=(det,), observable=()))
        try:
            single.detector_error_model()
        except ValueError:
            record = patch.measurement_record()
            which = ", ".join(f"{record[m][0]}[{record[m][1]}]:{record[m][2].clbit or m}"
                              for m in det.measurements)
            problems.append(DetectorProblem(
                message=f"detector '{det.name}' ({which}) is random without noise", detector=det))
    if not problems:
        try:
            circuit.detector_error_model()
        except ValueError:
            problems.append(DetectorProblem(
                message="the logical observable is random without noise"))
    return problems


def fault_distance(patch: Patch, *, noise: float = 1e-3, max_weight: int = 6,
                   max_detectors: int = 150) -> int | float | None:
    """The fewest faults that flip the observable and no detector (stim's search).

    Every operation of the experiment gets a generic fault (depolarizing after gates,
    bit flips before measurements and after resets) so that the count is a property
    of the circuit, not of a calibration. Returns None when the patch declares no
    observable or no such fault set is found within stim's search limits, and above
    `max_detectors` (stim's search ran out of memory on a distance-7 surface code with 7
    rounds here); `fault_distance_at_most` then gives a bound. `math.inf` when the
    observable is a parity of the detectors: no set of faults flips it unseen.
    """
    if not patch.observable or len(patch.detectors) > max_detectors:
        return None                      # nothing to flip, or too large to search here
    if observable_is_detector_parity(patch):
        return math.inf
    noisy = _generic_noise(patch, noise)
    try:
        errors = noisy.search_for_undetectable_logical_errors(
            dont_explore_detection_event_sets_with_size_above=max_weight,
            dont_explore_edges_with_degree_above=max_weight,
            dont_explore_edges_increasing_symptom_degree=False)
    except ValueError:
        return None
    return len(errors)


def fault_distance_at_most(patch: Patch, *, noise: float = 1e-3) -> int | float | None:
    """An upper bound on the fault distance, for circuits too big for `fault_distance`:
    the fewest *graphlike* faults (each flipping at most two detectors, after stim
    decomposes the rest) that flip the observable unseen, from stim's
    `shortest_graphlike_error`, which scales to large circuits. Faults it ignores could
    only make the true distance smaller. None without an observable or such a fault."""
    if not patch.observable:
        return None
    if observable_is_detector_parity(patch):
        return math.inf
    noisy = _generic_noise(patch, noise)         # outside the try: our errors stay ours
    try:
        errors = noisy.shortest_graphlike_error(ignore_ungraphlike_errors=True)
    except ValueError:
        return None
    return len(errors)


def _generic_noise(patch: Patch, noise: float) -> stim.Circuit:
    """The experiment with a generic fault after every gate and reset and before every
    measurement, so distances are properties of the circuit, not of a calibration."""
    import stim

    plain = stim_experiment(patch)
    noisy = stim.Circuit()
    for inst in plain:
        name, targets = inst.name, inst.targets_copy()
        qubits = [t.value for t in targets if t.is_qubit_target]
        if name.startswith("M") and qubits:
            noisy.append("X_ERROR" if name in ("M", "MR") else "Z_ERROR", qubits, noise)
        noisy.append(inst)
        if name in ("CX", "CZ", "CY", "SWAP"):
            noisy.append("DEPOLARIZE2", qubits, noise)
        elif name in ("H", "S", "S_DAG", "X", "Y", "Z", "SQRT_X", "SQRT_X_DAG", "I"):
            noisy.append("DEPOLARIZE1", qubits, noise)
        elif name.startswith("R") and qubits:
            noisy.append("X_ERROR" if name == "R" else "Z_ERROR", qubits, noise)
    return noisy
