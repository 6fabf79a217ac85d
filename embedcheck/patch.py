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

from collections import Counter
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping, Sequence

ROLES = ("data", "flag", "ancilla")
EXPERIMENT_ORDER = ("prep", "round", "readout")


@dataclass(frozen=True)
class Operation:
    """One operation of a circuit on patch qubits.

    kind is '1q', '2q', 'measure', 'reset' or 'barrier'. `written` is the gate as
    the user wrote it (e.g. 'swap' for each of the three CNOTs it unrolls to).
    """

    name: str
    qubits: tuple[str, ...]
    kind: str
    line: int | None = None
    text: str = ""
    file: str | None = None
    written: str = ""
    conditional: bool = False


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
class Patch:
    """Qubit names, their roles, circuits by name, and how many check rounds run."""

    name: str
    qubits: tuple[str, ...]
    roles: Mapping[str, str]
    circuits: Mapping[str, Circuit]
    rounds: int = 1
    description: str = ""
    source: str | None = None
    index: Mapping[str, int] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "roles", MappingProxyType(dict(self.roles)))
        object.__setattr__(self, "circuits", MappingProxyType(dict(self.circuits)))
        object.__setattr__(self, "index",
                           MappingProxyType({q: i for i, q in enumerate(self.qubits)}))

    @property
    def num_qubits(self) -> int:
        return len(self.qubits)

    def experiment(self) -> list[tuple[str, int]]:
        """(circuit name, times run) for the whole experiment, in order."""
        times = {"prep": 1, "round": self.rounds, "readout": 1}
        return [(name, times[name]) for name in EXPERIMENT_ORDER if name in self.circuits]

    def interaction_counts(self, circuit_names: Sequence[str] | None = None,
                           weighted: bool = False) -> dict[tuple[int, int], int]:
        """Two-qubit gates per patch-qubit pair (index pairs, smaller first).

        With `weighted`, each circuit counts as often as the experiment runs it.
        """
        names = list(self.circuits) if circuit_names is None else list(circuit_names)
        times = dict(self.experiment()) if weighted else {}
        counts: Counter = Counter()
        for name in names:
            for op in self.circuits[name].two_qubit_gates:
                a, b = (self.index[q] for q in op.qubits)
                counts[(min(a, b), max(a, b))] += times.get(name, 1)
        return dict(sorted(counts.items()))

    def per_circuit_counts(self, circuit_names: Sequence[str]) -> dict[tuple[int, int], tuple]:
        """For each interacting pair, its gate count in each named circuit (a tuple)."""
        each = [self.interaction_counts([n]) for n in circuit_names]
        pairs = sorted(set().union(*each)) if each else []
        return {p: tuple(c.get(p, 0) for c in each) for p in pairs}

    def qubits_with_role(self, role: str) -> tuple[str, ...]:
        return tuple(q for q in self.qubits if self.roles[q] == role)
