"""Rank placements by the estimated success probability of the whole experiment.

Cost model (independent errors; any error event spoils the shot; the "product of
fidelities" estimate, common practice):

    S = prod_{2q gates g}     (1 - e2[coupler(g)])
      * prod_{measurements m} (1 - r[qubit(m)])          (mid-circuit ones included)
      * prod_{1q gates g}     (1 - e1[qubit(g)])          (where given)
      * prod_{resets}         (1 - e_reset[qubit])        (where given)
      * prod_{circuit runs c, qubits q} (1 - p_idle(t_idle[c, q]; T1[q], T2[q]))

over prep, `rounds` check rounds and readout. Idle times come from an
as-soon-as-possible schedule of each circuit with the chip's durations and its idle
rule (see `schedule.py`): a qubit idles between two of its operations, in one circuit
or across circuits, unless the first left it in |0> (a Z-basis reset) or the second is a
reset; never before its first operation or after its last. t_idle[c, q] sums the waits
that end in run c; the first and the later runs of a repeated circuit are counted
apart. The idle error is the one idle model (`idle.py`): the Pauli-twirled amplitude
and phase damping channel (the Pauli twirling approximation, Ghosh, Fowler & Geller,
Phys. Rev. A 86, 062318 (2012); the tests check it against qiskit's Kraus operators
twirled numerically):

    p_x = p_y = (1 - exp(-t/T1)) / 4
    p_z       = (1 - exp(-t/T2)) / 2 - (1 - exp(-t/T1)) / 4
    p_idle    = p_x + p_y + p_z = (1 - exp(-t/T1)) / 4 + (1 - exp(-t/T2)) / 2

(p_z >= 0 needs T2 <= 2 T1, which the chip loader enforces). We report log S and its
terms, so a user sees why one region wins. Missing calibration figures count as 0
(missing T1/T2: no idle error). Gates that land off-coupler have no coupler error to
use; they are left out of S and counted in `unscored_gates`, and placements are
ordered by fewest unscored gates first, then by S (a placement that needs routing
never outranks one that does not).

Everything is numpy over an index array of all placements at once (shape
placements x patch qubits); the schedule loops over a circuit's operations, never
over placements.

    >>> import numpy as np
    >>> from embedcheck.model.device import Device, CouplerCalibration
    >>> from embedcheck.model.lattices import square_grid
    >>> from embedcheck.model.patch import Patch, Circuit, Operation
    >>> from embedcheck.model.placement import Placement
    >>> dev = Device.from_lattice(square_grid(1, 3), name="line",
    ...     coupler_calibration={(0, 1): CouplerCalibration(0.01),
    ...                          (1, 2): CouplerCalibration(0.02)})
    >>> patch = Patch("t", ("a", "b"), dict.fromkeys("ab", "data"),
    ...               {"round": Circuit("round", (Operation("cx", ("a", "b"), "2q"),))})
    >>> r = rank_placements(dev, patch, [Placement((1, 2)), Placement((0, 1))])
    >>> [p.physical for p in r.placements], np.round(r.success, 3).tolist()
    ([(0, 1), (1, 2)], [0.99, 0.98])
"""
from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..model.device import CalibrationArrays, Device
from ..model.patch import Patch
from ..model.placement import Placement, PlacementRows, check_placements, placement_grid
from .idle import idle_channel
from .schedule import run_idles

__all__ = ["CAUTION", "FIGURE", "TERMS", "Ranking", "Sensitivity", "SnapshotRanking",
           "experiment_counts", "rank_across_snapshots", "rank_placements", "rank_scored",
           "ranked_order",
           "scores", "scores_in_chunks", "sensitivity"]

FIGURE = "fidelity_product"
TERMS = ("two_qubit", "readout", "single_qubit", "reset", "idle")
CAUTION = ("Scores are model estimates from the calibration you supplied, which drifts; "
           "confirm on hardware with the provider's own validation before relying on them.")


