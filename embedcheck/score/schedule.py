"""The one as-soon-as-possible schedule: depth, duration, idle time, waits, for many
placements at once.

Each operation starts when all its qubits are free and lasts the chip's duration for
it: a single-qubit gate its qubit's `single_qubit_duration_ns`, a two-qubit gate its
coupler's `duration_ns`, a measurement its qubit's `measurement_duration_ns`. A reset
is taken to last one measurement (reset by measurement and a conditional flip;
common practice). A barrier makes its qubits wait for each other. A two-qubit gate
off-coupler has no coupler duration: the chip's median coupler duration stands in and
the schedule says so. Missing durations count as 0 and are listed in `missing`.

**The idle rule** (one rule for every circuit and across circuit boundaries; the noisy
circuit, the fidelity product and the sensitivities all take it from here): a qubit's
idle time is the time between two consecutive operations on it (barriers are not
operations; the two may lie in different circuits, or in two runs of the round), counted
only when

- the earlier operation leaves a state that decays: anything but a Z-basis reset. A
  qubit in |0>, because it was never used or was just reset, has nothing for amplitude
  damping or dephasing to act on (both fix |0>), so it waits for free until its next
  operation; an X- or Y-basis reset leaves |+> or |+i>, which dephases, and a
  measurement leaves |0> or |1>, and |1> decays;
- and the later operation is not a reset, which erases whatever the wait did.

The time before a qubit's first operation and after its last one never counts. A
counted wait belongs to the circuit run of the operation it ends at (`RunIdle`), so
every run of a repeated round sees the same waits: a data qubit waits while the
ancillas are reset and measured, through the end of one round and the start of the
next.

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

from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from ..model.device import CalibrationArrays, Device
from ..model.patch import Operation, Patch
from ..model.placement import Placement, check_placements

__all__ = ["RunIdle", "Schedule", "Timing", "circuit_timing", "ground_reset", "run_idles",
           "schedule_circuit"]

_MEDIAN_NOTE = "off-coupler gates timed at the median coupler duration"
_TWO_QUBIT_NOTE = "two-qubit gate duration"


@dataclass(frozen=True, kw_only=True)
class Timing:
    """The schedule of one circuit over many placements (arrays over qubits x placements).

    `started[q]`: patch qubit q has an operation in the circuit; `first`: when its first
    operation starts; `inner`: its idle time between its operations in this circuit, as
    the idle rule counts it; `tail`: from the end of its last operation to the circuit's
    end; `enters[q]`: its first operation is not a reset (so a wait ending there may
    count); `leaves_decaying[q]`: its last operation leaves a state that decays (not a
    Z-basis reset); `finish`: when the circuit ends (per placement). `waits[k][j]`, when
    recorded, is the counted idle time of the j-th qubit of operation k just before it,
    within this circuit (0 at a barrier and at the qubit's first operation, whose wait
    comes from the runs before: `RunIdle.entry`). `missing[name]` marks the placements on
    which a duration of that kind is missing (when asked for).
    """

    circuit: str
    finish: np.ndarray
    first: np.ndarray
    inner: np.ndarray
    tail: np.ndarray
    started: np.ndarray
    enters: np.ndarray
    leaves_decaying: np.ndarray
    depth: int
    missing: Mapping[str, np.ndarray]
    waits: tuple[tuple[np.ndarray, ...], ...] | None = None

    def missing_at(self, row: int) -> tuple[str, ...]:
        """The kinds of duration missing on placement `row`, sorted."""
        return tuple(sorted(name for name, where in self.missing.items() if where[row]))


@dataclass(frozen=True, kw_only=True)
class RunIdle:
    """One kind of run of a circuit in the experiment (`Patch.runs`: the first run, or the
    later runs of a repeated round, `times` of them) and its idle times under the idle
    rule: `timing.inner` within the circuit, plus, for the qubits `entry_rows`, the
    counted wait `entry` (rows x placements) that reaches from the runs before to the
    qubit's first operation in this run."""

    circuit: str
    again: bool
    times: int
    timing: Timing
    entry_rows: np.ndarray
    entry: np.ndarray

    @property
    def idle_ns(self) -> np.ndarray:
        """Counted idle time of each qubit in one such run (placements x qubits)."""
        out = self.timing.inner.copy()
        out[self.entry_rows] += self.entry
        return out.T


@dataclass(frozen=True, kw_only=True)
class Schedule:
    """Depth (layers of operations), total duration and per-qubit idle time of one circuit
    on one placement."""

    circuit: str
    depth: int
    duration_ns: float
    idle_ns: Mapping[str, float]
    missing: tuple[str, ...]      # durations the chip file does not give (counted as 0)


_NON_Z_RESETS = frozenset({"rx", "ry", "mrx", "mry"})


def ground_reset(op: Operation) -> bool:
    """The operation leaves its qubit in |0>: a reset in the Z basis (the idle rule).

    >>> ground_reset(Operation("reset", ("a",), "reset", written="reset"))
    True
    >>> ground_reset(Operation("reset", ("a",), "reset", written="rx"))
    False
    """
    return op.kind == "reset" and op.written not in _NON_Z_RESETS


