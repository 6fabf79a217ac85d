"""The chip: qubits, fixed couplers, calibration, dead parts.

A `Device` is plain immutable data. It is built by the loaders in `embedcheck.io`
(from a YAML chip file or a qiskit `Target`), from a lattice family or from a graph;
every later stage reads it and never changes it. Derived views (the live couplers, the
calibration as numpy arrays) are computed once, on first use (`functools.cached_property`).

    >>> from embedcheck.model.lattices import square_grid
    >>> dev = Device.from_lattice(square_grid(2, 3), name="toy")
    >>> dev.num_qubits, len(dev.couplers), dev.is_coupled(0, 1), dev.is_coupled(0, 4)
    (6, 7, True, False)
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cached_property
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import InputError
from .frozen import reduce_frozen
from .lattices import Lattice, Pair, pair

if TYPE_CHECKING:
    import rustworkx as rx

__all__ = ["CalibrationArrays", "CouplerCalibration", "Device", "Pair", "QubitCalibration",
           "pair", "scaled_device"]

_DENSE_LIMIT = 4096      # qubits up to which coupler look-ups use a dense table


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


@dataclass(frozen=True, kw_only=True)
class CalibrationArrays:
    """Dense numpy views of one calibration snapshot (see `Device.calibration_arrays`).

    Per-qubit figures are arrays indexed by physical qubit number. Couplers are kept
    sparse (memory grows with couplers, not qubits squared): `coupler(a, b, values)`
    looks pairs up in bulk, NaN where no live coupler joins them. The `*_given` masks
    say where the calibration gives a duration (a missing one counts as 0).
    """

    coupler_keys: np.ndarray         # sorted a * n + b for live couplers (a < b)
    coupler_error: np.ndarray        # in the order of coupler_keys
    coupler_ns: np.ndarray
    coupler_ns_given: np.ndarray
    size: int                        # n: largest qubit number + 1
    readout_error: np.ndarray
    single_qubit_error: np.ndarray
    reset_error: np.ndarray
    single_qubit_ns: np.ndarray
    single_qubit_ns_given: np.ndarray
    measurement_ns: np.ndarray
    measurement_ns_given: np.ndarray
    t1_us: np.ndarray                # inf where not given
    t2_us: np.ndarray
    median_two_qubit_ns: float       # stands in for off-coupler gates (0 when none is known)

    def coupler_index(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Index into the coupler arrays of the coupler joining a[i], b[i]; -1 where none.

        A dense (n x n) int32 table for chips up to 4096 qubits (at most 64 MiB), a
        binary search over the sorted coupler keys beyond.
        """
        if not len(self.coupler_keys):
            return np.full(np.shape(a), -1, dtype=np.int64)
        table = self.dense_table
        if table is not None:
            return table[a, b]
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        keys = lo.astype(np.int64) * self.size + hi
        pos = np.minimum(np.searchsorted(self.coupler_keys, keys), len(self.coupler_keys) - 1)
        return np.where(self.coupler_keys[pos] == keys, pos, -1)

    @cached_property
    def dense_table(self) -> np.ndarray | None:
        """The (n x n) table of coupler indices (-1: none), or None above 4096 qubits."""
        if self.size > _DENSE_LIMIT:
            return None
        table = np.full((self.size, self.size), -1, dtype=np.int32)
        lo, hi = np.divmod(self.coupler_keys, self.size)
        table[lo, hi] = table[hi, lo] = np.arange(len(self.coupler_keys), dtype=np.int32)
        return table

    def coupler(self, a: np.ndarray, b: np.ndarray, values: np.ndarray) -> np.ndarray:
        """values[coupler joining a[i], b[i]] elementwise, NaN where none does."""
        return self.values_at(self.coupler_index(a, b), values)

    @staticmethod
    def values_at(index: np.ndarray, values: np.ndarray) -> np.ndarray:
        """values[index], NaN where index is -1."""
        if not len(values):
            return np.full(np.shape(index), np.nan)
        return np.where(index >= 0, values[np.maximum(index, 0)], np.nan)