@dataclass(frozen=True, kw_only=True)
class Ranking:
    """Placements sorted best first, with the score and its terms (natural logs).

    `placements` is kept as `PlacementRows` (one integer array, not an object each)."""

    figure: str
    placements: Sequence[Placement]
    log_success: np.ndarray
    terms: Mapping[str, np.ndarray]   # term name -> log contribution array, same order
    unscored_gates: np.ndarray  # off-coupler gates per placement, not in the score

    def __post_init__(self) -> None:
        if not isinstance(self.placements, PlacementRows):
            object.__setattr__(self, "placements", PlacementRows(
                self.placements, num_qubits=len(self.placements[0].physical)
                if len(self.placements) else 0))

    @property
    def success(self) -> np.ndarray:
        return np.exp(self.log_success)

    def __repr__(self) -> str:
        best = f", best {float(self.success[0]):.4g}" if len(self.placements) else ""
        return f"Ranking({self.figure}: {len(self.placements)} placement(s){best})"

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def experiment_counts(patch: Patch) -> tuple[dict[tuple[int, int], int], np.ndarray,
                                             np.ndarray, np.ndarray]:
    """Per-experiment counts: 2q gates per patch pair; measurements, 1q gates, resets per qubit."""
    n = patch.num_qubits
    counts = {kind: np.zeros(n) for kind in ("measure", "1q", "reset")}
    for name, times in patch.experiment():
        for op in patch.circuits[name].operations:
            if op.kind in counts:
                counts[op.kind][patch.index[op.qubits[0]]] += times
    pairs = patch.interaction_counts([n for n, _ in patch.experiment()], weighted=True)
    return pairs, counts["measure"], counts["1q"], counts["reset"]


