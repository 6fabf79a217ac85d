"""The experiment as a stim circuit, and the noiseless sanity check of its detectors.

`to_stim(patch)` writes prep, `rounds` x round and readout as one stim circuit with the
patch's detectors and observable (`rec[-k]` lookbacks computed from the measurement
record). Only Clifford operations convert: h, s, sdg, x, y, z, sx, sxdg, id, cx, cz,
cy, swap, measure, reset; a gate inside an `if` block has no stim equivalent here
and is refused, as are non-Clifford gates.

`check_detectors(patch)` asks stim whether every declared detector and the
observable are deterministic without noise: stim refuses to build a detector error
model when one is not (stim's `Circuit.detector_error_model`, Gidney, "Stim: a fast
stabilizer circuit simulator", Quantum 5, 497 (2021)). A detector that fails is a
bug in the circuit or its declaration, not a layout problem.

    >>> from embedcheck.io.patchfile import load_patch          # doctest: +SKIP
    >>> check_detectors(load_patch("samples/flagged_weight4.yaml"))   # doctest: +SKIP
    []
"""
from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..model.patch import Patch

_STIM = {"h": "H", "s": "S", "sdg": "S_DAG", "x": "X", "y": "Y", "z": "Z", "sx": "SQRT_X",
         "sxdg": "SQRT_X_DAG", "id": "I", "cx": "CX", "cz": "CZ", "cy": "CY", "swap": "SWAP"}


def to_stim(patch: Patch, *, detectors: bool = True):
    """The whole experiment as a noiseless `stim.Circuit` (patch qubit i is stim qubit i)."""
    import stim

    circuit = stim.Circuit()
    measured = 0
    index = patch.index
    for name, times in patch.experiment():
        for _ in range(times):
            for op in patch.circuits[name].operations:
                if op.kind == "barrier":
                    circuit.append("TICK")
                    continue
                if op.conditional:
                    raise InputError(f"circuit '{name}': a gate inside an 'if' block cannot be "
                                     "simulated here", file=op.file, line=op.line)
                targets = [index[q] for q in op.qubits]
                if op.kind == "measure":       # keep the basis of stim's MX/MY/MRX/MRY
                    basis = op.written[-1].upper() if op.written in ("mx", "my", "mrx", "mry") \
                        else ""
                    circuit.append("M" + basis, targets)
                    measured += 1
                elif op.kind == "reset":
                    basis = op.written[-1].upper() if op.written in ("rx", "ry", "mrx", "mry") \
                        else ""
                    circuit.append("R" + basis, targets)
                else:
                    gate = _STIM.get(op.name)
                    if gate is None:
                        raise InputError(f"circuit '{name}': '{op.written or op.name}' is not a "
                                         "Clifford gate stim can simulate", file=op.file,
                                         line=op.line)
                    circuit.append(gate, targets)
    if detectors:
        append_detectors(circuit, patch, measured)
    return circuit


def append_detectors(circuit, patch: Patch, measured: int) -> None:
    """The patch's detectors and observable, as lookbacks from `measured` measurements."""
    import stim
    for det in patch.detectors:
        circuit.append("DETECTOR", [stim.target_rec(m - measured) for m in det.measurements])
    if patch.observable:
        circuit.append("OBSERVABLE_INCLUDE",
                       [stim.target_rec(m - measured) for m in patch.observable], 0)


def check_detectors(patch: Patch) -> list[str]:
    """Plain-word problems with the declared detectors and observable (empty when sound)."""
    circuit = to_stim(patch)
    try:                                  # the usual case: everything is deterministic
        circuit.detector_error_model()
        return []
    except ValueError:
        pass
    problems = []
    for i, det in enumerate(patch.detectors):
        single = to_stim(_only(patch, det))
        try:
            single.detector_error_model()
        except ValueError:
            record = patch.measurement_record()
            which = ", ".join(f"{record[m][0]}[{record[m][1]}]:{record[m][2].clbit or m}"
                              for m in det.measurements)
            problems.append(f"detector '{det.name}' ({which}) is random without noise")
    if not problems:
        try:
            circuit.detector_error_model()
        except ValueError:
            problems.append("the logical observable is random without noise")
    return problems


def _only(patch: Patch, detector) -> Patch:
    from dataclasses import replace
    return replace(patch, detectors=(detector,), observable=())


def fault_distance(patch: Patch, *, noise: float = 1e-3, max_weight: int = 6,
                   max_detectors: int = 150) -> int | None:
    """The fewest faults that flip the observable and no detector (stim's search).

    Every operation of the experiment gets a generic fault (depolarizing after gates,
    bit flips before measurements and after resets) so that the count is a property
    of the circuit, not of a calibration. Returns None when the patch declares no
    observable or no such fault set is found within stim's search limits, and above
    `max_detectors` (stim's search ran out of memory on a distance-7 surface code with 7
    rounds here); `fault_distance_at_most` then gives a bound.
    """
    if not patch.observable or len(patch.detectors) > max_detectors:
        return None                      # nothing to flip, or too large to search here
    if _spanned_by_detectors(patch):
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


def fault_distance_at_most(patch: Patch, *, noise: float = 1e-3) -> int | None:
    """An upper bound on the fault distance, for circuits too big for `fault_distance`:
    the fewest *graphlike* faults (each flipping at most two detectors, after stim
    decomposes the rest) that flip the observable unseen, from stim's
    `shortest_graphlike_error`, which scales to large circuits. Faults it ignores could
    only make the true distance smaller. None without an observable or such a fault."""
    if not patch.observable:
        return None
    if _spanned_by_detectors(patch):
        return math.inf
    noisy = _generic_noise(patch, noise)         # outside the try: our errors stay ours
    try:
        errors = noisy.shortest_graphlike_error(ignore_ungraphlike_errors=True)
    except ValueError:
        return None
    return len(errors)


def _generic_noise(patch: Patch, noise: float):
    """The experiment with a generic fault after every gate and reset and before every
    measurement, so distances are properties of the circuit, not of a calibration."""
    import stim

    plain = to_stim(patch)
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


def _spanned_by_detectors(patch: Patch) -> bool:
    """True when the observable is a parity of detectors: no fault flips it unseen."""
    from ..repair.rewrite import _rank
    size = len(patch.measurement_record())
    rows = []
    for det in patch.detectors:
        row = np.zeros(size, dtype=np.uint8)
        row[list(det.measurements)] ^= 1
        rows.append(row)
    obs = np.zeros(size, dtype=np.uint8)
    for m in patch.observable:
        obs[m] ^= 1
    if not rows:
        return False
    base = np.array(rows)
    return _rank(np.vstack([base, obs])) == _rank(base)
