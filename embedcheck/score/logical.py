"""Score placements by what a QEC experiment measures: logical errors among kept shots.

For each swap-free placement, `noise.noisy_circuit` (the one stim writer) gives a stim
circuit with the chip's noise; stim's detector error model (DEM) lists independent fault mechanisms,
each with its probability, the detectors it flips and whether it flips the logical
observable (Gidney, "Stim: a fast stabilizer circuit simulator", Quantum 5, 497 (2021)).

- `undetected` (fast, default figure; lower is better): the probability that the
  faults of a shot flip the observable and no detector, to lowest order: the summed
  probability of single mechanisms that do, plus, for every set D of detectors, the
  product P1(D) P0(D) of the summed probabilities of mechanisms flipping exactly D
  with and without the observable (two such faults cancel on D and flip the
  observable). The second-order part matters when no single fault goes undetected,
  as in the flagged demo patch. It estimates the logical error rate among shots that
  pass post-selection.
- `kept` (beside it): the expected fraction of shots with no detector firing, to
  first order the product of (1 - p) over mechanisms that flip some detector.
- Monte Carlo (on request, for the top placements): raw logical error, post-selected
  logical error and kept fraction from stim's sampler, with Wilson score intervals
  (Wilson, J. Am. Stat. Assoc. 22, 209 (1927)).
- Decoded (on request, when the DEM is graph-like after `decompose_errors=True`): the
  logical error after minimum-weight perfect matching with pymatching (Higgott &
  Gidney, "Sparse Blossom", Quantum 9, 1600 (2025); value from memory).
- `estimate` (for codes whose fault distance is 3 or more, where `undetected` is 0 to the
  order it is taken): the deterministic leading-order estimate of the decoded logical
  error per shot (`estimate.decoded_logical_estimate`), from the DEM and the decoder's
  own decisions, with no sampling.
- `decoded` (with Monte Carlo shots): the listed placements, chosen by `estimate` (or by
  `undetected` for codes of fault distance 1 or 2), sampled adaptively
  (`sampling.sample_adaptively`: shots go where a placement's interval still overlaps the
  leader's) and sorted by their sampled decoded logical error.

These are model estimates from user-supplied calibration, like every score here.

    >>> tuple(round(x, 4) for x in wilson(5, 100))
    (0.0215, 0.1118)
"""
from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from .estimate import DecodedEstimate, decoded_logical_estimate
from .noise import noisy_circuit, stim_experiment
from .sampling import DecodedStats, sample_adaptively, wilson

__all__ = ["FIGURES", "LOGICAL_FIGURES", "FastScore", "LogicalRanking", "MonteCarlo",
           "decode_observables", "decoder_model", "estimate_scores", "fast_score", "fast_scores",
           "monte_carlo", "rank_by_logical", "require_detectors", "undetected_zero_everywhere",
           "wilson"]

FIGURES = ("estimate", "undetected", "kept", "fidelity_product")
LOGICAL_FIGURES = ("estimate", "decoded", "undetected", "kept")


@dataclass(frozen=True, kw_only=True)
class FastScore:
    undetected: float      # summed probability of observable-flipping, undetected faults
    kept: float            # expected fraction of shots with no detector firing
    mechanisms: int


@dataclass(frozen=True, kw_only=True)
class MonteCarlo:
    shots: int
    kept: int
    raw_errors: int
    kept_errors: int
    decoded_errors: int | None

    @property
    def kept_fraction(self) -> float:
        return self.kept / self.shots if self.shots else 0.0

    @property
    def raw_error(self) -> float:
        return self.raw_errors / self.shots if self.shots else 0.0

    @property
    def post_selected_error(self) -> float:
        return self.kept_errors / self.kept if self.kept else math.nan

    def interval(self, which: str = "post_selected", z: float = 1.96) -> tuple[float, float]:
        """Wilson score interval for 'raw', 'post_selected', 'kept' or 'decoded'."""
        k, n = {"raw": (self.raw_errors, self.shots),
                "post_selected": (self.kept_errors, self.kept),
                "kept": (self.kept, self.shots),
                "decoded": (self.decoded_errors or 0, self.shots)}[which]
        return wilson(k, n, z)


