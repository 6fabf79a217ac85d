"""The code patch: named qubits with roles, named circuits, and the interaction graph.

A `Patch` is what the search places on a chip. Each circuit is a flat list of
`Operation`s over the patch's qubit names, already unrolled so that every operation
acts on one or two qubits (multi-qubit gates are expanded with qiskit's standard
decompositions into CNOTs and single-qubit gates; see `embedcheck.io.qasm`). Every
operation remembers the source file, line and text it came from, so a report can
point at the gate a user wrote.

The experiment is `prep`, then `round` repeated `rounds` times, then `readout`
(whichever of these the patch has).

    >>> op = Operation("cx", ("d0", "d1"), kind="2q", line=3, text="cx d[0], d[1];")
    >>> c = Circuit("prep", (op,))
    >>> p = Patch("toy", ("d0", "d1"), {"d0": "data", "d1": "data"}, {"prep": c})
    >>> p.interaction_counts(["prep"])
    {(0, 1): 1}
"""
from __future__ import annotations

import re
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

import numpy as np

from . import gf2
from .frozen import reduce_frozen

if TYPE_CHECKING:
    from .constraints import Constraints

__all__ = ["EXPERIMENT_ORDER", "ROLES", "SYMMETRIC_GATES", "Circuit", "Detector", "Operation",
           "Patch", "experiment_order", "infer_roles", "natural_sort_key",
           "observable_is_detector_parity"]

ROLES = ("data", "flag", "ancilla")
EXPERIMENT_ORDER = ("prep", "round", "readout")
# Two-qubit gates whose direction does not matter (no direction fix, no native direction).
SYMMETRIC_GATES = frozenset({"cz", "swap", "rzz", "rxx", "ryy", "cp", "cu1", "cphase", "iswap",
                             "dcx"})


@dataclass(frozen=True, slots=True)
class Operation:
    """One operation of a circuit on patch qubits.

    kind is '1q', '2q', 'measure', 'reset' or 'barrier'. `written` is the gate as
    the user wrote it (e.g. 'swap' for each of the three CNOTs it unrolls to).
    Slots: a circuit of a million operations stays near 150 bytes per operation.
    """

    name: str
    qubits: tuple[str, ...]
    kind: str
    line: int | None = None
    text: str = ""
    file: str | None = None
    written: str = ""
    conditional: bool = False
    clbit: str | None = None     # for a measurement: the classical bit written, e.g. 'm[2]'


@dataclass(frozen=True)
class Circuit:
    """A named circuit: its operations, and its OpenQASM text for cross-checks."""

    name: str
    operations: tuple[Operation, ...]
    qasm: str | None = None
    file: str | None = None

    @property
    def two_qubit_gates(self) -> tuple[Operation, ...]:
        return tuple(op for op in self.operations if op.kind == "2q")

    @property
    def measurements(self) -> tuple[Operation, ...]:
        return tuple(op for op in self.operations if op.kind == "measure")


@dataclass(frozen=True)
class Detector:
    """A set of measurements (indices into the experiment's measurement record, from 0)
    whose parity is deterministic without noise."""

    name: str
    measurements: tuple[int, ...]
    line: int | None = None


@dataclass(frozen=True)
class Patch:
    """Qubit names, their roles, circuits by name, and how many check rounds run.

    `detectors` and `observable` index the experiment's measurement record (prep,
    then each round, then readout, measurements in order). `roles_inferred` says the
    roles were worked out from the circuits (see `infer_roles`), not given.
    """

    name: str
    qubits: tuple[str, ...]
    roles: Mapping[str, str]
    circuits: Mapping[str, Circuit]
    rounds: int = 1
    description: str = ""
    source: str | None = None
    detectors: tuple[Detector, ...] = ()
    observable: tuple[int, ...] = ()
    roles_inferred: bool = False
    constraints: Constraints | None = None        # from the patch file

    def __reduce__(self) -> tuple[Any, ...]:
        return reduce_frozen(self)    # worker processes get copies

    def __post_init__(self) -> None:
        object.__setattr__(self, "roles", MappingProxyType(dict(self.roles)))
        object.__setattr__(self, "circuits", MappingProxyType(dict(self.circuits)))

    @cached_property
    def index(self) -> Mapping[str, int]:
        """Patch qubit name -> its index in `qubits`."""
        return MappingProxyType({q: i for i, q in enumerate(self.qubits)})

    @property
    def num_qubits(self) -> int:
        return len(self.qubits)

    def experiment(self) -> list[tuple[str, int]]:
        """(circuit name, times run) for the whole experiment, in order."""
        times = {"prep": 1, "round": self.rounds, "readout": 1}
        return [(name, times[name]) for name in EXPERIMENT_ORDER if name in self.circuits]

    def runs(self) -> list[tuple[str, bool, int]]:
        """(circuit, again, count): the experiment's runs by kind. A circuit run more than
        once is listed twice, its first run (again=False, count 1) and its later runs
        (again=True), because they differ in which waits reach into them from before (the
        idle rule of `score.schedule`)."""
        out: list[tuple[str, bool, int]] = []
        for name, times in self.experiment():
            out.append((name, False, 1))
            if times > 1:
                out.append((name, True, times - 1))
        return out

    def interaction_counts(self, circuit_names: Sequence[str] | None = None,
                           weighted: bool = False) -> dict[tuple[int, int], int]:
        """Two-qubit gates per patch-qubit pair (index pairs, smaller first).

        With `weighted`, each circuit counts as often as the experiment runs it.
        """
        names = list(self.circuits) if circuit_names is None else list(circuit_names)
        times = dict(self.experiment()) if weighted else {}
        counts: Counter[tuple[int, int]] = Counter()
        for name in names:
            for op in self.circuits[name].two_qubit_gates:
                a, b = (self.index[q] for q in op.qubits)
                counts[(min(a, b), max(a, b))] += times.get(name, 1)
        return dict(sorted(counts.items()))

    def per_circuit_counts(self, circuit_names: Sequence[str]
                           ) -> dict[tuple[int, int], tuple[int, ...]]:
        """For each interacting pair, its gate count in each named circuit (a tuple)."""
        each = [self.interaction_counts([n]) for n in circuit_names]
        pairs = sorted(set().union(*each)) if each else []
        return {p: tuple(c.get(p, 0) for c in each) for p in pairs}

    def qubits_with_role(self, role: str) -> tuple[str, ...]:
        return tuple(q for q in self.qubits if self.roles[q] == role)

    def measurement_record(self) -> list[tuple[str, int, Operation]]:
        """(circuit, repetition, measurement) for every measurement of the experiment, in order."""
        out: list[tuple[str, int, Operation]] = []
        for name, times in self.experiment():
            measures = self.circuits[name].measurements
            for rep in range(times):
                out += [(name, rep, op) for op in measures]
        return out

    def __repr__(self) -> str:
        counts: dict[str, int] = {}
        for q in self.qubits:
            counts[self.roles[q]] = counts.get(self.roles[q], 0) + 1
        roles = ", ".join(f"{n} {r}" for r, n in counts.items())
        return (f"Patch({self.name!r}: {len(self.qubits)} qubits ({roles}); circuits "
                f"{', '.join(self.circuits)}; {self.rounds} round(s), {len(self.detectors)} "
                "detectors)")

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def experiment_order(circuits: Mapping[str, Circuit], rounds: int) -> list[tuple[str, int]]:
    """(circuit, times run) in experiment order for the circuits present."""
    times = {"prep": 1, "round": rounds, "readout": 1}
    return [(n, times[n]) for n in EXPERIMENT_ORDER if n in circuits]


