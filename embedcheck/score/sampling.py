"""Decoded logical error by sampling: stim's sampler, pymatching's decoder, seeded.

`sample_decoded(circuit, shots=..., max_errors=..., seed=...)` samples a noisy stim circuit
(detectors and observables declared) in growing batches, decodes every shot by minimum
weight perfect matching (pymatching: Higgott & Gidney, "Sparse Blossom", Quantum 9, 1600
(2025); from memory) and counts shots whose predicted observables differ from the true
ones. It stops at `shots` or once `max_errors` logical errors were seen (the usual stopping
rule of a Monte Carlo of logical error: common practice). The same seed gives the same
counts, so sweeps and projections are reproducible; sinter's samplers are not seeded,
which is why this exists (bench/forecast.py compares its throughput with sinter's).

Intervals are Wilson score intervals (`wilson`; Wilson, J. Am. Stat. Assoc. 22, 209
(1927)); the
per-round figure inverts p_shot = (1 - (1 - 2 p_round)^r) / 2 (independent rounds, each
flipping the observable with probability p_round: common practice).

    >>> import stim
    >>> c = stim.Circuit.generated("repetition_code:memory", distance=3, rounds=3,
    ...                            after_clifford_depolarization=0.05)
    >>> a = sample_decoded(c, shots=2000, seed=1); b = sample_decoded(c, shots=2000, seed=1)
    >>> a == b and a.shots == 2000 and 0 < a.errors < 2000
    True
"""
from __future__ import annotations

import functools
import math
import sqlite3
from dataclasses import dataclass, field

__all__ = ["ChunkedRun", "DecodedStats", "SampleStore", "chunk_seed", "circuit_key",
           "per_round", "sample_adaptively", "sample_chunk", "sample_decoded",
           "sample_in_chunks", "wilson"]


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


@dataclass(frozen=True, kw_only=True)
class DecodedStats:
    """Shots sampled and logical errors after decoding; rates with Wilson intervals."""

    shots: int
    errors: int
    seconds: float = field(default=0.0, compare=False)

    @property
    def rate(self) -> float:
        return self.errors / self.shots if self.shots else math.nan

    def interval(self, z: float = 1.96) -> tuple[float, float]:
        return wilson(self.errors, self.shots, z)

    def per_round(self, rounds: int) -> float:
        return per_round(self.rate, rounds)

    def __add__(self, other: "DecodedStats") -> "DecodedStats":
        return DecodedStats(shots=self.shots + other.shots, errors=self.errors + other.errors,
                            seconds=self.seconds + other.seconds)


def per_round(per_shot: float, rounds: int) -> float:
    """Logical error per round from per shot (see the module docstring).

    >>> round(per_round(0.1, 1), 6), round(per_round(0.0, 5), 6), per_round(0.6, 3)
    (0.1, 0.0, 0.5)
    """
    if math.isnan(per_shot):
        return math.nan
    if per_shot >= 0.5:
        return 0.5
    return (1 - (1 - 2 * per_shot) ** (1 / rounds)) / 2 if rounds > 1 else per_shot


def sample_decoded(circuit, *, shots: int, max_errors: int | None = None,
                   seed: int | None = None, dem=None, matching=None) -> DecodedStats:
    """Sample and decode `circuit` until `shots` or `max_errors` (see the module docstring).

    `dem`: the circuit's detector error model (graph-like: `decompose_errors=True`, and
    `approximate_disjoint_errors=True`, which the noisy circuit's idle channels need), when
    the caller already has it; `matching`: the `pymatching.Matching` built from it (the
    model is then not needed). Raises `ValueError` when stim cannot make the model
    graph-like.
    """
    import time

    import numpy as np
    import pymatching
    started = time.perf_counter()
    if matching is None:
        if dem is None:
            dem = circuit.detector_error_model(decompose_errors=True,
                                               approximate_disjoint_errors=True)
        matching = pymatching.Matching.from_detector_error_model(dem)
    sampler = circuit.compile_detector_sampler(seed=seed)
    done = errors = 0
    batch = 256
    limit = max_errors if max_errors is not None else math.inf
    while done < shots and errors < limit:
        n = min(batch, shots - done)
        dets, obs = sampler.sample(n, separate_observables=True, bit_packed=True)
        predicted = matching.decode_batch(dets, bit_packed_shots=True,
                                          bit_packed_predictions=True)
        errors += int(np.count_nonzero(np.any(predicted != obs, axis=1)))
        done += n
        batch = min(batch * 2, 65536)
    return DecodedStats(shots=done, errors=errors, seconds=time.perf_counter() - started)


