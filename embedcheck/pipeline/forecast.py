"""What logical error to expect on a chip, per code distance, and whether a bigger code pays.

`run_forecast(device, family, distances=...)` answers, for a built-in code family on one
chip's calibration:

1. **Per distance d**: the family's patch (`patch_from_family`, d rounds unless told) is
   searched on the chip (`vet_patch`); its swap-free placements are put in order by a
   *ranking* (`RANKINGS`; by default the decoded-logical estimate of `score.estimate`
   for codes of distance 3 and more, else the fidelity product, the search's own order) and
   the **best** and the **median** one kept, so the spread over the chip shows. Each
   kept placement's noisy circuit (`noisy_circuit`, from the calibration) is sampled and
   decoded by matching (`score.sampling`) into a logical error per shot and per round,
   p_round = (1 - (1 - 2 p_shot)^(1/r)) / 2 (common practice), with Wilson intervals.
2. **Suppression** between successive distances: Lambda = eps_d / eps_(d+2), the ratio of
   logical errors per round (the figure of merit of a memory experiment below threshold:
   Fowler, Mariantoni, Martinis & Cleland, Phys. Rev. A 86, 032324 (2012), where
   eps_d ~ (p / p_th)^((d+1)/2) gives a constant ratio per step of 2 in d; from memory).
   Its interval divides the ends of the two 95% Wilson intervals (low / high, high /
   low), which covers at least 90% (both hold at once with probability >= 0.95^2). The
   verdict is "pays" when that interval lies above 1, "does not pay" when below,
   "unresolved" otherwise.
3. **Scaled curves**: the best placement is also sampled on the chip's calibration
   scaled by each factor s in `scales` (`scaled_device`: every error figure times s,
   T1 and T2 divided by s), giving logical-versus-physical curves for this chip. The
   **crossing** of two distances' curves, where eps_d(s) = eps_(d+2)(s), is interpolated
   linearly in log(eps) against log(s) between the two sampled scales that bracket the
   sign change; below it the bigger code wins. It is this chip's effective threshold in
   units of today's calibration (s = 1), also given as a two-qubit error (s times the
   median two-qubit error of the chip's live couplers).

Sampling goes through `score.sampling.sample_in_chunks`: chunks with fixed seeds, each a
task on an `engine` executor (serial, local processes or Dask), each stored in a
`SampleStore` (SQLite) as it finishes, keyed by the exact noisy circuit text and the seed.
So the counts do not depend on the executor, an interrupted run resumes where it stopped
without losing a finished chunk, and a rerun with more shots only adds. `budget_s` stops
sending new chunks after that many seconds; points then carry what they have and the
forecast says it is incomplete. These are model estimates from the calibration supplied,
which drifts.

    >>> from embedcheck.model.device import CouplerCalibration, Device, QubitCalibration
    >>> from embedcheck.model.lattices import line
    >>> chain = line(9)
    >>> chip = Device.from_lattice(chain, name="chain",
    ...     coupler_calibration={c: CouplerCalibration(0.01, 300.0) for c in chain.couplers},
    ...     qubit_calibration={q: QubitCalibration(readout_error=0.01) for q in chain.qubits})
    >>> out = run_forecast(chip, "repetition", distances=[3, 5], scales=[0.5, 1.0],
    ...                    shots=2000)
    >>> [s.verdict for s in out.suppression if s.scale == 1.0]
    ['pays']
    >>> out.point(5).shots, out.new_shots == sum(p.shots for p in out.unique_points)
    (2000, True)
"""
from __future__ import annotations

import math
import statistics
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Union

from ..engine import Executor, SerialExecutor
from ..errors import InputError, InternalError
from ..io.patchfile import patch_from_family
from ..model.codes import FAMILIES
from ..model.device import Device, scaled_device
from ..model.patch import Patch
from ..model.placement import Placement
from ..score.logical import wilson
from ..score.noise import noisy_circuit
from ..score.sampling import SampleStore, circuit_key, per_round, sample_in_chunks
from .codes import family_for_chip
from .vet import vet_patch

__all__ = ["DEFAULT_RANKING", "DEFAULT_SCALES", "FORECAST_FAMILIES", "RANKINGS", "Crossing",
           "DistanceSearch", "Forecast", "ForecastPoint", "Ranker", "Suppression",
           "rank_by_estimate", "rank_by_fidelity_product", "run_forecast"]

