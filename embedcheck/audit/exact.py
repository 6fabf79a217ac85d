"""Gate audit: for one placement, which two-qubit gates of each circuit land off-coupler.

The exact audit is authoritative: a circuit is swap-free on a placement exactly when
every two-qubit gate (after unrolling to CNOTs, see `embedcheck.io.qasm`) acts on a
pair joined by a live coupler. The number of off-coupler gates is an exact figure;
how many gates a router would add to fix them is only an estimate, and is labelled
so (`router_estimate`, qiskit's transpiler at optimization level 0 with the
placement as initial layout and a fixed seed).

`embedcheck.model.placement.off_coupler_counts` is the same test vectorised over many
placements at once (numpy fancy indexing), used by the search report. Depth and
duration come from the one schedule (`embedcheck.score.schedule`).

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import square_grid
    >>> from embedcheck.model.patch import Patch, Circuit, Operation
    >>> from embedcheck.model.placement import Placement
    >>> ops = (Operation("cx", ("a", "b"), "2q", line=4), Operation("cx", ("a", "c"), "2q", line=5))
    >>> patch = Patch("t", ("a", "b", "c"), dict.fromkeys("abc", "data"),
    ...               {"round": Circuit("round", ops)})
    >>> dev = Device.from_lattice(square_grid(1, 3), name="line")
    >>> report = audit_placement(dev, patch, Placement((0, 1, 2)))
    >>> [(c.circuit, c.two_qubit_gates, len(c.off_coupler)) for c in report.circuits]
    [('round', 2, 1)]
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ..model.device import Device
from ..model.patch import SYMMETRIC_GATES, Patch
from ..model.placement import Placement, check_placements
from ..score.schedule import schedule_circuit

__all__ = ["AuditReport", "CircuitAudit", "OffCouplerGate", "audit_placement",
           "estimate_router_overhead"]


@dataclass(frozen=True, kw_only=True)
class OffCouplerGate:
    """A two-qubit gate whose two physical qubits share no live coupler."""

    circuit: str
    gate_index: int            # position among the circuit's two-qubit gates, from 0
    patch_qubits: tuple[str, str]
    physical_qubits: tuple[int, int]
    written: str               # the gate as written, e.g. 'cx' or 'swap'
    text: str                  # the source statement
    file: str | None
    line: int | None
    reason: str                # 'no coupler', 'dead coupler' or 'dead qubit'


@dataclass(frozen=True, kw_only=True)
class CircuitAudit:
    """One circuit on one placement."""

    circuit: str
    times_run: int
    two_qubit_gates: int
    measurements: int
    off_coupler: tuple[OffCouplerGate, ...]
    router_estimate: Mapping[str, Any] | None = None
    direction_fixes: int = 0     # gates on a coupler whose native gate runs the other way
    depth: int = 0
    duration_ns: float = 0.0     # ASAP schedule with the chip's durations (see schedule.py)
    missing_durations: tuple[str, ...] = ()

    @property
    def swap_free(self) -> bool:
        return not self.off_coupler


@dataclass(frozen=True, kw_only=True)
class AuditReport:
    """Every circuit of a patch on one placement, plus the whole experiment's totals."""

    placement: Placement
    circuits: tuple[CircuitAudit, ...]

    @property
    def swap_free(self) -> bool:
        return all(c.swap_free for c in self.circuits)

    def experiment_totals(self) -> dict[str, float]:
        """Two-qubit gates and off-coupler gates over the experiment (rounds counted)."""
        run = [c for c in self.circuits if c.times_run]
        return {"two_qubit_gates": sum(c.two_qubit_gates * c.times_run for c in run),
                "off_coupler_gates": sum(len(c.off_coupler) * c.times_run for c in run),
                "direction_fixes": sum(c.direction_fixes * c.times_run for c in run),
                "measurements": sum(c.measurements * c.times_run for c in run),
                "duration_ns": sum(c.duration_ns * c.times_run for c in run)}

    def __repr__(self) -> str:
        bad = [f"{c.circuit} ({len(c.off_coupler)} off-coupler)" for c in self.circuits
               if not c.swap_free]
        verdict = "needs routing: " + ", ".join(bad) if bad else "every circuit swap-free"
        return f"AuditReport({self.placement!r}: {verdict})"

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def audit_placement(device: Device, patch: Patch, placement: Placement, *,
                    router_estimate: bool = False, seed: int = 11) -> AuditReport:
    """Audit every circuit of `patch` on `placement` (exact), optionally with a router estimate."""
    check_placements(device, patch, [placement])
    where = placement.as_dict(patch)
    times = dict(patch.experiment())
    audits = []
    for name, circuit in patch.circuits.items():
        off, flips = [], 0
        for k, gate in enumerate(circuit.two_qubit_gates):
            a, b = (where[q] for q in gate.qubits)
            if not device.is_coupled(a, b):
                off.append(OffCouplerGate(
                    circuit=name, gate_index=k, patch_qubits=(gate.qubits[0], gate.qubits[1]),
                    physical_qubits=(a, b), written=gate.written, text=gate.text,
                    file=gate.file, line=gate.line, reason=_why_off(device, a, b)))
            elif gate.written not in SYMMETRIC_GATES and not device.runs_natively(a, b):
                flips += 1      # fixed by single-qubit gates (Hadamards round a CNOT): no SWAP
        estimate = None
        if router_estimate:
            estimate = estimate_router_overhead(device, patch, name, placement, seed=seed)
        timing = schedule_circuit(device, patch, name, placement)
        audits.append(CircuitAudit(
            circuit=name, times_run=times.get(name, 0),
            two_qubit_gates=len(circuit.two_qubit_gates), measurements=len(circuit.measurements),
            off_coupler=tuple(off), router_estimate=estimate, direction_fixes=flips,
            depth=timing.depth, duration_ns=timing.duration_ns,
            missing_durations=timing.missing))
    return AuditReport(placement=placement, circuits=tuple(audits))


def estimate_router_overhead(device: Device, patch: Patch, circuit: str, placement: Placement,
                             *, seed: int = 11) -> dict[str, Any]:
    """Two-qubit gates qiskit's router adds for `circuit` on `placement` (an estimate).

    Transpiles at optimization_level=0 (higher levels cancel and resynthesise gates)
    with the placement as initial layout. Returns the native two-qubit count before and
    after, the difference, the seed and a label saying it is an estimate.
    """
    from .qiskit_views import transpile_on_placement

    before = len(patch.circuits[circuit].two_qubit_gates)
    after = transpile_on_placement(device, patch, circuit, placement, seed=seed)["two_qubit_gates"]
    return {"kind": "estimate", "method": "qiskit transpile, optimization_level=0",
            "seed": seed, "two_qubit_gates_before": before, "two_qubit_gates_after": after,
            "added_two_qubit_gates": after - before}


def _why_off(device: Device, a: int, b: int) -> str:
    if not device.has_coupler(a, b):
        return "no coupler"
    if a in device.dead_qubits or b in device.dead_qubits:
        return "dead qubit"
    return "dead coupler"
