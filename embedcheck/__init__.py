"""embedcheck: does a QEC code patch sit on a chip's fixed couplers with no added two-qubit gates?

The public API, in the order data flows (load, search, audit, rank, report). Every name
is imported on first use (PEP 562), so `import embedcheck` stays cheap:

    >>> import embedcheck
    >>> dev = embedcheck.Device.from_lattice(embedcheck.heavy_hex(1, 2), name="tiny")
    >>> dev.num_qubits
    21
"""
from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from .version import __version__

if TYPE_CHECKING:
    from .audit.cross_check import cross_check
    from .audit.exact import AuditReport, CircuitAudit, OffCouplerGate, audit_placement
    from .audit.qiskit_views import initial_layout, placed_qasm3, qiskit_layout
    from .errors import InputError, InternalError
    from .io.chipfile import load_device, load_snapshots
    from .io.patchfile import (
        load_patch,
        patch_from_family,
        patch_from_qiskit,
        patch_from_stim,
    )
    from .io.projectfile import Project, load_project
    from .io.qiskit_target import device_from_target, device_target
    from .model.codes import FAMILIES as CODE_FAMILIES
    from .model.constraints import Constraints
    from .model.constraints import build as build_constraints
    from .model.device import CouplerCalibration, Device, QubitCalibration, scaled_device
    from .model.lattices import (
        Lattice,
        heavy_hex,
        heavy_hex_qubit_count,
        hexagonal,
        line,
        ring,
        square_grid,
    )
    from .model.patch import Circuit, Detector, Operation, Patch
    from .model.placement import Placement, off_coupler_counts
    from .pipeline.checks import CheckResult, PairResult, RuleOutcome, run_project
    from .pipeline.find import FindResult, LogicalNote, run_find
    from .pipeline.forecast import Forecast, run_forecast
    from .pipeline.vet import CircuitFit, Vetting, vet_patch
    from .place.near_misses import NearMiss, near_misses
    from .place.search import SearchResult, StopReason, find_placements
    from .repair import Repair, project_preparation, repair_preparation, repaired_patch
    from .report.data import check_dict, find_dict
    from .report.forecast import draw_forecast, forecast_dict
    from .report.notebook import PlacementView, view
    from .report.picture import draw_placement, draw_score_map
    from .score.best_placements import BestPlacements, find_best_placements
    from .score.calibrated import noisy, noisy_tasks
    from .score.cost import (
        CAUTION,
        Ranking,
        Sensitivity,
        SnapshotRanking,
        rank_across_snapshots,
        rank_placements,
        sensitivity,
    )
    from .score.logical import LogicalRanking, MonteCarlo, rank_by_logical
    from .score.noise import noisy_circuit, stim_experiment
    from .score.schedule import Schedule, schedule_circuit
    from .score.simulate import (
        DetectorProblem,
        check_detectors,
        fault_distance,
        fault_distance_at_most,
    )