class SampleStore:
    """Finished sampling chunks, keyed by (circuit key, chunk): the projection's resume.

    >>> store = SampleStore(":memory:")
    >>> store.add("k", 0, DecodedStats(shots=10, errors=1))
    >>> store.total("k")
    DecodedStats(shots=10, errors=1, seconds=0.0)
    """

    def __init__(self, path: str) -> None:
        self.path = path
        self._db: sqlite3.Connection | None = None

    @property
    def db(self) -> sqlite3.Connection:
        """The connection, opened on first use: a run that fails on bad input before it
        samples leaves no file behind."""
        if self._db is None:
            self._db = sqlite3.connect(self.path, isolation_level=None)
            self._db.execute("CREATE TABLE IF NOT EXISTS chunks (key TEXT NOT NULL, chunk "
                             "INTEGER NOT NULL, shots INTEGER NOT NULL, errors INTEGER NOT "
                             "NULL, seconds REAL NOT NULL, PRIMARY KEY (key, chunk))")
        return self._db

    def add(self, key: str, chunk: int, stats: DecodedStats) -> None:
        self.db.execute("INSERT OR REPLACE INTO chunks VALUES (?, ?, ?, ?, ?)",
                        (key, chunk, stats.shots, stats.errors, stats.seconds))

    def chunks(self, key: str) -> list[int]:
        return [r[0] for r in self.db.execute("SELECT chunk FROM chunks WHERE key = ? ORDER BY "
                                              "chunk", (key,))]

    def total(self, key: str) -> DecodedStats:
        shots, errors, seconds = self.db.execute(
            "SELECT COALESCE(SUM(shots), 0), COALESCE(SUM(errors), 0), COALESCE(SUM(seconds), "
            "0) FROM chunks WHERE key = ?", (key,)).fetchone()
        return DecodedStats(shots=int(shots), errors=int(errors), seconds=float(seconds))

    def close(self) -> None:
        if self._db is not None:
            self._db.close()
            self._db = None


def sample_chunk(job: dict) -> DecodedStats:
    """One chunk of one point (runs on a worker): sample `shots` of the stim circuit text.

    The circuit and its matching graph are kept per worker process for the last few
    circuits seen (`_decoder`), so the many chunks of one point build them once.
    """
    circuit, matching = _decoder(job["circuit"])
    return sample_decoded(circuit, shots=job["shots"], seed=job["seed"], matching=matching)


@functools.lru_cache(maxsize=8)
def _decoder(text: str):
    """The stim circuit of `text` and pymatching's decoder for it (cached per process)."""
    import pymatching
    import stim
    circuit = stim.Circuit(text)
    dem = circuit.detector_error_model(decompose_errors=True, approximate_disjoint_errors=True)
    return circuit, pymatching.Matching.from_detector_error_model(dem)


def chunk_seed(key: str, chunk: int, seed: int) -> int:
    """The seed of chunk `chunk` of the circuit keyed `key` (a hex digest): fixed, so a
    resumed or repeated run samples exactly the same shots."""
    return (int(key[:8], 16) + 7919 * chunk + seed) % 2**32


def circuit_key(circuit_text: str, seed: int) -> str:
    """The identity of a sampled circuit: a digest of its exact text and the seed."""
    import hashlib
    return hashlib.sha256(f"{circuit_text}\nseed={seed}".encode()).hexdigest()[:24]


