"""embedcheck: does a QEC code patch sit on a chip's fixed couplers with no added two-qubit gates?

The public API, in the order data flows (load, search, audit, rank):

    >>> import embedcheck
    >>> dev = embedcheck.Device.from_lattice(embedcheck.heavy_hex(1, 2), name="tiny")
    >>> dev.num_qubits
    21
"""
__version__ = "0.1.0"

from .audit.exact import AuditReport, CircuitAudit, OffCouplerGate, audit_placement, off_coupler_counts
from .model.device import CouplerCalibration, Device, QubitCalibration
from .io.chipfile import load_device
from .errors import InputError
from .io.patchfile import load_patch
from .model.lattices import Lattice, heavy_hex, heavy_hex_qubit_count, square_grid
from .model.patch import Circuit, Operation, Patch
from .score.cost import CAUTION, Ranking, rank_placements
from .place.search import Placement, SearchResult, find_placements
from .pipeline.vet import CircuitFit, Vetting, vet_patch

__all__ = [
    "AuditReport", "CAUTION", "Circuit", "CircuitAudit", "CircuitFit", "CouplerCalibration",
    "Device", "InputError", "Lattice", "OffCouplerGate", "Operation", "Patch", "Placement",
    "QubitCalibration", "Ranking", "SearchResult", "Vetting", "audit_placement",
    "find_placements", "heavy_hex", "heavy_hex_qubit_count", "load_device", "load_patch",
    "off_coupler_counts", "rank_placements", "square_grid", "vet_patch",
]