def scores(device: Device, patch: Patch, grid: np.ndarray,
           arrays: CalibrationArrays | None = None) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Log terms (each an array over the placements in `grid`) and unscored gate counts."""
    cal = device.calibration_arrays if arrays is None else arrays
    pairs, measures, singles, resets = experiment_counts(patch)
    count = grid.shape[0]
    terms: dict[str, np.ndarray] = {}
    with np.errstate(divide="ignore", invalid="ignore"):   # an error of 1 gives log 0 = -inf
        if pairs and count:
            ab = np.array(list(pairs), dtype=np.int64)
            weight = np.array(list(pairs.values()), dtype=float)
            err = cal.coupler(grid[:, ab[:, 0]], grid[:, ab[:, 1]], cal.coupler_error)
            off = np.isnan(err)
            terms["two_qubit"] = (np.log1p(-np.where(off, 0.0, err)) * weight).sum(axis=1)
            unscored = (off * weight).sum(axis=1).astype(np.int64)
        else:
            terms["two_qubit"] = np.zeros(count)
            unscored = np.zeros(count, dtype=np.int64)
        terms["readout"] = (np.log1p(-cal.readout_error[grid]) * measures).sum(axis=1)
        terms["single_qubit"] = (np.log1p(-cal.single_qubit_error[grid]) * singles).sum(axis=1)
        terms["reset"] = (np.log1p(-cal.reset_error[grid]) * resets).sum(axis=1)
        idle = np.zeros(count)
        t1, t2 = np.ascontiguousarray(cal.t1_us[grid].T), np.ascontiguousarray(cal.t2_us[grid].T)
        timing, log_inner, base = None, np.zeros((0, count)), np.zeros(count)
        for run in run_idles(patch, grid, cal):         # each circuit scheduled once
            if run.timing is not timing:                # its waits within: once per circuit
                timing = run.timing
                log_inner = _log_no_idle(timing.inner, t1, t2)
                base = log_inner.sum(axis=0)
            total = base.copy()
            for k, row in enumerate(run.entry_rows):    # waits reaching in from before
                waited = timing.inner[row] + run.entry[k]
                total += _log_no_idle(waited, t1[row], t2[row]) - log_inner[row]
            idle += run.times * total
        terms["idle"] = idle
    return terms, unscored


def _log_no_idle(waited: np.ndarray, t1: np.ndarray, t2: np.ndarray) -> np.ndarray:
    """log(1 - p_idle) of the waits (same shapes), computed only where a row waits at all."""
    out = np.zeros(waited.shape)
    if waited.ndim == 1:
        return np.log1p(-idle_channel(waited, t1, t2).total) if waited.any() else out
    rows = np.flatnonzero(waited.any(axis=1))
    if rows.size:
        out[rows] = np.log1p(-idle_channel(waited[rows], t1[rows], t2[rows]).total)
    return out


def rank_placements(device: Device, patch: Patch, placements: Sequence[Placement], *,
                    chunk: int = 1 << 16) -> Ranking:
    """Score every placement with the cost model above and sort best first (scored
    `chunk` placements at a time, so memory stays bounded for millions)."""
    grid = check_placements(device, patch, placements)
    terms, unscored = scores_in_chunks(device, patch, grid, chunk=chunk)
    return rank_scored(grid, terms, unscored)


def ranked_order(grid: np.ndarray, total: np.ndarray, unscored: np.ndarray) -> np.ndarray:
    """Fewest off-coupler (unscored) gates first, then the best total log score; ties
    broken by the placement itself (its row), so the order is reproducible."""
    return np.lexsort(tuple(grid[:, k] for k in range(grid.shape[1] - 1, -1, -1))
                      + (-total, unscored))


def scores_in_chunks(device: Device, patch: Patch, grid: np.ndarray, *,
                     chunk: int = 1 << 16) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """`scores` over `grid`, `chunk` rows at a time (the same figures, less memory)."""
    if len(grid) <= chunk:
        return scores(device, patch, grid)
    parts = [scores(device, patch, grid[i:i + chunk]) for i in range(0, len(grid), chunk)]
    return ({k: np.concatenate([t[k] for t, _ in parts]) for k in parts[0][0]},
            np.concatenate([u for _, u in parts]))


def rank_scored(grid: np.ndarray, terms: Mapping[str, np.ndarray], unscored: np.ndarray,
                *, figure: str = FIGURE, order: np.ndarray | None = None) -> Ranking:
    """The ranking of already scored placements (rows of `grid`) in `ranked_order`
    (worked out here unless given)."""
    total: np.ndarray = sum(terms.values()) if terms else np.zeros(len(grid))  # type: ignore[assignment]
    if order is None:
        order = ranked_order(grid, total, unscored)
    elif np.array_equal(order, np.arange(len(grid))):      # already in order: no copies
        return Ranking(figure=figure, placements=PlacementRows(grid, copy=False),
                       log_success=total, terms=dict(terms), unscored_gates=unscored)
    return Ranking(figure=figure, placements=PlacementRows(grid[order], copy=False),
                   log_success=total[order], terms={k: v[order] for k, v in terms.items()},
                   unscored_gates=unscored[order])


@dataclass(frozen=True, kw_only=True)
class SnapshotRanking:
    """Placements ranked over several calibration snapshots.

    `per_snapshot[s, i]` is log S of placement i (in ranked order) under snapshot s;
    `aggregate` is what they are ranked by (mean, worst or a quantile of log S);
    `winner_ranks[s]` is the winner's rank (1 = best) within snapshot s alone, and
    `stability` the fraction of snapshots in which the winner is within the top `top_k`.
    """

    figure: str
    by: str
    placements: Sequence[Placement]          # PlacementRows
    aggregate: np.ndarray
    per_snapshot: np.ndarray
    timestamps: tuple[str | None, ...]
    winner_ranks: tuple[int, ...]
    top_k: int
    stability: float
    newest_winner_rank: int       # where the newest snapshot's own winner ranks overall
    unscored: int = 0             # placements left out: the time budget ran out first


def rank_across_snapshots(snapshots: Sequence[Device], patch: Patch,
                          placements: Sequence[Placement], *, by: str = "worst",
                          top_k: int = 5, deadline: float | None = None,
                          chunk: int = 1 << 15) -> SnapshotRanking:
    """Rank by the mean, the worst, or a quantile ('q0.25') of the per-snapshot log score.

    The placements are scored `chunk` at a time on every snapshot; with a `deadline`
    (time.monotonic) only the first ones scored before it passes are ranked (at least one
    chunk: pass them best first by the newest snapshot), the rest counted in `unscored`."""
    full = placement_grid(placements, patch.num_qubits)
    per_device: list[list[np.ndarray]] = [[] for _ in snapshots]
    off_per_device: list[list[np.ndarray]] = [[] for _ in snapshots]
    done = 0
    while done < len(full) or not done:
        part = full[done:done + chunk]
        for s, device in enumerate(snapshots):
            terms, off = scores(device, patch, part)
            total: np.ndarray = sum(terms.values()) if terms else np.zeros(len(part))  # type: ignore[assignment]
            per_device[s].append(total)
            off_per_device[s].append(off)
        done += len(part)
        if not len(part) or (deadline is not None and time.monotonic() > deadline):
            break
    grid = full[:done]
    left_out = len(full) - done
    placements = placements[:done]
    logs = np.array([np.concatenate(p) for p in per_device]).reshape(len(snapshots), done)
    unscored = np.array([np.concatenate(p) for p in off_per_device]).reshape(len(snapshots),
                                                                             done)
    # A placement that needs more off-coupler gates in some snapshot than it does at its
    # best (a coupler or qubit dead that day), or sits on a qubit dead that day, cannot
    # run as planned then: it scores 0 (log -inf) in that snapshot.
    fewest = unscored.min(axis=0) if len(placements) else unscored
    for s, device in enumerate(snapshots):
        dead = np.isin(grid, list(device.dead_qubits)).any(axis=1) if device.dead_qubits \
            else np.zeros(len(placements), dtype=bool)
        logs[s, (unscored[s] > fewest) | dead] = -np.inf
    worst_off = fewest
    if by == "mean":
        agg = logs.mean(axis=0)
    elif by == "worst":
        agg = logs.min(axis=0)
    elif by.startswith("q"):
        agg = np.quantile(logs, float(by[1:]), axis=0)
    else:
        raise InputError(f"rank by 'mean', 'worst' or 'q<fraction>', not {by!r}")
    order = np.lexsort(tuple(grid[:, k] for k in range(grid.shape[1] - 1, -1, -1))
                       + (-agg, worst_off))
    logs = logs[:, order]
    ranks = []
    for s in range(len(snapshots)):
        own = np.lexsort((-logs[s], worst_off[order]))      # that snapshot's own order
        ranks.append(int(np.nonzero(own == 0)[0][0]) + 1 if len(placements) else 0)
    stable = float(np.mean([r <= top_k for r in ranks])) if ranks else 0.0
    newest = int(np.lexsort((-logs[-1], worst_off[order]))[0]) + 1 if len(placements) else 0
    return SnapshotRanking(figure=FIGURE, by=by, placements=PlacementRows(grid[order]),
                           aggregate=agg[order], per_snapshot=logs,
                           timestamps=tuple(d.calibration_timestamp for d in snapshots),
                           winner_ranks=tuple(ranks), top_k=top_k, stability=stable,
                           newest_winner_rank=newest, unscored=left_out)


@dataclass(frozen=True, kw_only=True)
class Sensitivity:
    """One calibration figure of the best placement and how much the score depends on it."""

    item: str                 # e.g. 'coupler 53-54' or 'qubit 67'
    figure: str               # e.g. 'two_qubit_error', 'readout_error', 't2_us'
    value: float
    log_contribution: float   # its share of log S (0 if the figure were perfect)
    derivative: float         # d log S / d figure (analytic)


def sensitivity(device: Device, patch: Patch, placement: Placement,
                top: int = 8) -> list[Sensitivity]:
    """The calibration figures that move this placement's log S most (analytic derivatives).

    For an error e used n times, log S holds n log(1 - e), so d log S / d e = -n / (1 - e);
    for idling, d log(1 - p) / dT = -(dp/dT) / (1 - p) with p from `idle.idle_channel`.
    """
    pairs, measures, singles, resets = experiment_counts(patch)
    where = placement.physical
    out = []
    for (a, b), n in pairs.items():
        p, q = sorted((where[a], where[b]))
        coupler = device.coupler_calibration.get((p, q))
        if not device.is_coupled(p, q) or coupler is None or coupler.two_qubit_error is None:
            continue
        e = coupler.two_qubit_error
        out.append(Sensitivity(item=f"coupler {p}-{q}", figure="two_qubit_error", value=e,
                               log_contribution=n * np.log1p(-e), derivative=-n / (1 - e)))
    grid = placement_grid([placement], patch.num_qubits)
    arrays = device.calibration_arrays            # built once per device, then cached
    idle_ns = {(run.circuit, run.again): run.idle_ns[0]       # every qubit's, scheduled once
               for run in run_idles(patch, grid, arrays)}
    for i, phys in enumerate(where):
        cal = device.qubit_calibration.get(phys)
        if cal is None:
            continue
        for field, count in (("readout_error", measures[i]), ("single_qubit_error", singles[i]),
                             ("reset_error", resets[i])):
            e = getattr(cal, field)
            if count and e is not None:
                out.append(Sensitivity(item=f"qubit {phys}", figure=field, value=e,
                                       log_contribution=count * np.log1p(-e),
                                       derivative=-count / (1 - e)))
        if cal.t1_us and cal.t2_us:
            part1 = part2 = d_t1 = d_t2 = 0.0
            for name, again, times in patch.runs():
                t = idle_ns[(name, again)][i] / 1000.0
                channel = idle_channel(idle_ns[(name, again)][i], cal.t1_us, cal.t2_us)
                p1 = channel.t1_part                        # the T1 part of p_idle
                p2 = channel.t2_share                       # the T2 part
                p_idle = channel.total
                if p_idle <= 0:
                    continue
                log_term = times * np.log1p(-p_idle)        # split in proportion to p1, p2
                part1 += log_term * p1 / p_idle
                part2 += log_term * p2 / p_idle
                d_t1 += times * (t / cal.t1_us ** 2) * np.exp(-t / cal.t1_us) / 4 / (1 - p_idle)
                d_t2 += times * (t / cal.t2_us ** 2) * np.exp(-t / cal.t2_us) / 2 / (1 - p_idle)
            if part1 or part2:
                out.append(Sensitivity(item=f"qubit {phys}", figure="t1_us", value=cal.t1_us,
                                       log_contribution=part1, derivative=d_t1))
                out.append(Sensitivity(item=f"qubit {phys}", figure="t2_us", value=cal.t2_us,
                                       log_contribution=part2, derivative=d_t2))
    out.sort(key=lambda s: s.log_contribution)
    return out[:top]
