"""The chip: qubits, fixed couplers, calibration, dead parts.

A `Device` is plain immutable data. It is built by the loaders in `embedcheck.io`
(from a YAML chip file) or directly from a lattice family; every later stage reads
it and never changes it.

    >>> from embedcheck.lattices import square_grid
    >>> dev = Device.from_lattice(square_grid(2, 3), name="toy")
    >>> dev.num_qubits, len(dev.couplers), dev.is_coupled(0, 1), dev.is_coupled(0, 4)
    (6, 7, True, False)
"""
from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np
import rustworkx as rx

Pair = tuple[int, int]


def pair(a: int, b: int) -> Pair:
    """The undirected coupler key for qubits a and b (smaller index first)."""
    return (a, b) if a < b else (b, a)


@dataclass(frozen=True)
class QubitCalibration:
    """Per-qubit figures from one calibration snapshot; None where not given."""

    readout_error: float | None = None
    single_qubit_error: float | None = None
    reset_error: float | None = None
    t1_us: float | None = None
    t2_us: float | None = None
    single_qubit_duration_ns: float | None = None
    measurement_duration_ns: float | None = None


@dataclass(frozen=True)
class CouplerCalibration:
    """Per-coupler figures from one calibration snapshot; None where not given."""

    two_qubit_error: float | None = None
    duration_ns: float | None = None


@dataclass(frozen=True)
class CalibrationArrays:
    """Dense numpy views of one calibration snapshot (see `Device.calibration_arrays`)."""

    two_qubit_error: np.ndarray      # (n, n), NaN where not coupled
    two_qubit_ns: np.ndarray         # (n, n), NaN where not coupled
    readout_error: np.ndarray
    single_qubit_error: np.ndarray
    reset_error: np.ndarray
    single_qubit_ns: np.ndarray
    measurement_ns: np.ndarray
    t1_us: np.ndarray                # inf where not given
    t2_us: np.ndarray
    median_two_qubit_ns: float       # stands in for off-coupler gates