DEFAULT_SCALES = (0.1, 0.2, 0.35, 0.5, 0.7, 1.0, 1.4, 2.0)
FORECAST_FAMILIES = tuple(f for f in FAMILIES if f != "flagged")   # families with a distance

Ranker = Callable[[Device, Patch, Sequence[Placement]], Sequence[Placement]]


def rank_by_fidelity_product(device: Device, patch: Patch,
                             placements: Sequence[Placement]) -> Sequence[Placement]:
    """The search's own order: the fidelity product, best first (`score.cost`)."""
    return placements


ESTIMATE_MAX_PLACEMENTS = 1000


def rank_by_estimate(device: Device, patch: Patch,
                     placements: Sequence[Placement]) -> Sequence[Placement]:
    """Lowest decoded-logical estimate first (`score.estimate`: leading order ceil(d/2) from
    the detector error model and matching's own decisions), for codes of fault distance 3
    to 5 with at most `ESTIMATE_MAX_PLACEMENTS` placements; ties keep the fidelity-product
    order. Otherwise the fidelity-product order is kept: distance 1 or 2 and 7 or more
    are not what the estimate was measured on (bench/logical.py), and at 7 its enumeration
    grows steeply; thousands of placements (a repetition code on a big chip) would cost a
    minute (7-300 ms each, measured on devices/demo_grid.yaml); a model stim cannot make
    graph-like has no matching to estimate."""
    from ..score.estimate import decoded_logical_estimate
    from ..score.logical import decoder_model, estimate_scores
    if not 2 <= len(placements) <= ESTIMATE_MAX_PLACEMENTS or not patch.detectors \
            or not patch.observable:
        return placements
    try:
        first = decoded_logical_estimate(decoder_model(noisy_circuit(device, patch,
                                                                     placements[0])))
    except InputError:
        return placements
    if not 3 <= max(first.distance or 0, first.circuit_distance or 0) <= 5:
        return placements
    values = [e.value for e in estimate_scores(device, patch, placements)]
    order = sorted(range(len(placements)), key=lambda i: (values[i], i))
    return [placements[i] for i in order]


# The ranking that chooses the best and median placement of each distance. A ranker gets
# the placements in the fidelity-product order and returns them best first. By default the
# decoded-logical estimate (issue 15), which ranks placements of distance-3 and distance-5
# codes like decoded sampling does (bench/logical.py); the fidelity product for the rest.
RANKINGS: dict[str, Ranker] = {"estimate": rank_by_estimate,
                               "fidelity_product": rank_by_fidelity_product}
DEFAULT_RANKING = "estimate"

Progress = Callable[[str, int, int], None]


@dataclass(frozen=True, kw_only=True)
class DistanceSearch:
    """One distance: the patch, what the search found, the two placements kept (or why
    the distance was skipped)."""

    distance: int
    patch: Patch
    placements: int                      # distinct swap-free placements found
    search_complete: bool
    best: Placement | None = None
    median: Placement | None = None
    skipped: str | None = None           # why no placement is sampled
    fitting_family: str | None = None    # skipped for want of couplers: the family that fits

    @property
    def rounds(self) -> int:
        return self.patch.rounds


@dataclass(frozen=True, kw_only=True)
class ForecastPoint:
    """One sampled point: a distance, a placement ('best' or 'median'), a scale."""

    distance: int
    placement: str
    scale: float
    rounds: int
    shots: int
    errors: int
    target_shots: int
    max_errors: int
    key: str                              # the sample store's key of its circuit

    @property
    def done(self) -> bool:
        """True when it reached its shots or its logical errors (else the budget stopped it)."""
        return self.shots >= self.target_shots or self.errors >= self.max_errors

    @property
    def per_shot(self) -> float:
        return self.errors / self.shots if self.shots else math.nan

    @property
    def per_shot_interval(self) -> tuple[float, float]:
        return wilson(self.errors, self.shots)

    @property
    def per_round(self) -> float:
        return per_round(self.per_shot, self.rounds)

    @property
    def per_round_interval(self) -> tuple[float, float]:
        low, high = self.per_shot_interval
        return per_round(low, self.rounds), per_round(high, self.rounds)