def require_detectors(patch: Patch) -> None:
    """Refuse, in plain words, a patch that gives nothing to score by."""
    if not patch.detectors or not patch.observable:
        missing = [w for w, ok in (("detectors", patch.detectors),
                                   ("logical observable", patch.observable)) if not ok]
        raise InputError(f"patch '{patch.name}' declares no {' and no '.join(missing)}: add "
                         "'detectors:' (measurement parities fixed without noise) and "
                         "'observable:' (the measurements whose parity is the logical result) "
                         "to score by logical error", file=patch.source)


def fast_score(device: Device, patch: Patch, placement: Placement) -> FastScore:
    """The first-order undetected-fault rate and kept fraction from stim's DEM."""
    dem = noisy_circuit(device, patch, placement).detector_error_model(
        approximate_disjoint_errors=True)
    undetected, keep_log, count = _dem_figures(dem)
    return FastScore(undetected=undetected, kept=math.exp(keep_log), mechanisms=count)


def _dem_figures(dem: Any) -> tuple[float, float, int]:
    """(undetected to second order, log of the kept fraction, mechanisms) of a DEM: single
    mechanisms that flip the observable and no detector, plus pairs that flip the same
    detectors (so cancel there) and differ in the observable."""
    first, keep_log, count = 0.0, 0.0, 0
    groups: dict[frozenset[int], list[float]] = {}
    for inst in dem.flattened():
        if inst.type != "error":
            continue
        p = inst.args_copy()[0]
        targets = inst.targets_copy()
        detectors = frozenset(t.val for t in targets if t.is_relative_detector_id())
        flips_observable = sum(t.is_logical_observable_id() for t in targets) % 2 == 1
        count += 1
        if detectors:
            keep_log += math.log1p(-p) if p < 1 else -math.inf
            sums = groups.setdefault(detectors, [0.0, 0.0])
            sums[flips_observable] += p
        elif flips_observable:
            first += p
    second = sum(p0 * p1 for p0, p1 in groups.values())
    return first + second, keep_log, count


def undetected_zero_everywhere(patch: Patch, noise: float = 1e-3) -> bool:
    """True when the 'undetected' figure is 0 on every placement of `patch`, whatever the
    calibration: no one or two faults flip the observable unseen even when every qubit
    may suffer any Pauli after every operation (and every two-qubit gate any two-qubit
    Pauli). Each placement's noise channels are Pauli channels at some of these places,
    so its error mechanisms are a subset of these; a zero here is a zero there."""
    import stim

    n = patch.num_qubits
    everyone = list(range(n))
    universal = stim.Circuit()
    universal.append("DEPOLARIZE1", everyone, noise)
    for inst in stim_experiment(patch).flattened():
        universal.append(inst)
        gate = stim.gate_data(inst.name)
        if gate.is_noisy_gate or inst.name in ("DETECTOR", "OBSERVABLE_INCLUDE", "TICK",
                                               "QUBIT_COORDS", "SHIFT_COORDS", "MPAD"):
            continue
        if gate.is_two_qubit_gate:
            qubits = [t.value for t in inst.targets_copy() if t.is_qubit_target]
            universal.append("DEPOLARIZE2", qubits, noise)
        universal.append("DEPOLARIZE1", everyone, noise)
    dem = universal.detector_error_model(approximate_disjoint_errors=True)
    return _dem_figures(dem)[0] == 0