def infer_roles(circuits: Mapping[str, Circuit], rounds: int = 1) -> dict[str, str]:
    """Roles from what the circuits do to each qubit (used when a patch gives none).

    A qubit that is measured and then acted on again later in the experiment (reset,
    reused in a two-qubit gate, or measured in a round that repeats; single-qubit gates
    after a measurement, such as the `h; s` that undo a Y-basis readout, do not count)
    is a measured helper, and so is one
    measured inside the check round (data are read out at the end, not in the round;
    common practice) unless the round measures every qubit it touches; the rest are
    data. A helper that shares gates with data and with other helpers is a `flag`;
    any other helper is an `ancilla`. Qubits touched only by barriers are left out.

    >>> from embedcheck.io.qasm import read_qasm
    >>> text = 'OPENQASM 2.0; include "qelib1.inc"; qreg q[3]; creg c[1]; '
    >>> text += 'cx q[0], q[1]; cx q[2], q[1]; measure q[1] -> c[0]; reset q[1];'
    >>> infer_roles({"round": Circuit("round", tuple(read_qasm(text)))})
    {'q0': 'data', 'q1': 'ancilla', 'q2': 'data'}
    >>> once = text.replace(" reset q[1];", "")          # measured once, never reset
    >>> infer_roles({"round": Circuit("round", tuple(read_qasm(once)))})
    {'q0': 'data', 'q1': 'ancilla', 'q2': 'data'}
    """
    sequence = []
    for name, times in experiment_order(circuits, rounds) or [(n, 1) for n in circuits]:
        sequence += list(circuits[name].operations) * min(times, 2)
    order: list[str] = []
    measured, helper = set(), set()
    for op in sequence:
        if op.kind == "barrier":
            continue
        for q in op.qubits:
            if q not in order:
                order.append(q)
            if q in measured and op.kind != "1q":    # single-qubit gates after a readout
                helper.add(q)                         # (undoing a basis change) are no reuse
        if op.kind == "measure":
            measured.add(op.qubits[0])
    if "round" in circuits:                  # one round, ancillas measured only at its end
        ops = [op for op in circuits["round"].operations if op.kind != "barrier"]
        in_round = {op.qubits[0] for op in ops if op.kind == "measure"}
        if in_round != {q for op in ops for q in op.qubits}:
            helper |= in_round
    partners: dict[str, set] = {q: set() for q in order}
    for op in sequence:
        if op.kind == "2q":
            a, b = op.qubits
            partners[a].add(b)
            partners[b].add(a)
    roles = {}
    for q in sorted(order, key=natural_sort_key):
        if q not in helper:
            roles[q] = "data"
        else:
            kinds = {p in helper for p in partners[q]}
            roles[q] = "flag" if kinds == {True, False} else "ancilla"
    return roles


def natural_sort_key(name: str) -> list[Any]:
    """Sort q2 before q10.

    >>> sorted(["q10", "q2"], key=natural_sort_key)
    ['q2', 'q10']
    """
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", name)]


_MAX_SPAN_CELLS = 100_000_000      # detectors x measurements of the dense GF(2) matrix


def observable_is_detector_parity(patch: Patch) -> bool:
    """True when the observable is a parity of detectors: no fault flips it unseen, so
    every logical figure is 0 (GF(2) rank of the detectors with and without it).

    The test is a dense GF(2) rank over detectors x measurements; above
    `_MAX_SPAN_CELLS` (a repetition code of distance 101 over 1000 rounds needs 10^10)
    it answers False, "not known to be a parity", which only costs the shortcut.
    """
    size = len(patch.measurement_record())
    if size * len(patch.detectors) > _MAX_SPAN_CELLS:
        return False
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
    return gf2.rank(np.vstack([base, obs])) == gf2.rank(base)