@dataclass(frozen=True, kw_only=True)
class Suppression:
    """Lambda = eps_smaller / eps_larger per round at one scale, and the verdict."""

    smaller: int
    larger: int
    scale: float
    factor: float
    low: float
    high: float
    verdict: str                          # 'pays' | 'does not pay' | 'unresolved'

    @property
    def sentence(self) -> str:
        """The verdict in words (at scale 1: on this chip's calibration)."""
        where = ("on this chip's calibration" if self.scale == 1.0
                 else f"on this chip's calibration x{self.scale:g}")
        verb = {"pays": "beats", "does not pay": "does not beat",
                "unresolved": "cannot yet be told apart from"}[self.verdict]
        return f"{where}, distance {self.larger} {verb} distance {self.smaller}"


@dataclass(frozen=True, kw_only=True)
class Crossing:
    """Where the best placements' curves of two distances cross, or why none was found."""

    smaller: int
    larger: int
    scale: float | None
    between: tuple[float, float] | None   # the sampled scales that bracket it
    resolved: bool                        # the intervals are apart at both bracketing scales
    two_qubit_error: float | None         # scale x the chip's median two-qubit error
    note: str


@dataclass(frozen=True, kw_only=True)
class Forecast:
    """Everything `run_forecast` found (see the module docstring)."""

    chip: str
    calibration_timestamp: str | None
    family: str
    placeholder_calibration: bool = False     # the chip file says so: rankings mean nothing
    basis: str
    ranking: str
    scales: tuple[float, ...]
    searches: tuple[DistanceSearch, ...]
    points: tuple[ForecastPoint, ...]
    suppression: tuple[Suppression, ...]
    crossings: tuple[Crossing, ...]
    median_two_qubit_error: float | None  # of the live couplers, today's calibration
    shots: int
    max_errors: int
    seed: int
    reused_shots: int                     # shots found in the store (resume)
    new_shots: int                        # shots sampled by this run
    stopped_by_budget: bool

    @property
    def distances(self) -> tuple[int, ...]:
        """The distances that were sampled."""
        return tuple(s.distance for s in self.searches if s.skipped is None)

    @property
    def complete(self) -> bool:
        """Every search finished and every point reached its shots or errors."""
        return all(s.search_complete for s in self.searches) and all(
            p.done for p in self.points)

    @property
    def unique_points(self) -> tuple[ForecastPoint, ...]:
        """Points with distinct circuits (a chip with one placement: best is median)."""
        seen: dict[str, ForecastPoint] = {}
        for p in self.points:
            seen.setdefault(p.key, p)
        return tuple(seen.values())

    def point(self, distance: int, placement: str = "best",
              scale: float = 1.0) -> ForecastPoint | None:
        for p in self.points:
            if p.distance == distance and p.placement == placement and p.scale == scale:
                return p
        return None

    def verdicts(self) -> tuple[Suppression, ...]:
        """The suppression factors at today's calibration (scale 1)."""
        return tuple(s for s in self.suppression if s.scale == 1.0)