def sample_adaptively(circuits, *, max_shots: int, first_shots: int | None = None,
                      executor=None, store: SampleStore | None = None, seed: int = 1,
                      progress=None) -> dict:
    """Decoded logical error of several circuits, spending shots where the ranking is open.

    `circuits`: name -> stim circuit (or its text). In rounds, every circuit still *open*
    gets one more chunk (the first `first_shots`, default max_shots / 16, then doubling):
    open are the leader (lowest rate so far) and every circuit whose Wilson interval still
    overlaps the leader's, until it has `max_shots`. So the top of the list is resolved
    first and clear losers stop early. Rounds are synchronous, so the shots each circuit
    gets do not depend on which worker finishes first: results are the same on any
    executor. Returns name -> `DecodedStats`. Finished chunks go to `store` (resume).

    >>> import stim
    >>> good = stim.Circuit.generated("repetition_code:memory", distance=5, rounds=2,
    ...                               after_clifford_depolarization=0.01)
    >>> bad = stim.Circuit.generated("repetition_code:memory", distance=3, rounds=2,
    ...                              after_clifford_depolarization=0.08)
    >>> out = sample_adaptively({"good": good, "bad": bad}, max_shots=20000)
    >>> out["bad"].shots < out["good"].shots == 20000
    True
    """
    from ..engine import SerialExecutor, Task
    executor = executor or SerialExecutor()
    store = store or SampleStore(":memory:")
    texts = {name: c if isinstance(c, str) else str(c) for name, c in circuits.items()}
    keys = {name: circuit_key(text, seed) for name, text in texts.items()}
    size = {name: max(1, first_shots or max_shots // 16) for name in texts}
    open_ = sorted(texts)
    rounds = 0
    while open_:
        tasks = []
        scheduled: set[str] = set()            # identical circuits share their chunks
        for name in open_:
            key, have = keys[name], store.total(keys[name]).shots
            taken = store.chunks(key)
            if have >= max_shots or key in scheduled:
                continue
            scheduled.add(key)
            chunk = (max(taken) + 1) if taken else 0
            n = min(size[name], max_shots - have)
            size[name] *= 2
            tasks.append(Task(key=f"{key}:{chunk}", function=sample_chunk, argument={
                "circuit": texts[name], "shots": n, "seed": chunk_seed(key, chunk, seed)}))
        if not tasks:
            break
        for done in executor.results(tasks):
            if done.error:
                raise RuntimeError(f"sampling failed: {done.error}")
            key, chunk = done.key.split(":")
            store.add(key, int(chunk), done.value)
        rounds += 1
        totals = {name: store.total(keys[name]) for name in texts}
        if progress is not None:
            progress(sum(t.shots for t in totals.values()), max_shots * len(texts))
        leader = min(texts, key=lambda n: (totals[n].rate, n))
        top = totals[leader].interval()[1]
        open_ = [n for n in sorted(texts) if totals[n].shots < max_shots
                 and (n == leader or totals[n].interval()[0] <= top)]
    return {name: store.total(keys[name]) for name in texts}


@dataclass(frozen=True, kw_only=True)
class ChunkedRun:
    """What one call of `sample_in_chunks` did (the counts themselves are in the store)."""

    reused_shots: int            # found stored when the call started (resume)
    new_shots: int               # sampled by this call
    stopped_by_budget: bool


def sample_in_chunks(circuits, *, shots: int, max_errors: int, store: SampleStore,
                     executor=None, chunk_shots: int = 10_000, first_chunk: int = 1_000,
                     budget_s: float | None = None, seed: int = 1,
                     progress=None) -> ChunkedRun:
    """Sample every circuit until it has `shots` shots or `max_errors` logical errors.

    `circuits`: store key -> stim circuit text (keys from `circuit_key(text, seed)`).
    Chunk k of a circuit has min(chunk_shots, first_chunk * 2^k) shots (the first ones
    small, so a circuit far above threshold stops at `max_errors` early) and the fixed
    seed `chunk_seed(key, k, seed)`; a circuit's chunks run one after another, different
    circuits side by side on the `executor`, so the counts do not depend on the executor.
    Each finished chunk is stored at once: an interrupted call loses no finished chunk,
    and the next call goes on from the chunks stored. `budget_s` stops sending new chunks
    after that many seconds. `progress(shots, shots planned)` is called after each stored
    chunk (and once at the start); an exception it raises stops the call.

    >>> import stim
    >>> text = str(stim.Circuit.generated("repetition_code:memory", distance=3, rounds=2,
    ...                                   after_clifford_depolarization=0.05))
    >>> store = SampleStore(":memory:")
    >>> run = sample_in_chunks({circuit_key(text, 1): text}, shots=2500, max_errors=10**6,
    ...                        store=store, first_chunk=1000)
    >>> run.new_shots, store.chunks(circuit_key(text, 1))
    (2500, [0, 1])
    """
    import time

    from ..engine import SerialExecutor, Task
    executor = executor or SerialExecutor()
    deadline = None if budget_s is None else time.monotonic() + budget_s
    totals = {key: store.total(key) for key in circuits}
    reused = sum(t.shots for t in totals.values())
    taken = {key: len(store.chunks(key)) for key in circuits}
    state = {"new": 0, "late": False}

    def done(key: str) -> bool:
        return totals[key].shots >= shots or totals[key].errors >= max_errors

    def report() -> None:
        if progress is not None:
            progress(sum(t.shots for t in totals.values()),
                     sum(totals[k].shots if done(k) else shots for k in circuits))

    def next_task(key: str) -> list:
        if done(key):
            return []
        if deadline is not None and time.monotonic() > deadline:
            state["late"] = True
            return []
        index = taken[key]
        n = min(chunk_shots, first_chunk * 2 ** min(index, 40), shots - totals[key].shots)
        job = {"circuit": circuits[key], "shots": n, "seed": chunk_seed(key, index, seed)}
        return [Task(key=f"{key}:{index}", function=sample_chunk, argument=job)]

    def follow(finished) -> list:
        key, index = finished.key.split(":")
        if finished.error:
            raise RuntimeError(f"sampling failed: {finished.error} (finished chunks are "
                               "stored; rerun to resume)")
        store.add(key, int(index), finished.value)
        totals[key] = totals[key] + finished.value
        taken[key] = int(index) + 1
        state["new"] += finished.value.shots
        report()
        return next_task(key)

    first = [task for key in circuits for task in next_task(key)]
    report()
    for _ in executor.results(first, follow=follow):
        pass
    return ChunkedRun(reused_shots=reused, new_shots=int(state["new"]),
                      stopped_by_budget=bool(state["late"]))