def fast_scores(device: Device, patch: Patch, placements: Sequence[Placement], *,
                processes: int = 1,
                progress: Callable[[int], None] | None = None,
                deadline: float | None = None, at_least: int = 0) -> list[FastScore]:
    """`fast_score` for every placement, split over `processes` worker processes; with a
    `deadline` (time.monotonic), only the first placements scored before it passes (at
    least `at_least` of them: the ones a report lists)."""
    require_detectors(patch)
    if deadline is not None:
        return _scores_until(device, patch, placements, processes, progress, deadline,
                             at_least)
    if processes > 1 and len(placements) > 64:
        from concurrent.futures import ProcessPoolExecutor
        chunks = [list(placements[i::processes]) for i in range(processes)]
        with ProcessPoolExecutor(processes) as pool:
            parts = list(pool.map(_score_chunk, [(device, patch, c) for c in chunks]))
        empty = FastScore(undetected=0.0, kept=0.0, mechanisms=0)
        merged: list[FastScore] = [empty] * len(placements)
        for i, part in enumerate(parts):
            merged[i::processes] = part
        return merged
    out = []
    for k, p in enumerate(placements):
        out.append(fast_score(device, patch, p))
        if progress is not None and (k + 1) % 50 == 0:
            progress(k + 1)
    return out


def _scores_until(device: Device, patch: Patch, placements: Sequence[Placement],
                  processes: int, progress: Callable[[int], None] | None, deadline: float,
                  at_least: int) -> list[FastScore]:
    """The first placements' fast scores, in pieces, until the deadline has passed and at
    least `at_least` are scored."""
    return _in_pieces(placements, lambda part: fast_scores(device, patch, part,
                                                           processes=processes),
                      piece=16 * max(1, processes), deadline=deadline, at_least=at_least,
                      progress=progress)


def _in_pieces(placements: Sequence[Placement], score: Callable[[list[Placement]], list[Any]],
               *, piece: int, deadline: float, at_least: int,
               progress: Callable[[int], None] | None) -> list[Any]:
    """`score` the placements a piece at a time (small pieces: the deadline is read often),
    stopping once `deadline` has passed and at least `at_least` are scored; past the
    deadline, what is missing of `at_least` goes in one piece."""
    out: list[Any] = []
    while len(out) < len(placements):
        late = time.monotonic() > deadline
        if len(out) >= at_least and late:
            break
        out += score(list(placements[len(out):len(out) + (at_least - len(out) if late
                                                           else piece)]))
        if progress is not None:
            progress(len(out))
    return out


def _score_chunk(args: tuple[Device, Patch, list[Placement]]) -> list[FastScore]:
    device, patch, placements = args
    return [fast_score(device, patch, p) for p in placements]


def monte_carlo(device: Device, patch: Patch, placement: Placement, *, shots: int = 100_000,
                seed: int | None = 7, decode: bool = False) -> MonteCarlo:
    """Sample the noisy experiment: raw and post-selected logical error, kept fraction."""
    require_detectors(patch)
    circuit = noisy_circuit(device, patch, placement)
    sampler = circuit.compile_detector_sampler(seed=seed)
    dets, obs = sampler.sample(shots, separate_observables=True)
    flipped = obs[:, 0] if obs.shape[1] else np.zeros(shots, dtype=bool)
    clean = ~dets.any(axis=1)
    decoded = None
    if decode:
        decoded = int(np.sum(decode_observables(circuit, dets) != flipped))
    return MonteCarlo(shots=shots, kept=int(clean.sum()), raw_errors=int(flipped.sum()),
                      kept_errors=int(flipped[clean].sum()), decoded_errors=decoded)


def decode_observables(circuit: Any, detections: np.ndarray) -> np.ndarray:
    """Observable predictions by matching; refuses, plainly, a DEM that is not graph-like."""
    import pymatching

    matching = pymatching.Matching.from_detector_error_model(decoder_model(circuit))
    return matching.decode_batch(detections)[:, 0]


def decoder_model(circuit: Any) -> Any:
    """The circuit's DEM as matching reads it: `decompose_errors=True` (graph-like pieces)
    and `approximate_disjoint_errors=True` (the idle channel's X, Y and Z are disjoint;
    stim takes them as independent, exact to first order). A plain `InputError` when stim
    cannot make it graph-like."""
    try:
        return circuit.detector_error_model(decompose_errors=True,
                                            approximate_disjoint_errors=True)
    except ValueError as exc:
        raise InputError("this patch's error model cannot be matched: some faults flip more than "
                         "two detectors and stim cannot decompose them into graph-like pieces "
                         f"({str(exc).splitlines()[0][:120]})") from None