def circuit_timing(patch: Patch, circuit: str, grid: np.ndarray, cal: CalibrationArrays, *,
                   record_waits: bool = False, with_missing: bool = False) -> Timing:
    """ASAP-schedule `circuit` of `patch` on every placement in `grid` (placements x patch
    qubits) with the durations in `cal`, and count idle time by the idle rule. Durations
    are gathered once per qubit and per interacting pair; with `record_waits`, each
    operation's counted waits are kept (for the noisy circuit, which places idle noise
    where a qubit waits); with `with_missing`, which durations the chip file does not give
    (for the audit)."""
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
    barriers = any(op.kind == "barrier" for op in ops)
    free = np.zeros((n, count))                  # when each qubit is free (barriers included)
    end = np.zeros((n, count)) if barriers else free     # end of each qubit's last operation
    inner = np.zeros((n, count))
    first = np.zeros((n, count))
    started = np.zeros(n, dtype=bool)
    enters = np.zeros(n, dtype=bool)
    decaying = np.zeros(n, dtype=bool)
    layer = [0] * n
    none = np.zeros(count)
    waits: list[tuple[np.ndarray, ...]] = []
    for op in ops:
        cols = [idx[q] for q in op.qubits]
        if op.kind == "barrier":
            t = free[cols].max(axis=0)
            if record_waits:
                waits.append(tuple(none for _ in cols))
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
        erases = op.kind == "reset"              # a reset erases what the wait did
        ground = ground_reset(op)
        counted: list[np.ndarray] = []
        top = max(layer[c] for c in cols) + 1
        for c in cols:
            gap = none
            if not started[c]:
                started[c] = True
                first[c] = start
                enters[c] = not erases
            elif decaying[c] and not erases:
                gap = start - end[c]
                inner[c] += gap
            counted.append(gap)
            np.add(start, length, out=free[c])
            if barriers:
                end[c] = free[c]
            decaying[c] = not ground
            layer[c] = top
        if record_waits:
            waits.append(tuple(counted))
    finish = free.max(axis=0) if n else np.zeros(count)
    tail = np.subtract(finish, end, out=end)            # `end` is not needed any more
    return Timing(circuit=circuit, finish=finish, first=first, inner=inner, tail=tail,
                  started=started, enters=enters, leaves_decaying=decaying,
                  depth=max(layer, default=0),
                  missing=_missing(patch, circuit, rows, cal, pairs, where)
                  if with_missing else {},
                  waits=tuple(waits) if record_waits else None)


def run_idles(patch: Patch, grid: np.ndarray, cal: CalibrationArrays, *,
              record_waits: bool = False) -> Iterator[RunIdle]:
    """The experiment's runs in order (`Patch.runs`), each with its schedule and its idle
    times under the idle rule, for every placement in `grid` at once. Each circuit is
    scheduled once for its runs (a run changes only which waits reach into it from
    before); waits that span circuits are carried from run to run."""
    n, count = patch.num_qubits, grid.shape[0]
    since = np.zeros((n, count))              # time since each qubit's last operation ended
    decaying = np.zeros(n, dtype=bool)        # ... and whether that operation left it decaying
    timing: Timing | None = None
    for name, again, times in patch.runs():
        if timing is None or timing.circuit != name:
            timing = circuit_timing(patch, name, grid, cal, record_waits=record_waits)
        rows, entry = _entry(timing, since, decaying)
        yield RunIdle(circuit=name, again=again, times=times, timing=timing, entry_rows=rows,
                      entry=entry)
        used = timing.started
        since[~used] += times * timing.finish
        since[used] = timing.tail[used]
        decaying[used] = timing.leaves_decaying[used]


def _entry(timing: Timing, since: np.ndarray,
           decaying: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The qubits whose wait reaches into a run from before it, and that wait up to their
    first operation, given the time since their last operation and whether that one left
    them decaying."""
    rows = np.flatnonzero(timing.started & timing.enters & decaying)
    return rows, since[rows] + timing.first[rows]


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


def schedule_circuit(device: Device, patch: Patch, circuit: str, placement: Placement, *,
                     again: bool = False) -> Schedule:
    """ASAP-schedule `circuit` of `patch` on one placement with the chip's durations; its
    idle times are those of its first run in the experiment (`again`: of its later runs).
    A circuit outside the experiment is taken on its own, from |0>."""
    grid = check_placements(device, patch, [placement])
    cal = device.calibration_arrays
    timing = circuit_timing(patch, circuit, grid, cal, with_missing=True)
    idle = None
    for run in run_idles(patch, grid, cal):
        if run.circuit == circuit and run.again == again:
            idle = run.idle_ns[0]
            break
    if idle is None:                      # on its own (again: run twice in a row)
        decaying = timing.leaves_decaying & timing.started if again else \
            np.zeros(patch.num_qubits, dtype=bool)
        since = np.where(timing.started[:, None], timing.tail, timing.finish)
        rows, entry = _entry(timing, since, decaying)
        inner = timing.inner.copy()
        inner[rows] += entry
        idle = inner.T[0]
    return Schedule(circuit=circuit, depth=timing.depth, duration_ns=float(timing.finish[0]),
                    idle_ns=MappingProxyType({q: float(idle[i])
                                              for i, q in enumerate(patch.qubits)}),
                    missing=timing.missing_at(0))
