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

These are model estimates from user-supplied calibration, like every score here.

    >>> tuple(round(x, 4) for x in wilson(5, 100))
    (0.0215, 0.1118)
"""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from .noise import noisy_circuit, stim_experiment

__all__ = ["FIGURES", "FastScore", "LogicalRanking", "MonteCarlo", "decode_observables",
           "fast_score", "fast_scores", "monte_carlo", "rank_by_logical", "require_detectors",
           "undetected_zero_everywhere", "wilson"]

FIGURES = ("undetected", "kept", "fidelity_product")


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


def wilson(k: int, n: int, z: float = 1.96) -> tuple[float, float]:
    """Wilson score interval for k successes in n trials (Wilson 1927).

    >>> tuple(round(x, 4) for x in wilson(5, 100))
    (0.0215, 0.1118)
    >>> wilson(0, 2000)[0], wilson(7, 7)[1]
    (0.0, 1.0)
    """
    if n == 0:
        return 0.0, 1.0
    p = k / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    low = 0.0 if k == 0 else max(0.0, centre - half)      # exact ends, not rounding dust
    high = 1.0 if k == n else min(1.0, centre + half)
    return low, high


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
                progress: Callable[[int], None] | None = None) -> list[FastScore]:
    """`fast_score` for every placement, split over `processes` worker processes."""
    require_detectors(patch)
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

    try:
        dem = circuit.detector_error_model(decompose_errors=True)
    except ValueError as exc:
        raise InputError("this patch's error model cannot be matched: some faults flip more than "
                         "two detectors and stim cannot decompose them into graph-like pieces "
                         f"({str(exc).splitlines()[0][:120]})") from None
    matching = pymatching.Matching.from_detector_error_model(dem)
    return matching.decode_batch(detections)[:, 0]


@dataclass(frozen=True, kw_only=True)
class LogicalRanking:
    """Swap-free placements ordered by a logical figure (lower `undetected` first, or higher
    `kept` first), with both fast figures and, for the top ones, Monte Carlo results."""

    figure: str
    placements: tuple[Placement, ...]
    undetected: np.ndarray
    kept: np.ndarray
    monte_carlo: tuple[MonteCarlo | None, ...]


def rank_by_logical(device: Device, patch: Patch, placements: Sequence[Placement], *,
                    figure: str = "undetected", monte_carlo_shots: int = 0, top: int = 10,
                    decode: bool = False, seed: int = 7, processes: int = 1,
                    progress: Callable[[int], None] | None = None) -> LogicalRanking:
    """Rank swap-free placements by `undetected` (ascending) or `kept` (descending)."""
    if figure not in ("undetected", "kept"):
        raise InputError(f"figure must be 'undetected' or 'kept', not {figure!r}")
    require_detectors(patch)
    fast = fast_scores(device, patch, placements, processes=processes, progress=progress)
    und = np.array([f.undetected for f in fast])
    kept = np.array([f.kept for f in fast])
    order = np.lexsort((-kept, und)) if figure == "undetected" else np.lexsort((und, -kept))
    ranked = tuple(placements[i] for i in order)
    mc: list[MonteCarlo | None] = []
    for k, placement in enumerate(ranked):
        mc.append(monte_carlo(device, patch, placement, shots=monte_carlo_shots, seed=seed + k,
                              decode=decode) if monte_carlo_shots and k < top else None)
    return LogicalRanking(figure=figure, placements=ranked, undetected=und[order],
                          kept=kept[order], monte_carlo=tuple(mc))
