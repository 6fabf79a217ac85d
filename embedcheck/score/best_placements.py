"""The best few placements of a patch by the fidelity product, without listing the rest.

A patch much sparser than its chip has millions of placements; this searches them best
first (`place/best_first.py`, branch and bound) and stops once the `top` best are proven, or
on a budget with the gap still open. The cost is minus the log of the fidelity product
(`cost.py`), split into additive parts: per patch qubit and chip qubit, its measurements,
single-qubit gates, resets and idling; per interacting pair and coupler, its two-qubit
gates (weighted by how often each circuit runs). That split is exact when the schedule
does not depend on the placement (every coupler, single-qubit gate and measurement takes
as long on every qubit, or no qubit has T1/T2): then idle times are fixed. Otherwise the
search takes idle times from the schedule with median durations (`idle_exact` is False),
and the placements found are scored afterwards with the full model (`full_log_success`).

Qubits with no two-qubit gate in the searched circuits take no part in the search; they
go on the nearest free qubits as `find_placements` puts them. Scores are model
estimates from the calibration supplied, which drifts (see `cost.CAUTION`).

    >>> from embedcheck.model.device import Device, CouplerCalibration
    >>> from embedcheck.model.lattices import square_grid
    >>> from embedcheck.model.patch import Patch, Circuit, Operation
    >>> lat = square_grid(1, 4)
    >>> dev = Device.from_lattice(lat, name="line", coupler_calibration={
    ...     (0, 1): CouplerCalibration(0.03), (1, 2): CouplerCalibration(0.01),
    ...     (2, 3): CouplerCalibration(0.02)})
    >>> patch = Patch("pair", ("a", "b"), dict.fromkeys("ab", "data"),
    ...               {"round": Circuit("round", (Operation("cx", ("a", "b"), "2q"),))})
    >>> best = find_best_placements(dev, patch, top=2)
    >>> [p.physical for p in best.placements], best.proven
    ([(1, 2), (2, 3)], True)
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from ..place.best_first import best_first
from ..place.completion import complete_placement
from ..place.enumeration import role_masks
from ..place.matcher import Host
from ..place.reasons import necessary_conditions
from ..place.search import check_request, chip_graph
from ..place.symmetry import directional_arcs, interaction_pattern, symmetry_group
from .cost import experiment_counts, rank_placements
from .idle import idle_channel
from .schedule import run_idles

__all__ = ["BestPlacements", "find_best_placements"]


@dataclass(frozen=True, kw_only=True)
class BestPlacements:
    """The best placements found, best first, and how far that is proven.

    `log_success` is the searched model's log S of each placement (the fidelity product,
    idle times from a median-duration schedule unless `idle_exact`); `full_log_success`
    the full model's, as `rank_placements` computes it. `proven`: no placement outside these has
    a higher searched log S than the last one listed (and none at all remain when fewer
    than `top` came back). Otherwise (`stop_reason` 'budget') a placement not listed may
    have a log S up to `gap` higher than the last one listed. `reasons` explain why no
    placement exists, when a cheap check already rules it out."""

    circuits: tuple[str, ...]
    top: int                                     # placements asked for
    placements: tuple[Placement, ...]
    log_success: np.ndarray
    full_log_success: np.ndarray
    proven: bool
    stop_reason: str
    gap: float
    work: int
    idle_exact: bool
    symmetry_order: int
    reasons: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


def find_best_placements(device: Device, patch: Patch, *, top: int = 10,
                         circuits: Sequence[str] | None = None,
                         constraints: Constraints | None = None,
                         budget: int | None = None,
                         deadline: float | None = None) -> BestPlacements:
    """The `top` swap-free placements with the highest fidelity product (see the module
    doc), one per symmetry orbit, searched best first. `budget` caps the work (candidate
    extensions tried: identical runs stop at the same place); `deadline` (a
    `time.monotonic()` reading) is the clock's cap; `constraints` as in
    `find_placements`."""
    names = check_request(patch, circuits, top, None, 1, budget)
    rules = constraints or Constraints()
    reasons = necessary_conditions(device, patch, names, rules)
    empty = np.zeros(0)
    if reasons:
        return BestPlacements(circuits=names, top=top, placements=(), log_success=empty,
                              full_log_success=empty, proven=True, stop_reason="complete",
                              gap=0.0, work=0, idle_exact=True, symmetry_order=1,
                              reasons=tuple(r.text for r in reasons))
    pattern, placed = interaction_pattern(patch, names)
    chip = chip_graph(device, rules)
    host = Host.from_edges(chip.num_nodes(), chip.edge_list())
    physical = np.array(chip.nodes(), dtype=np.int64)
    usable = rules.qubits(device)
    blocked = {i for i in range(chip.num_nodes()) if physical[i] not in usable}
    allowed = rules.allowed_by_role(device, set(patch.roles.values())) if rules.roles else None
    masks = role_masks(chip, pattern, allowed, blocked)
    edges = [(int(a), int(b)) for a, b in pattern.edge_list()]
    node_cost, edge_cost, idle_exact = _costs(device, patch, names, placed, edges,
                                              physical, host)
    notes = []
    if rules.forbid_direction_fixes:          # directional gates only the native way
        tail = np.repeat(np.arange(host.n), host.degree)
        native = np.array([device.runs_natively(int(physical[a]), int(physical[b]))
                           for a, b in zip(tail, host.indices, strict=True)], dtype=bool)
        index = {e: i for i, e in enumerate(edges)}
        for a, b in directional_arcs(patch, names, placed):
            if (a, b) in index:
                edge_cost[index[(a, b)], ~native] = np.inf
            else:
                reverse = host.arcs(host.indices, tail)
                edge_cost[index[(b, a)], ~native[reverse]] = np.inf
        group = [tuple(range(len(placed)))]
    else:
        group, too_big = symmetry_group(pattern)
        if too_big:
            notes.append("the patch's symmetry group is too big to list: placements are "
                         "not merged by symmetry")
    if not idle_exact:
        notes.append("durations differ across the chip, so idle times depend on the "
                     "placement: the search takes them from a schedule with median "
                     "durations; full_log_success has the exact figure")
    found = best_first(host, len(placed), edges, node_cost=node_cost, edge_cost=edge_cost,
                       candidates=masks, symmetries=group, top=top, budget=budget,
                       deadline=deadline)
    placements, logs = [], []
    for row, cost in zip(found.maps.tolist(), found.costs.tolist(), strict=True):
        done: Placement | None
        if len(placed) == patch.num_qubits:
            done = Placement(tuple(int(physical[node]) for node in row))
        else:
            done = complete_placement(chip, patch, placed, row, blocked, allowed)
        if done is not None:
            placements.append(done)
            logs.append(-cost)
    # A budget stop with no gap left is a proof too: every map not returned costs at least
    # as much as the last one returned (ties remain, none better).
    proven = found.proven or (len(found.maps) >= top and found.gap <= 0.0)
    full = rank_placements(device, patch, placements) if placements else None
    order = {p: i for i, p in enumerate(full.placements)} if full else {}
    full_logs = np.array([full.log_success[order[p]] for p in placements]) if full \
        else empty
    return BestPlacements(circuits=names, top=top, placements=tuple(placements),
                          log_success=np.array(logs), full_log_success=full_logs,
                          proven=proven, stop_reason=found.stop_reason,
                          gap=float(found.gap), work=found.work,
                          idle_exact=idle_exact, symmetry_order=len(group),
                          notes=tuple(notes))


def _costs(device, patch, names, placed, edges, physical, host):
    """(node_cost, edge_cost, idle_exact): minus the log fidelity terms of each pattern
    node on each chip node and each pattern edge on each host arc; idle_exact says
    whether the idle part is exact (see `_fixed_schedule`)."""
    cal = device.calibration_arrays
    pairs, measures, singles, resets = experiment_counts(patch)
    with np.errstate(divide="ignore"):
        readout = -np.log1p(-cal.readout_error[physical])
        single = -np.log1p(-cal.single_qubit_error[physical])
        reset = -np.log1p(-cal.reset_error[physical])
    node_cost = np.array([measures[q] * readout + singles[q] * single + resets[q] * reset
                          for q in placed]).reshape(len(placed), host.n)
    idle_exact = _fixed_schedule(cal, physical, host)
    node_cost = node_cost + _idle_costs(patch, placed, cal, physical)
    tail = np.repeat(np.arange(host.n), host.degree)
    error = cal.coupler(physical[tail], physical[host.indices], cal.coupler_error)
    with np.errstate(divide="ignore"):
        per_arc = -np.log1p(-np.nan_to_num(error, nan=1.0))
    edge_cost = np.zeros((len(edges), len(host.keys)))
    for e, (a, b) in enumerate(edges):
        pa, pb = placed[a], placed[b]
        weight = pairs.get((pa, pb), 0) + pairs.get((pb, pa), 0)
        edge_cost[e] = weight * per_arc if weight else 0.0
    return node_cost, edge_cost, idle_exact


def _fixed_schedule(cal, physical, host) -> bool:
    """Does the schedule (hence every idle time) not depend on the placement?"""
    if np.isinf(cal.t1_us[physical]).all() and np.isinf(cal.t2_us[physical]).all():
        return True                          # nothing decays: no idle term at all
    tail = np.repeat(np.arange(host.n), host.degree)
    ns = cal.coupler(physical[tail], physical[host.indices], cal.coupler_ns)
    return all(len(np.unique(values)) <= 1 for values in
               (ns, cal.single_qubit_ns[physical], cal.measurement_ns[physical]))


def _idle_costs(patch, placed, cal, physical) -> np.ndarray:
    """Minus the log idle factors, per pattern node and chip node, as `cost.scores` sums
    them, on the schedule every placement gets when each duration is the chip's median
    (exact when durations do not vary: see `_fixed_schedule`)."""
    out = np.zeros((len(placed), len(physical)))
    if not len(physical):
        return out

    def median(values):
        known = values[physical][values[physical] > 0]
        return np.full(cal.size, float(np.median(known)) if known.size else 0.0)

    typical = replace(cal, coupler_keys=np.zeros(0, dtype=np.int64),   # every pair off
                      coupler_error=np.zeros(0), coupler_ns=np.zeros(0),  # a coupler: the
                      coupler_ns_given=np.zeros(0, dtype=bool),
                      single_qubit_ns=median(cal.single_qubit_ns),        # median two-qubit
                      measurement_ns=median(cal.measurement_ns))          # duration
    grid = np.zeros((1, patch.num_qubits), dtype=np.int64)
    t1, t2 = cal.t1_us[physical], cal.t2_us[physical]
    for run in run_idles(patch, grid, typical):        # the one idle rule, run by run
        waited = run.idle_ns[0]
        for j, q in enumerate(placed):
            t = float(waited[q])
            if t > 0:
                with np.errstate(divide="ignore"):
                    out[j] -= run.times * np.log1p(-idle_channel(t, t1, t2).total)
    return out