def run_forecast(device: Device, family: str, *, distances: Sequence[int] | None = None,
                 max_distance: int = 9, rounds: int | None = None, basis: str = "z",
                 scales: Iterable[float] = DEFAULT_SCALES, shots: int = 20_000,
                 max_errors: int = 200, chunk_shots: int = 10_000, first_chunk: int = 1_000,
                 budget_s: float | None = None, search_limit: int = 10_000,
                 search_budget_s: float | None = 60.0, executor: Executor | None = None,
                 store: SampleStore | None = None,
                 ranking: Union[str, Ranker] = DEFAULT_RANKING,
                 progress: Progress | None = None, seed: int = 1) -> Forecast:
    """Logical error per round for each distance and scale (see the module docstring).

    `distances`: the distances to try (default: 3, 5, ... up to `max_distance`, stopping
    at the first that does not fit). `rounds`: rounds of every patch (default: d).
    `ranking`: a name in `RANKINGS` or a `Ranker`. `store`: where finished chunks go
    (default: in memory, no resume). `progress(stage, done, total)` is called while
    searching ('search', distances done, distances) and after each stored chunk
    ('sample', shots, shots planned); an exception it raises (KeyboardInterrupt) stops
    the run, and the chunks stored so far stay.
    """
    _check_options(family, distances, max_distance, rounds, shots, max_errors, chunk_shots,
                   first_chunk, budget_s)
    ranker, ranking_name = _ranker(ranking)
    scale_list = _scales(scales)
    executor = executor or SerialExecutor()
    store = store or SampleStore(":memory:")
    searches = _search(device, family, distances, max_distance, rounds, basis, ranker,
                       search_limit, search_budget_s, progress)
    # What to sample: circuit text per store key, and the points that read each key.
    texts: dict[str, str] = {}
    planned: list[tuple[DistanceSearch, str, float, str]] = []
    for search in searches:
        if search.skipped is not None:
            continue
        for which, placement in (("best", search.best), ("median", search.median)):
            assert placement is not None
            for scale in (scale_list if which == "best" else (1.0,)):
                text = str(noisy_circuit(scaled_device(device, scale), search.patch,
                                         placement))
                key = circuit_key(text, seed)
                texts[key] = text
                planned.append((search, which, scale, key))
    sampled = sample_in_chunks(
        texts, shots=shots, max_errors=max_errors, chunk_shots=chunk_shots,
        first_chunk=first_chunk, budget_s=budget_s, executor=executor, store=store, seed=seed,
        progress=None if progress is None else lambda done, total: progress("sample", done,
                                                                           total))
    points = []
    for search, which, scale, key in planned:
        total = store.total(key)
        points.append(ForecastPoint(distance=search.distance, placement=which, scale=scale,
                                    rounds=search.rounds, shots=total.shots,
                                    errors=total.errors, target_shots=shots,
                                    max_errors=max_errors, key=key))
    couplers = [c.two_qubit_error for pair, c in device.coupler_calibration.items()
                if c.two_qubit_error is not None and pair in device.live_coupler_set]
    median_error = statistics.median(couplers) if couplers else None
    kept = [s.distance for s in searches if s.skipped is None]
    return Forecast(
        chip=device.name, calibration_timestamp=device.calibration_timestamp, family=family,
        placeholder_calibration=device.placeholder_calibration,
        basis=basis, ranking=ranking_name, scales=scale_list, searches=searches,
        points=tuple(points), suppression=_suppression(points, kept, scale_list),
        crossings=_crossings(points, kept, scale_list, median_error),
        median_two_qubit_error=median_error, shots=shots, max_errors=max_errors, seed=seed,
        reused_shots=sampled.reused_shots, new_shots=sampled.new_shots,
        stopped_by_budget=sampled.stopped_by_budget)


def _check_options(family, distances, max_distance, rounds, shots, max_errors, chunk_shots,
                   first_chunk, budget_s) -> None:
    if family not in FORECAST_FAMILIES:
        raise InputError(f"family {family!r} cannot be forecast; choose from "
                         f"{', '.join(FORECAST_FAMILIES)} ('flagged' has no distance)",
                         key="family")
    for name, value in (("shots", shots), ("max_errors", max_errors),
                        ("chunk_shots", chunk_shots), ("first_chunk", first_chunk),
                        ("max_distance", max_distance)):
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise InputError(f"{name} must be a whole number of at least 1, not {value!r}",
                             key=name)
    if rounds is not None and (isinstance(rounds, bool) or not isinstance(rounds, int)
                               or rounds < 1):
        raise InputError(f"rounds must be a whole number of at least 1, not {rounds!r}",
                         key="rounds")
    if budget_s is not None and not (isinstance(budget_s, (int, float)) and budget_s > 0):
        raise InputError(f"budget_s must be a positive number of seconds, not {budget_s!r}",
                         key="budget_s")
    if distances is not None:
        if not distances:
            raise InputError("give at least one distance", key="distances")
        for d in distances:
            if isinstance(d, bool) or not isinstance(d, int) or d < 2:
                raise InputError(f"a code distance must be a whole number of at least 2, "
                                 f"not {d!r}", key="distances")


def _ranker(ranking: Union[str, Ranker]) -> tuple[Ranker, str]:
    if callable(ranking):
        return ranking, getattr(ranking, "__name__", "custom")
    if ranking not in RANKINGS:
        raise InputError(f"unknown ranking {ranking!r}; choose from {', '.join(RANKINGS)}",
                         key="ranking")
    return RANKINGS[ranking], ranking


def _scales(scales: Iterable[float]) -> tuple[float, ...]:
    out = set()
    for s in scales:
        if isinstance(s, bool) or not isinstance(s, (int, float)) or not math.isfinite(s) \
                or s <= 0:
            raise InputError(f"a calibration scale must be a positive number, not {s!r}",
                             key="scales")
        out.add(float(s))
    return tuple(sorted(out | {1.0}))


