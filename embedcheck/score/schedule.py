"""As-soon-as-possible schedule of a circuit on a placement: depth, duration, idle time.

Each operation starts when all its qubits are free and lasts the chip's duration for
it: a single-qubit gate its qubit's `single_qubit_duration_ns`, a two-qubit gate its
coupler's `duration_ns`, a measurement its qubit's `measurement_duration_ns`. A reset
is taken to last one measurement (reset by measurement and a conditional flip;
common practice). A barrier makes its qubits wait for each other. A two-qubit gate
off-coupler has no coupler duration: the chip's median coupler duration stands in and
the schedule says so. Missing durations count as 0 and are listed in `missing`.

Idle time of a qubit is the time from its first operation (or from the circuit's
start, when it already holds state: `Patch.waiting`) to the end of the circuit that it
is not busy (the ranking's idle-error term uses it): a data qubit waits while the
ancillas are reset and measured. `again=True` schedules a later run of a repeated
circuit, where the qubits it used hold state from the run before.

    >>> from embedcheck.device import Device, QubitCalibration, CouplerCalibration
    >>> from embedcheck.lattices import line
    >>> from embedcheck.patch import Circuit, Operation, Patch
    >>> from embedcheck.search import Placement
    >>> dev = Device.from_lattice(line(3), name="l",
    ...     qubit_calibration={q: QubitCalibration(single_qubit_duration_ns=50) for q in range(3)},
    ...     coupler_calibration={(0, 1): CouplerCalibration(duration_ns=300),
    ...                          (1, 2): CouplerCalibration(duration_ns=300)})
    >>> ops = (Operation("h", ("a",), "1q"), Operation("cx", ("a", "b"), "2q"),
    ...        Operation("cx", ("b", "c"), "2q"))
    >>> patch = Patch("p", ("a", "b", "c"), dict.fromkeys("abc", "data"), {"round": Circuit("round", ops)})
    >>> s = schedule_circuit(dev, patch, "round", Placement((0, 1, 2)))
    >>> s.depth, s.duration_ns, s.idle_ns["c"]
    (3, 650.0, 0.0)
"""
from __future__ import annotations

from dataclasses import dataclass

from ..model.device import Device, pair
from ..model.patch import Patch
from ..place.search import Placement


@dataclass(frozen=True)
class Schedule:
    """Depth (layers of operations), total duration and per-qubit idle time of one circuit."""

    circuit: str
    depth: int
    duration_ns: float
    idle_ns: dict
    missing: tuple[str, ...]      # durations the chip file does not give (counted as 0)


def schedule_circuit(device: Device, patch: Patch, circuit: str, placement: Placement, *,
                     again: bool = False) -> Schedule:
    """ASAP-schedule `circuit` of `patch` on `placement` with the chip's durations."""
    where = placement.as_dict(patch)
    free = {q: 0.0 for q in patch.qubits}
    layer = {q: 0 for q in patch.qubits}
    first: dict = dict.fromkeys(patch.waiting(circuit, again), 0.0)
    busy = {q: 0.0 for q in patch.qubits}
    missing: set = set()
    median = _median_coupler_duration(device)
    for op in patch.circuits[circuit].operations:
        qs = op.qubits
        if op.kind == "barrier":
            t, depth = max(free[q] for q in qs), max(layer[q] for q in qs)
            for q in qs:
                free[q], layer[q] = t, depth
            continue
        length = _duration(device, op, [where[q] for q in qs], median, missing)
        start = max(free[q] for q in qs)
        depth = max(layer[q] for q in qs) + 1
        for q in qs:
            first.setdefault(q, start)
            free[q], layer[q] = start + length, depth
            busy[q] += length
    end = max(free.values(), default=0.0)
    idle = {q: (end - first[q] - busy[q]) if q in first else 0.0 for q in patch.qubits}
    return Schedule(circuit, max(layer.values(), default=0), float(end),
                    {q: float(max(v, 0.0)) for q, v in idle.items()}, tuple(sorted(missing)))


def _median_coupler_duration(device: Device) -> float | None:
    """Median live-coupler duration (stands in for off-coupler gates), None when none is known."""
    return device.calibration_arrays().median_two_qubit_ns or None

def _duration(device, op, physical, median, missing) -> float:
    cal = device.qubit_calibration
    if op.kind == "2q":
        c = device.coupler_calibration.get(pair(*physical))
        coupled = device.is_coupled(*physical)
        if coupled and c is not None and c.duration_ns is not None:
            return float(c.duration_ns)
        if not coupled and median is not None:
            missing.add("off-coupler gates timed at the median coupler duration")
            return median
        missing.add("two-qubit gate duration")
        return 0.0
    key = {"1q": "single_qubit_duration_ns", "measure": "measurement_duration_ns",
           "reset": "measurement_duration_ns"}[op.kind]
    value = getattr(cal.get(physical[0]), key, None) if physical[0] in cal else None
    if value is None:
        missing.add(key)
        return 0.0
    return float(value)