# public name -> (module, name there)
_WHERE = {
    "AuditReport": ("audit.exact", None), "CircuitAudit": ("audit.exact", None),
    "OffCouplerGate": ("audit.exact", None), "audit_placement": ("audit.exact", None),
    "cross_check": ("audit.cross_check", None),
    "initial_layout": ("audit.qiskit_views", None), "placed_qasm3": ("audit.qiskit_views", None),
    "qiskit_layout": ("audit.qiskit_views", None),
    "InputError": ("errors", None), "InternalError": ("errors", None),
    "load_device": ("io.chipfile", None), "load_snapshots": ("io.chipfile", None),
    "load_patch": ("io.patchfile", None), "patch_from_family": ("io.patchfile", None),
    "patch_from_qiskit": ("io.patchfile", None), "patch_from_stim": ("io.patchfile", None),
    "Project": ("io.projectfile", None), "load_project": ("io.projectfile", None),
    "device_from_target": ("io.qiskit_target", None),
    "device_target": ("io.qiskit_target", None),
    "CODE_FAMILIES": ("model.codes", "FAMILIES"),
    "Constraints": ("model.constraints", None),
    "build_constraints": ("model.constraints", "build"),
    "CouplerCalibration": ("model.device", None), "Device": ("model.device", None),
    "QubitCalibration": ("model.device", None), "scaled_device": ("model.device", None),
    "Lattice": ("model.lattices", None), "heavy_hex": ("model.lattices", None),
    "heavy_hex_qubit_count": ("model.lattices", None), "hexagonal": ("model.lattices", None),
    "line": ("model.lattices", None), "ring": ("model.lattices", None),
    "square_grid": ("model.lattices", None),
    "Circuit": ("model.patch", None), "Detector": ("model.patch", None),
    "Operation": ("model.patch", None), "Patch": ("model.patch", None),
    "Placement": ("model.placement", None), "off_coupler_counts": ("model.placement", None),
    "CheckResult": ("pipeline.checks", None), "PairResult": ("pipeline.checks", None),
    "RuleOutcome": ("pipeline.checks", None), "run_project": ("pipeline.checks", None),
    "FindResult": ("pipeline.find", None), "LogicalNote": ("pipeline.find", None),
    "run_find": ("pipeline.find", None),
    "Forecast": ("pipeline.forecast", None), "run_forecast": ("pipeline.forecast", None),
    "CircuitFit": ("pipeline.vet", None), "Vetting": ("pipeline.vet", None),
    "vet_patch": ("pipeline.vet", None),
    "NearMiss": ("place.near_misses", None), "near_misses": ("place.near_misses", None),
    "SearchResult": ("place.search", None), "StopReason": ("place.search", None),
    "find_placements": ("place.search", None),
    "Repair": ("repair", None), "project_preparation": ("repair", None),
    "repair_preparation": ("repair", None), "repaired_patch": ("repair", None),
    "check_dict": ("report.data", None), "find_dict": ("report.data", None),
    "draw_forecast": ("report.forecast", None), "forecast_dict": ("report.forecast", None),
    "draw_placement": ("report.picture", None), "draw_score_map": ("report.picture", None),
    "view": ("report.notebook", None), "PlacementView": ("report.notebook", None),
    "BestPlacements": ("score.best_placements", None),
    "find_best_placements": ("score.best_placements", None),
    "noisy": ("score.calibrated", None), "noisy_tasks": ("score.calibrated", None),
    "CAUTION": ("score.cost", None), "Ranking": ("score.cost", None),
    "Sensitivity": ("score.cost", None), "SnapshotRanking": ("score.cost", None),
    "rank_across_snapshots": ("score.cost", None), "rank_placements": ("score.cost", None),
    "sensitivity": ("score.cost", None),
    "LogicalRanking": ("score.logical", None), "MonteCarlo": ("score.logical", None),
    "rank_by_logical": ("score.logical", None),
    "noisy_circuit": ("score.noise", None), "stim_experiment": ("score.noise", None),
    "Schedule": ("score.schedule", None), "schedule_circuit": ("score.schedule", None),
    "DetectorProblem": ("score.simulate", None), "check_detectors": ("score.simulate", None),
    "fault_distance": ("score.simulate", None),
    "fault_distance_at_most": ("score.simulate", None),
}

__all__ = [
    "__version__", "AuditReport", "CAUTION", "CODE_FAMILIES", "CheckResult", "Circuit",
    "CircuitAudit", "CircuitFit", "Constraints", "CouplerCalibration", "Detector",
    "DetectorProblem", "Device", "FindResult", "Forecast", "InputError", "InternalError",
    "Lattice", "LogicalNote", "LogicalRanking", "MonteCarlo", "NearMiss", "OffCouplerGate",
    "Operation", "PairResult", "Patch", "Placement", "PlacementView", "Project",
    "QubitCalibration", "Ranking", "Repair", "RuleOutcome", "Schedule", "SearchResult",
    "Sensitivity", "SnapshotRanking", "StopReason", "Vetting", "audit_placement",
    "build_constraints", "check_detectors", "check_dict", "cross_check", "device_from_target",
    "device_target", "draw_forecast", "draw_placement", "draw_score_map", "fault_distance",
    "fault_distance_at_most", "find_dict", "find_placements", "forecast_dict", "heavy_hex",
    "heavy_hex_qubit_count", "hexagonal", "initial_layout", "line", "load_device", "load_patch",
    "load_project", "load_snapshots", "near_misses", "noisy", "noisy_circuit", "noisy_tasks",
    "off_coupler_counts", "patch_from_family", "patch_from_qiskit", "patch_from_stim",
    "placed_qasm3", "project_preparation", "qiskit_layout", "rank_across_snapshots",
    "rank_by_logical", "rank_placements", "repair_preparation", "repaired_patch", "ring",
    "run_find", "run_forecast", "run_project", "scaled_device", "schedule_circuit", "sensitivity",
    "square_grid", "stim_experiment", "vet_patch", "view",
    "BestPlacements", "find_best_placements",
]


def __getattr__(name: str) -> Any:
    """Import a public name on first use (PEP 562)."""
    try:
        module, attribute = _WHERE[name]
    except KeyError:
        raise AttributeError(f"module 'embedcheck' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(f".{module}", __name__), attribute or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_WHERE))