@dataclass(frozen=True)
class Device:
    """A chip with fixed couplers and one calibration snapshot.

    `couplers` are undirected pairs (smaller index first). `directed` maps the couplers
    whose native gate runs one way only to that (control, target) direction; the rest
    run both ways. Dead qubits and dead couplers stay listed (so a report can name
    them) but are never "live". `placeholder_calibration` is True when the chip file marks
    its calibration as a placeholder (as `embedcheck generate` does): the same invented
    figures everywhere, so a ranking of placements carries no information.
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
    placeholder_calibration: bool = False

    def __reduce__(self) -> tuple[Any, ...]:
        return reduce_frozen(self)    # worker processes get copies

    def __post_init__(self) -> None:
        for name in ("positions", "qubit_calibration", "coupler_calibration", "directed"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

    @classmethod
    def from_lattice(cls, lattice: Lattice, **kwargs: Any) -> Device:
        """A device from a `lattices.Lattice`, with any other fields as keywords."""
        return cls(qubits=lattice.qubits, couplers=lattice.couplers,
                   positions=lattice.positions, **kwargs)

    @classmethod
    def from_graph(cls, graph: Any, *, name: str, **kwargs: Any) -> Device:
        """A device from a networkx or rustworkx graph; node i (or node label i) is qubit i.
        A directed graph's one-way arcs become native coupler directions.

        >>> import networkx as nx
        >>> Device.from_graph(nx.cycle_graph(4), name="square").couplers
        ((0, 1), (0, 3), (1, 2), (2, 3))
        """
        if hasattr(graph, "edge_list"):               # rustworkx
            qubits = tuple(graph.node_indices())
            edges = list(graph.edge_list())
            directed = hasattr(graph, "in_degree")       # a PyDiGraph
        else:                                         # networkx
            qubits = tuple(graph.nodes)
            edges = list(graph.edges())
            directed = graph.is_directed()
        if not all(isinstance(q, int) and not isinstance(q, bool) and q >= 0 for q in qubits):
            raise InputError("graph nodes must be non-negative integers "
                             "(networkx.convert_node_labels_to_integers helps)")
        if not qubits:
            raise InputError(f"the graph for chip '{name}' has no nodes")
        loops = [a for a, b in edges if a == b]
        if loops:
            raise InputError(f"the graph for chip '{name}' has a self-loop at node {loops[0]}: a "
                             "coupler joins two different qubits")
        couplers = tuple(sorted({pair(a, b) for a, b in edges}))
        if directed and "directed" not in kwargs:      # arcs one way only: native directions
            arcs = set(edges)
            kwargs["directed"] = {pair(a, b): (a, b) for a, b in arcs if (b, a) not in arcs}
        return cls(name=name, qubits=tuple(sorted(qubits)), couplers=couplers, **kwargs)

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

    @cached_property
    def live_couplers(self) -> tuple[Pair, ...]:
        """Couplers usable today: not dead and with both ends alive."""
        dead_q = self.dead_qubits
        return tuple(c for c in self.couplers if c not in self.dead_couplers
                     and c[0] not in dead_q and c[1] not in dead_q)

    @cached_property
    def live_coupler_set(self) -> frozenset[Pair]:
        """`live_couplers` as a set, for look-ups."""
        return frozenset(self.live_couplers)

    @cached_property
    def coupler_set(self) -> frozenset[Pair]:
        """Every coupler, dead or alive, as a set."""
        return frozenset(self.couplers)

    def is_coupled(self, a: int, b: int) -> bool:
        """True when a live coupler joins physical qubits a and b."""
        return pair(a, b) in self.live_coupler_set

    def has_coupler(self, a: int, b: int) -> bool:
        """True when a coupler joins a and b, dead or alive."""
        return pair(a, b) in self.coupler_set

    def live_graph(self) -> rx.PyGraph:
        """The live coupling graph; node index i holds physical qubit `qubits[i]`."""
        import rustworkx as rx

        graph = rx.PyGraph(multigraph=False)
        index = {q: graph.add_node(q) for q in self.qubits}
        graph.add_edges_from_no_data(
            [(index[a], index[b]) for a, b in self.live_couplers])
        # Dead qubits stay as isolated nodes so node indices match `qubits`.
        return graph

    @cached_property
    def calibration_arrays(self) -> CalibrationArrays:
        """Every calibration figure as numpy arrays (see `CalibrationArrays`).

        Missing errors are 0 and missing durations 0; missing T1/T2 are infinite (no
        idle error); pairs without a live coupler look up as NaN. Built once per device
        (the device is immutable) and shared by the ranking, audit and schedule.
        """
        n = max(self.qubits) + 1 if self.qubits else 0
        live = sorted(self.live_couplers)
        keys = np.array([a * n + b for a, b in live], dtype=np.int64)
        cals = [self.coupler_calibration.get(c) for c in live]
        error = np.array([(c.two_qubit_error or 0.0) if c else 0.0 for c in cals])
        ns = np.array([(c.duration_ns or 0.0) if c else 0.0 for c in cals])
        ns_given = np.array([c is not None and c.duration_ns is not None for c in cals],
                            dtype=bool)

        def qubit_array(name: str, missing: float) -> np.ndarray:
            out = np.full(n, missing, dtype=float)
            for q, cal in self.qubit_calibration.items():
                value = getattr(cal, name)
                if value is not None:
                    out[q] = value
            return out

        def given(name: str) -> np.ndarray:
            out = np.zeros(n, dtype=bool)
            for q, cal in self.qubit_calibration.items():
                out[q] = getattr(cal, name) is not None
            return out
        known = ns[ns > 0]
        return CalibrationArrays(
            coupler_keys=keys, coupler_error=error, coupler_ns=ns, coupler_ns_given=ns_given,
            size=n, readout_error=qubit_array("readout_error", 0.0),
            single_qubit_error=qubit_array("single_qubit_error", 0.0),
            reset_error=qubit_array("reset_error", 0.0),
            single_qubit_ns=qubit_array("single_qubit_duration_ns", 0.0),
            single_qubit_ns_given=given("single_qubit_duration_ns"),
            measurement_ns=qubit_array("measurement_duration_ns", 0.0),
            measurement_ns_given=given("measurement_duration_ns"),
            t1_us=qubit_array("t1_us", np.inf), t2_us=qubit_array("t2_us", np.inf),
            median_two_qubit_ns=float(np.median(known)) if known.size else 0.0)

    def __repr__(self) -> str:
        dead = f", dead: {len(self.dead_qubits)} qubits and {len(self.dead_couplers)} " \
               "couplers" if self.dead_qubits or self.dead_couplers else ""
        when = f", calibration of {self.calibration_timestamp}" \
            if self.calibration_timestamp else ""
        return (f"Device({self.name!r}: {len(self.qubits)} qubits, {len(self.couplers)} "
                f"couplers{dead}, native {self.native_two_qubit_gate}{when})")

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


# The largest value each figure can take when scaled up: a flip probability 1/2, and the
# average gate error of the completely depolarizing channel, (d - 1) / d for d = 2, 4
# (Nielsen, Phys. Lett. A 303, 249 (2002)).
_ERROR_CEILING = {"readout_error": 0.5, "reset_error": 0.5, "single_qubit_error": 0.5,
                  "two_qubit_error": 0.75}


def scaled_device(device: Device, factor: float) -> Device:
    """The chip with every error figure times `factor` and T1, T2 divided by it.

    One knob for "a better or worse calibration of the same chip" (`factor` 1 is the chip
    itself): two-qubit, single-qubit, readout and reset errors are multiplied (each capped
    at the largest value it can take), coherence times divided, so the idle error of a
    wait of length t (1 - exp(-t/T), Ghosh, Fowler & Geller, Phys. Rev. A 86, 062318
    (2012)) scales by the same factor to first order. Durations, couplers, dead parts and
    the rest stay as they are. The forecast draws its logical-versus-physical curves
    with it.

    >>> from embedcheck.model.lattices import line
    >>> chip = Device.from_lattice(line(2), name="pair",
    ...     coupler_calibration={(0, 1): CouplerCalibration(0.01, 300.0)},
    ...     qubit_calibration={0: QubitCalibration(readout_error=0.02, t1_us=100.0)})
    >>> half = scaled_device(chip, 0.5)
    >>> half.coupler_calibration[(0, 1)], half.qubit_calibration[0].t1_us
    (CouplerCalibration(two_qubit_error=0.005, duration_ns=300.0), 200.0)
    """
    if isinstance(factor, bool) or not isinstance(factor, (int, float)) \
            or not math.isfinite(factor) or factor <= 0:
        raise InputError(f"a calibration scale must be a positive number, not {factor!r}",
                         key="scale")
    if factor == 1:
        return device

    def error(name: str, value: float | None) -> float | None:
        return None if value is None else min(value * factor, _ERROR_CEILING[name])

    def coherence(value: float | None) -> float | None:
        return None if value is None else value / factor

    qubits = {q: replace(c, readout_error=error("readout_error", c.readout_error),
                         single_qubit_error=error("single_qubit_error", c.single_qubit_error),
                         reset_error=error("reset_error", c.reset_error),
                         t1_us=coherence(c.t1_us), t2_us=coherence(c.t2_us))
              for q, c in device.qubit_calibration.items()}
    couplers = {c: replace(cal, two_qubit_error=error("two_qubit_error", cal.two_qubit_error))
                for c, cal in device.coupler_calibration.items()}
    return replace(device, qubit_calibration=qubits, coupler_calibration=couplers)