@dataclass(frozen=True)
class Device:
    """A chip with fixed couplers and one calibration snapshot.

    `couplers` are undirected pairs (smaller index first). `directed` maps the couplers
    whose native gate runs one way only to that (control, target) direction; the rest
    run both ways. Dead qubits and dead couplers stay listed (so a report can name
    them) but are never "live".
    """

    name: str
    qubits: tuple[int, ...]
    couplers: tuple[Pair, ...]
    positions: Mapping[int, tuple[float, float]] = field(default_factory=dict)
    qubit_calibration: Mapping[int, QubitCalibration] = field(default_factory=dict)
    coupler_calibration: Mapping[Pair, CouplerCalibration] = field(default_factory=dict)
    dead_qubits: frozenset[int] = frozenset()
    dead_couplers: frozenset[Pair] = frozenset()
    directed: Mapping[Pair, tuple[int, int]] = field(default_factory=dict)
    native_two_qubit_gate: str = "cx"
    description: str = ""
    calibration_timestamp: str | None = None
    source: str | None = None

    def __post_init__(self) -> None:
        for name in ("positions", "qubit_calibration", "coupler_calibration", "directed"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

    @classmethod
    def from_lattice(cls, lattice, **kwargs) -> "Device":
        """A device from a `lattices.Lattice`, with any other fields as keywords."""
        return cls(qubits=lattice.qubits, couplers=lattice.couplers,
                   positions=lattice.positions, **kwargs)

    @classmethod
    def from_graph(cls, graph, *, name: str, **kwargs) -> "Device":
        """A device from a networkx or rustworkx graph; node i (or node label i) is qubit i.

        >>> import networkx as nx
        >>> Device.from_graph(nx.cycle_graph(4), name="square").couplers
        ((0, 1), (0, 3), (1, 2), (2, 3))
        """
        if hasattr(graph, "edge_list"):               # rustworkx
            qubits = tuple(graph.node_indices())
            edges = graph.edge_list()
        else:                                         # networkx
            qubits = tuple(graph.nodes)
            edges = graph.edges()
        if not all(isinstance(q, int) and q >= 0 for q in qubits):
            raise ValueError("graph nodes must be non-negative integers "
                             "(networkx.convert_node_labels_to_integers helps)")
        couplers = tuple(sorted({pair(a, b) for a, b in edges if a != b}))
        return cls(name=name, qubits=tuple(sorted(qubits)), couplers=couplers, **kwargs)

    def to_target(self):
        """This device as a qiskit `Target` (see `embedcheck.qiskit_bridge.device_target`)."""
        from .qiskit_bridge import device_target
        return device_target(self)

    @classmethod
    def from_target(cls, target, *, name: str) -> "Device":
        """A device from a qiskit `Target` (see `embedcheck.qiskit_bridge.device_from_target`)."""
        from .qiskit_bridge import device_from_target
        return device_from_target(target, name=name)

    def runs_natively(self, control: int, target: int) -> bool:
        """True when the native gate runs control -> target on a live coupler without a fix."""
        if not self.is_coupled(control, target):
            return False
        if self.native_two_qubit_gate == "cz":      # symmetric: no direction to respect
            return True
        return self.directed.get(pair(control, target), (control, target)) == (control, target)

    @property
    def num_qubits(self) -> int:
        return len(self.qubits)

    @property
    def live_qubits(self) -> tuple[int, ...]:
        return tuple(q for q in self.qubits if q not in self.dead_qubits)

    @property
    def live_couplers(self) -> tuple[Pair, ...]:
        """Couplers usable today: not dead and with both ends alive."""
        dead_q = self.dead_qubits
        return tuple(c for c in self.couplers if c not in self.dead_couplers
                     and c[0] not in dead_q and c[1] not in dead_q)

    def is_coupled(self, a: int, b: int) -> bool:
        """True when a live coupler joins physical qubits a and b."""
        return pair(a, b) in self._live_set

    @property
    def _live_set(self) -> frozenset[Pair]:
        cached = self.__dict__.get("_live_cache")
        if cached is None:
            cached = frozenset(self.live_couplers)
            object.__setattr__(self, "_live_cache", cached)
        return cached

    @property
    def _all_couplers(self) -> frozenset[Pair]:
        cached = self.__dict__.get("_all_cache")
        if cached is None:
            cached = frozenset(self.couplers)
            object.__setattr__(self, "_all_cache", cached)
        return cached

    def live_graph(self) -> rx.PyGraph:
        """The live coupling graph; node index i holds physical qubit `qubits[i]`."""
        graph = rx.PyGraph(multigraph=False)
        index = {q: graph.add_node(q) for q in self.qubits}
        graph.add_edges_from_no_data(
            [(index[a], index[b]) for a, b in self.live_couplers])
        # Dead qubits stay as isolated nodes so node indices match `qubits`.
        return graph

    def calibration_arrays(self) -> "CalibrationArrays":
        """Every calibration figure as a dense array indexed by physical qubit number.

        Missing errors are 0 and missing durations 0; missing T1/T2 are infinite (no
        idle error); uncoupled pairs are NaN in the coupler arrays so using one shows.
        """
        n = max(self.qubits) + 1 if self.qubits else 0
        two, readout, single = self.error_arrays()
        two_ns = np.full((n, n), np.nan)
        for a, b in self.live_couplers:
            cal = self.coupler_calibration.get((a, b))
            two_ns[a, b] = two_ns[b, a] = cal.duration_ns if cal and cal.duration_ns else 0.0
        def qubit_array(field, missing):
            out = np.full(n, missing, dtype=float)
            for q, cal in self.qubit_calibration.items():
                value = getattr(cal, field)
                if value is not None:
                    out[q] = value
            return out
        known = two_ns[~np.isnan(two_ns)]
        known = known[known > 0]
        return CalibrationArrays(
            two_qubit_error=two, two_qubit_ns=two_ns, readout_error=readout,
            single_qubit_error=single, reset_error=qubit_array("reset_error", 0.0),
            single_qubit_ns=qubit_array("single_qubit_duration_ns", 0.0),
            measurement_ns=qubit_array("measurement_duration_ns", 0.0),
            t1_us=qubit_array("t1_us", np.inf), t2_us=qubit_array("t2_us", np.inf),
            median_two_qubit_ns=float(np.median(known)) if known.size else 0.0)

    def error_arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Dense calibration arrays indexed by physical qubit number.

        Returns (two_qubit_error[n, n], readout_error[n], single_qubit_error[n]).
        Missing figures are 0 (the report counts them as uncalibrated); uncoupled
        pairs are NaN so that using one is visible.
        """
        n = max(self.qubits) + 1 if self.qubits else 0
        two = np.full((n, n), np.nan)
        for a, b in self.live_couplers:
            cal = self.coupler_calibration.get((a, b))
            err = cal.two_qubit_error if cal and cal.two_qubit_error is not None else 0.0
            two[a, b] = two[b, a] = err
        readout = np.zeros(n)
        single = np.zeros(n)
        for q, cal in self.qubit_calibration.items():
            readout[q] = cal.readout_error or 0.0
            single[q] = cal.single_qubit_error or 0.0
        return two, readout, single