def estimate_scores(device: Device, patch: Patch, placements: Sequence[Placement], *,
                    executor: Any = None,
                    progress: Callable[[int], None] | None = None) -> list[DecodedEstimate]:
    """The decoded-logical estimate of every placement (`estimate.py`), in chunks on
    `executor` (an `engine.Executor`; default: this process). Every worker keeps the
    enumeration it built for the patch's decoder graph, so a chunk costs one enumeration
    and then one cheap evaluation per placement."""
    require_detectors(patch)
    if not placements:
        return []
    from ..engine import SerialExecutor, Task
    run = executor or SerialExecutor()
    workers = getattr(run, "processes", 1)
    size = max(4, -(-len(placements) // (4 * workers))) if workers > 1 else 25
    chunks = [list(placements[i:i + size]) for i in range(0, len(placements), size)]
    tasks = [Task(key=str(k), function=_estimate_chunk, argument=(device, patch, chunk))
             for k, chunk in enumerate(chunks)]
    out: dict[int, list[DecodedEstimate]] = {}
    done_count = 0
    for done in run.results(tasks):
        if done.error:
            if done.error.startswith("InputError: "):
                raise InputError(done.error[len("InputError: "):])
            raise RuntimeError(f"estimate failed: {done.error}")
        out[int(done.key)] = done.value
        done_count += len(done.value)
        if progress is not None:
            progress(done_count)
    return [e for k in range(len(chunks)) for e in out[k]]


def _estimate_chunk(job: tuple[Device, Patch, list[Placement]]) -> list[DecodedEstimate]:
    device, patch, placements = job
    return [decoded_logical_estimate(decoder_model(noisy_circuit(device, patch, p)))
            for p in placements]


@dataclass(frozen=True, kw_only=True)
class LogicalRanking:
    """Swap-free placements ordered by a logical figure (lowest `undetected`, `estimate` or
    sampled `decoded` logical error first, or highest `kept`), with the figures computed
    and, for the listed ones, Monte Carlo results (`monte_carlo`: fixed shots, raw and
    post-selected; `decoded`: adaptive decoded sampling, for figure 'decoded')."""

    figure: str
    placements: Sequence[Placement]
    undetected: np.ndarray | None
    kept: np.ndarray | None
    monte_carlo: tuple[MonteCarlo | None, ...]
    estimate: np.ndarray | None = None
    estimate_order: int | None = None           # fault sets of up to this many faults
    estimate_distance: int | None = None        # the distance the order comes from
    estimate_complete: bool = True              # no enumeration budget cut it short
    decoded: tuple[DecodedStats | None, ...] = ()
    rounds: int = 1
    unscored: int = 0        # placements left out: the time budget ran out before them

    @property
    def preselected_by(self) -> str:
        """The deterministic figure that chose the placements to sample (figure 'decoded')."""
        return "estimate" if self.estimate is not None else "undetected"


def rank_by_logical(device: Device, patch: Patch, placements: Sequence[Placement], *,
                    figure: str = "undetected", monte_carlo_shots: int = 0, top: int = 10,
                    decode: bool = False, seed: int = 7, processes: int = 1,
                    executor: Any = None,
                    progress: Callable[[str, int], None] | None = None,
                    deadline: float | None = None) -> LogicalRanking:
    """Rank swap-free placements by a logical figure: 'undetected' or 'estimate'
    (ascending), 'kept' (descending), or 'decoded': the `top` placements by 'estimate'
    sampled adaptively on `executor` (up to `monte_carlo_shots` each) and sorted by their
    decoded logical error. Otherwise `monte_carlo_shots` samples the `top` placements
    (raw and post-selected; `decode` adds matching). `progress(stage, count)`.

    With a `deadline` (time.monotonic), the placements are scored in the order given
    (pass them best first by another figure) until it passes, at least `top` of them;
    the rest are left out of the ranking and counted in `unscored`."""
    if figure not in LOGICAL_FIGURES:
        raise InputError(f"figure must be one of {', '.join(LOGICAL_FIGURES)}, not {figure!r}")
    require_detectors(patch)
    if figure == "decoded" and not monte_carlo_shots:
        raise InputError("ranking by the decoded logical error samples it: give --monte-carlo "
                         "SHOTS", key="--decode")
    tick = (lambda n: progress("scoring", n)) if progress else None
    und = kept = est = None
    total = len(placements)
    order_info: tuple[int | None, int | None, bool] = (None, None, True)
    if figure in ("undetected", "kept"):
        fast = fast_scores(device, patch, placements, processes=processes, progress=tick,
                           deadline=deadline, at_least=top)
        placements = placements[:len(fast)]
        und = np.array([f.undetected for f in fast])
        kept = np.array([f.kept for f in fast])
        order = np.lexsort((-kept, und)) if figure == "undetected" else np.lexsort((und, -kept))
    else:
        estimates = _estimates_until(device, patch, placements, executor, tick, deadline, top)
        placements = placements[:len(estimates)]
        est = np.array([e.value for e in estimates])
        order = np.argsort(est, kind="stable")
        if estimates:
            worst = max(estimates, key=lambda e: e.order)
            order_info = (worst.order, max(worst.distance or 0, worst.circuit_distance or 0)
                          or None, all(e.complete for e in estimates))
    left_out = total - len(placements)
    ranked = [placements[i] for i in order]
    pick = lambda a: None if a is None else a[order]          # noqa: E731
    und, kept, est = pick(und), pick(kept), pick(est)
    mc: list[MonteCarlo | None] = [None] * len(ranked)
    decoded: list[DecodedStats | None] = []
    if figure == "decoded":
        listed = min(top, len(ranked))
        circuits = {f"{k:07d}": noisy_circuit(device, patch, p)
                    for k, p in enumerate(ranked[:listed])}
        stats = sample_adaptively(circuits, max_shots=monte_carlo_shots, executor=executor,
                                  seed=seed, progress=(lambda done, _total: progress(
                                      "sampling", done)) if progress else None)
        again = sorted(range(listed), key=lambda k: (stats[f"{k:07d}"].rate, k))
        resort = np.array(again + list(range(listed, len(ranked))), dtype=np.int64)
        ranked = [ranked[i] for i in resort]
        est = None if est is None else est[resort]
        decoded = [stats[f"{k:07d}"] for k in again]
    elif monte_carlo_shots:
        for k, placement in enumerate(ranked[:top]):
            mc[k] = monte_carlo(device, patch, placement, shots=monte_carlo_shots,
                                seed=seed + k, decode=decode)
    return LogicalRanking(figure=figure, placements=tuple(ranked), undetected=und, kept=kept,
                          monte_carlo=tuple(mc), estimate=est, estimate_order=order_info[0],
                          estimate_distance=order_info[1], estimate_complete=order_info[2],
                          decoded=tuple(decoded), rounds=max(1, patch.rounds),
                          unscored=left_out)


def _estimates_until(device: Device, patch: Patch, placements: Sequence[Placement],
                     executor: Any, progress: Callable[[int], None] | None,
                     deadline: float | None, at_least: int) -> list[DecodedEstimate]:
    """`estimate_scores` of the first placements, in pieces, until `deadline` has passed
    and at least `at_least` are scored (all of them without a deadline)."""
    if deadline is None:
        return estimate_scores(device, patch, placements, executor=executor, progress=progress)
    return _in_pieces(placements, lambda part: estimate_scores(device, patch, part,
                                                               executor=executor),
                      piece=16 * max(1, getattr(executor, "processes", 1)), deadline=deadline,
                      at_least=at_least, progress=progress)