def _search(device, family, distances, max_distance, rounds, basis, ranker, limit, budget_s,
            progress) -> tuple[DistanceSearch, ...]:
    """Each distance's patch searched on the chip, with its best and median placement."""
    given = distances is not None
    todo = sorted(set(distances)) if distances is not None else list(range(3, max_distance + 1,
                                                                           2))
    out = []
    for i, d in enumerate(todo):
        if progress is not None:
            progress("search", i, len(todo))
        patch = patch_from_family(family, distance=d, rounds=rounds or d, basis=basis)
        vetting = vet_patch(device, patch, limit=limit, budget_s=budget_s)
        found = vetting.ranking.placements
        if not vetting.all_swap_free:
            why = next((r for f in vetting.fits for r in f.reasons), None) or (
                "the search ran out of time before finding a swap-free placement"
                if not vetting.complete else "no swap-free placement on this chip")
            out.append(DistanceSearch(distance=d, patch=patch, placements=len(found),
                                      search_complete=vetting.complete, skipped=why,
                                      fitting_family=family_for_chip(device, patch)))
            if not given:
                break                   # a bigger patch of the same family will not fit
            continue
        ordered = list(ranker(device, patch, found))
        if len(ordered) != len(found):
            raise InternalError(f"the ranking returned {len(ordered)} placements for "
                                f"{len(found)}")
        out.append(DistanceSearch(distance=d, patch=patch, placements=len(found),
                                  search_complete=vetting.complete, best=ordered[0],
                                  median=ordered[len(ordered) // 2]))
    if progress is not None:
        progress("search", len(todo), len(todo))
    return tuple(out)


def _best(points: Sequence[ForecastPoint], distance: int,
          scale: float) -> ForecastPoint | None:
    for p in points:
        if p.distance == distance and p.placement == "best" and p.scale == scale:
            return p
    return None


def _suppression(points, distances, scales) -> tuple[Suppression, ...]:
    out = []
    for scale in scales:
        for small, big in zip(distances, distances[1:], strict=False):
            a, b = _best(points, small, scale), _best(points, big, scale)
            if a is None or b is None or not a.shots or not b.shots:
                continue
            (a_low, a_high), (b_low, b_high) = a.per_round_interval, b.per_round_interval
            factor = _ratio(a.per_round, b.per_round)
            low, high = _ratio(a_low, b_high), _ratio(a_high, b_low)
            verdict = "pays" if low > 1 else "does not pay" if high < 1 else "unresolved"
            out.append(Suppression(smaller=small, larger=big, scale=scale, factor=factor,
                                   low=low, high=high, verdict=verdict))
    return tuple(out)


def _ratio(a: float, b: float) -> float:
    if b > 0:
        return a / b
    return math.nan if a == 0 else math.inf


def _crossings(points, distances, scales, median_error) -> tuple[Crossing, ...]:
    out = []
    for small, big in zip(distances, distances[1:], strict=False):
        rows = []        # (scale, log eps_small - log eps_big, apart: intervals disjoint)
        for s in scales:
            a, b = _best(points, small, s), _best(points, big, s)
            if a and b and a.per_round > 0 and b.per_round > 0:
                (a_low, a_high), (b_low, b_high) = a.per_round_interval, b.per_round_interval
                rows.append((s, math.log(a.per_round) - math.log(b.per_round),
                             a_low > b_high or b_low > a_high))
        scale = None
        between = None
        resolved = False
        note = ""
        for (s0, f0, apart0), (s1, f1, apart1) in zip(rows, rows[1:], strict=False):
            if f0 > 0 >= f1:                    # the bigger code wins at s0, loses at s1
                t = f0 / (f0 - f1)
                scale = math.exp(math.log(s0) + t * (math.log(s1) - math.log(s0)))
                between, resolved = (s0, s1), apart0 and apart1
                note = (f"distance {big} wins below it"
                        + ("" if resolved else " (not resolved by the shots taken: the "
                           "intervals overlap at a bracketing scale)"))
                break
        if scale is None:
            if len(rows) < 2:
                note = "too few scales with logical errors at both distances: sample more"
            elif all(f > 0 for _, f, _ in rows):
                note = (f"distance {big} wins at every scale with errors at both (up to "
                        f"{rows[-1][0]:g}): the crossing lies above")
            elif all(f <= 0 for _, f, _ in rows):
                note = (f"distance {big} loses at every scale with errors at both (down to "
                        f"{rows[0][0]:g}): the crossing lies below")
            else:
                note = "the curves cross the wrong way (sampling noise): sample more shots"
        out.append(Crossing(smaller=small, larger=big, scale=scale, between=between,
                            resolved=resolved,
                            two_qubit_error=None if scale is None or median_error is None
                            else scale * median_error, note=note))
    return tuple(out)
