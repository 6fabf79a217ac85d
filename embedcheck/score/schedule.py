"""The one as-soon-as-possible schedule: depth, duration, idle time, waits, for many
placements at once.

Each operation starts when all its qubits are free and lasts the chip's duration for
it: a single-qubit gate its qubit's `single_qubit_duration_ns`, a two-qubit gate its
coupler's `duration_ns`, a measurement its qubit's `measurement_duration_ns`. A reset
is taken to last one measurement (reset by measurement and a conditional flip;
common practice). A barrier makes its qubits wait for each other. A two-qubit gate
off-coupler has no coupler duration: the chip's median coupler duration stands in and
the schedule says so. Missing durations count as 0 and are listed in `missing`.

Idle time of a qubit is the time from its first operation (or from the circuit's
start, when it already holds state: `Patch.waiting`) to the end of the circuit that it
is not busy (the cost model's idle term uses it): a data qubit waits while the
ancillas are reset and measured. `again=True` looks at a later run of a repeated
circuit, where the qubits it used hold state from the run before.

`circuit_timing` loops over a circuit's operations once, with numpy arrays over the
placements (shape qubits x placements, each qubit's row contiguous); the cost model
passes every placement, the audit and the noisy circuit pass one.

    >>> from embedcheck.model.device import Device, QubitCalibration, CouplerCalibration
    >>> from embedcheck.model.lattices import line
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> from embedcheck.model.placement import Placement
    >>> dev = Device.from_lattice(line(3), name="l",
    ...     qubit_calibration={q: QubitCalibration(single_qubit_duration_ns=50) for q in range(3)},
    ...     coupler_calibration={(0, 1): CouplerCalibration(duration_ns=300),
    ...                          (1, 2): CouplerCalibration(duration_ns=300)})
    >>> ops = (Operation("h", ("a",), "1q"), Operation("cx", ("a", "b"), "2q"),
    ...        Operation("cx", ("b", "c"), "2q"))
    >>> patch = Patch("p", ("a", "b", "c"), dict.fromkeys("abc", "data"),
    ...               {"round": Circuit("round", ops)})
    >>> s = schedule_circuit(dev, patch, "round", Placement((0, 1, 2)))
    >>> s.depth, s.duration_ns, s.idle_ns["c"]
    (3, 650.0, 0.0)
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from ..model.device import CalibrationArrays, Device
from ..model.patch import Patch
from ..model.placement import Placement, check_placements

__all__ = ["Schedule", "Timing", "circuit_timing", "idle_times", "schedule_circuit"]

_MEDIAN_NOTE = "off-coupler gates timed at the median coupler duration"
_TWO_QUBIT_NOTE = "two-qubit gate duration"


@dataclass(frozen=True, kw_only=True)
class Timing:
    """The schedule of one circuit over many placements (arrays over qubits x placements).

    `started[q]`: patch qubit q has an operation in the circuit; `first`: when its first
    operation starts; `busy`: how long it is busy; `free`: when it is last free (kept with
    the waits only: it is one more array of qubits x placements);
    `finish`: when the circuit ends (per placement). `waits[k][j]`, when recorded, is how
    long the j-th qubit of operation k waits for it (for a barrier: for the others).
    `missing[name]` marks the placements on which a duration of that kind is missing (when
    asked for).
    """

    circuit: str
    finish: np.ndarray
    first: np.ndarray
    busy: np.ndarray
    free: np.ndarray | None
    started: np.ndarray
    depth: int
    missing: Mapping[str, np.ndarray]
    waits: tuple[tuple[np.ndarray, ...], ...] | None = None

    def missing_at(self, row: int) -> tuple[str, ...]:
        """The kinds of duration missing on placement `row`, sorted."""
        return tuple(sorted(name for name, where in self.missing.items() if where[row]))


@dataclass(frozen=True, kw_only=True)
class Schedule:
    """Depth (layers of operations), total duration and per-qubit idle time of one circuit
    on one placement."""

    circuit: str
    depth: int
    duration_ns: float
    idle_ns: Mapping[str, float]
    missing: tuple[str, ...]      # durations the chip file does not give (counted as 0)


def circuit_timing(patch: Patch, circuit: str, grid: np.ndarray, cal: CalibrationArrays, *,
                   record_waits: bool = False, with_missing: bool = False) -> Timing:
    """ASAP-schedule `circuit` of `patch` on every placement in `grid` (placements x patch
    qubits) with the durations in `cal`. Durations are gathered once per qubit and per
    interacting pair; with `record_waits`, each operation's waits are kept (for the noisy
    circuit, which places idle noise where a qubit waits); with `with_missing`, which
    durations the chip file does not give (for the audit)."""
    count, n = grid.shape
    ops = patch.circuits[circuit].operations
    idx = patch.index
    rows = np.ascontiguousarray(grid.T)                     # (qubits, placements)
    single_ns = cal.single_qubit_ns[rows]
    measure_ns = cal.measurement_ns[rows]
    pairs = sorted({(idx[op.qubits[0]], idx[op.qubits[1]]) for op in ops if op.kind == "2q"})
    column = {p: k for k, p in enumerate(pairs)}
    where = None                                             # coupler of each pair, if needed
    if pairs:
        ab = np.array(pairs, dtype=np.int64)
        index = cal.coupler_index(rows[ab[:, 0]], rows[ab[:, 1]])     # (pairs, placements)
        two_ns = cal.values_at(index, cal.coupler_ns)
        two_ns = np.where(np.isnan(two_ns), cal.median_two_qubit_ns, two_ns)
        where = index if with_missing else None
        del index
    free = np.zeros((n, count))
    busy = np.zeros((n, count))
    first = np.zeros((n, count))
    started = np.zeros(n, dtype=bool)
    layer = [0] * n
    waits: list[tuple[np.ndarray, ...]] = []
    for op in ops:
        cols = [idx[q] for q in op.qubits]
        if op.kind == "barrier":
            t = free[cols].max(axis=0)
            if record_waits:
                waits.append(tuple(t - free[c] for c in cols))
            free[cols] = t
            top = max(layer[c] for c in cols)
            for c in cols:
                layer[c] = top
            continue
        if op.kind == "2q":
            a, b = cols
            length = two_ns[column[(a, b)]]
            start = np.maximum(free[a], free[b])
        else:
            (a,) = cols
            length = single_ns[a] if op.kind == "1q" else measure_ns[a]
            start = free[a].copy()
        if record_waits:
            waits.append(tuple(start - free[c] for c in cols))
        top = max(layer[c] for c in cols) + 1
        for c in cols:
            if not started[c]:
                started[c] = True
                first[c] = start
            np.add(start, length, out=free[c])
            busy[c] += length
            layer[c] = top
    finish = free.max(axis=0) if n else np.zeros(count)
    return Timing(circuit=circuit, finish=finish, first=first, busy=busy,
                  free=free if record_waits else None,
                  started=started, depth=max(layer, default=0),
                  missing=_missing(patch, circuit, rows, cal, pairs, where)
                  if with_missing else {},
                  waits=tuple(waits) if record_waits else None)


def _missing(patch: Patch, circuit: str, rows: np.ndarray, cal: CalibrationArrays,
             pairs: list[tuple[int, int]], where: np.ndarray | None) -> dict[str, np.ndarray]:
    """For each kind of missing duration, the placements on which the circuit needs one."""
    ops = patch.circuits[circuit].operations
    idx = patch.index
    count = rows.shape[1]
    out: dict[str, np.ndarray] = {}

    def mark(name: str, on: Any) -> None:
        out[name] = out.get(name, np.zeros(count, dtype=bool)) | on
    for kind, name, given in (("1q", "single_qubit_duration_ns", cal.single_qubit_ns_given),
                              ("measure", "measurement_duration_ns", cal.measurement_ns_given),
                              ("reset", "measurement_duration_ns", cal.measurement_ns_given)):
        qubits = sorted({idx[op.qubits[0]] for op in ops if op.kind == kind})
        if qubits:
            mark(name, (~given[rows[qubits]]).any(axis=0))
    if where is not None and pairs:
        coupled = where >= 0
        given = np.zeros(where.shape, dtype=bool)
        if len(cal.coupler_ns_given):
            given = coupled & cal.coupler_ns_given[np.maximum(where, 0)]
        median = cal.median_two_qubit_ns > 0
        unknown = (coupled & ~given) | (~coupled & (not median))
        mark(_TWO_QUBIT_NOTE, unknown.any(axis=0))
        if median:
            mark(_MEDIAN_NOTE, (~coupled).any(axis=0))
    return out


def idle_times(patch: Patch, circuit: str, grid: np.ndarray, cal: CalibrationArrays, *,
               again: bool = False, timing: Timing | None = None) -> np.ndarray:
    """Idle ns of each patch qubit in one run of `circuit`, for every placement at once
    (shape placements x qubits). The schedule does not depend on the run (only where
    idling starts does), so a caller scoring several runs of one circuit passes
    `timing=circuit_timing(...)` once."""
    timing = timing or circuit_timing(patch, circuit, grid, cal)
    started = timing.started.copy()
    first = timing.first.copy()
    waiting = [patch.index[q] for q in patch.waiting(circuit, again)]
    started[waiting] = True                                   # these idle from time 0
    first[waiting] = 0.0
    idle = np.where(started[:, None], timing.finish - first - timing.busy, 0.0)
    return np.maximum(idle, 0.0).T


def schedule_circuit(device: Device, patch: Patch, circuit: str, placement: Placement, *,
                     again: bool = False) -> Schedule:
    """ASAP-schedule `circuit` of `patch` on one placement with the chip's durations."""
    grid = check_placements(device, patch, [placement])
    cal = device.calibration_arrays
    timing = circuit_timing(patch, circuit, grid, cal, with_missing=True)
    idle = idle_times(patch, circuit, grid, cal, again=again, timing=timing)[0]
    return Schedule(circuit=circuit, depth=timing.depth, duration_ns=float(timing.finish[0]),
                    idle_ns=MappingProxyType({q: float(idle[i])
                                              for i, q in enumerate(patch.qubits)}),
                    missing=timing.missing_at(0))
