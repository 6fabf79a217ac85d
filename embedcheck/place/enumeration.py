"""The raw maps of a search: the matcher run over the chip, serially or in worker processes.

`raw_maps` turns constraints into candidate masks, runs the matcher (`matcher.py`) and
drops the maps whose directional gates run against a coupler's native direction. With
`processes > 1` the anchors are split among worker processes, which count what they
find in a shared counter (for progress) and stop at a cap, a deadline, or when the
caller has enough. Blocks come back as numpy arrays (rows: the chip node of pattern
node 0, 1, ...).

    >>> import rustworkx as rx
    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> dev = Device.from_lattice(line(3), name="line")
    >>> chip, pattern = dev.live_graph(), rx.PyGraph()
    >>> pattern.add_nodes_from(["data", "data"]); pattern.add_edge(0, 1, None)
    NodeIndices[0, 1]
    0
    >>> sum(len(block) for block, _, _ in raw_maps(dev, chip, pattern, None, set(), [], None))
    4
"""
from __future__ import annotations

import time
from collections.abc import Iterator, Mapping, Sequence
from typing import Any

import numpy as np
import rustworkx as rx

from ..model.device import Device
from .matcher import Engine, Host, Prepared, grow, prepare

__all__ = ["raw_maps", "role_masks"]


def raw_maps(device: Device, chip: rx.PyGraph, pattern: rx.PyGraph,
             allowed: Mapping[str, set[int]] | None, blocked: set[int],
             arcs: Sequence[tuple[int, int]], autos: Sequence[Sequence[int]] | None, *,
             processes: int = 1, cap: int | None = None,
             seconds: float | None = None,
             probe: bool = True) -> Iterator[tuple[np.ndarray, str | None, int]]:
    """(block, why, reported) triples: blocks of raw maps (rows: chip node of pattern node
    0, 1, ...), one per symmetry orbit when `autos` is given, without the maps whose
    directional gates run against a coupler's native direction when `arcs` is given.
    `why` is None, or 'limit' / 'budget' when a worker process stopped its part early (at
    `cap` maps, or after `seconds`); `reported` is, while workers still run, how many maps
    they have found so far (for progress), else 0. `probe`: look for a first map depth
    first before the batches (worth it unless every map is wanted anyway)."""
    n = chip.num_nodes()
    masks = role_masks(chip, pattern, allowed, blocked)
    native = None
    if arcs:
        native = np.array(sorted(a * n + b for a, b in chip.edge_list() for a, b in
                                 ((a, b), (b, a)) if device.runs_natively(chip[a], chip[b])),
                          dtype=np.int64)
    prep = prepare(Host.from_edges(n, chip.edge_list()), pattern.num_nodes(),
                   list(pattern.edge_list()), candidates=masks, symmetries=autos)
    job: _Job = (prep, arcs, native, probe)
    if processes <= 1 or len(prep.start) < 2 * processes:
        for block in _filtered(job, (0, 1)):
            yield block, None, 0
        return
    import multiprocessing
    from concurrent.futures import Future, ProcessPoolExecutor, wait
    deadline = None if seconds is None else time.monotonic() + seconds
    context = multiprocessing.get_context()
    halt = context.Event()                   # set when the caller has enough
    counted = context.Value("q", 0)          # maps found by all workers so far (progress)
    # The anchors in PIECES pieces per process. This process works too: it takes the
    # first piece, and later ones that no worker has started yet (from the end) rather
    # than wait; pieces are handed on in their own order whoever ran them, so a limit
    # keeps the same maps on every run.
    pieces = [(i, PIECES * processes) for i in range(PIECES * processes)]
    engine = Engine(prep)
    with ProcessPoolExecutor(processes - 1, initializer=_start_worker,
                             initargs=(halt, counted, job)) as pool:
        futures: dict[int, Future] = {i: pool.submit(_run_part, part, cap, deadline)
                                      for i, part in enumerate(pieces) if i}
        ours: dict[int, tuple[np.ndarray, str | None]] = {}   # pieces run here ahead of turn
        try:
            for i, part in enumerate(pieces):
                if i in ours:
                    yield ours.pop(i) + (0,)
                    continue
                future = futures.get(i)
                if future is None or future.cancel():
                    for block in _filtered(job, part, engine):
                        yield block, None, 0
                    continue
                while not future.done():
                    j = next((j for j in sorted(futures, reverse=True)
                              if j > i and j not in ours and futures[j].cancel()), None)
                    if j is not None:            # no worker started it: run it here
                        ours[j] = _run_local(job, pieces[j], cap, deadline, engine)
                        continue
                    wait([future], timeout=0.5)
                    if not future.done():            # tell how far the workers are
                        yield np.zeros((0, prep.k), dtype=np.int64), None, counted.value
                yield future.result() + (0,)
        finally:
            halt.set()                       # running workers stop at their next block
            for future in futures.values():
                future.cancel()


def role_masks(chip: rx.PyGraph, pattern: rx.PyGraph,
               allowed: Mapping[str, set[int]] | None,
               blocked: set[int]) -> list[np.ndarray] | None:
    """Per pattern node, the chip graph nodes its role may use (None: any): live, and
    allowed by the role's constraints. Nodes of one role share one mask."""
    if allowed is None and not blocked:
        return None
    n = chip.num_nodes()
    live = np.ones(n, dtype=bool)
    live[list(blocked)] = False
    by_role: dict[str, np.ndarray] = {}
    for role in set(pattern.nodes()):
        mask = live.copy()
        if allowed is not None:
            ok = np.zeros(n, dtype=bool)
            ok[[i for i in range(n) if chip[i] in allowed[role]]] = True
            mask &= ok
        by_role[role] = mask
    return [by_role[role] for role in pattern.nodes()]


PIECES = 4                                   # pieces of the anchors per process

_HALT: Any = None
_COUNTED: Any = None
_JOB: Any = None
_ENGINE: Any = None


def _start_worker(halt: Any, counted: Any, job: _Job) -> None:
    global _HALT, _COUNTED, _JOB, _ENGINE
    _HALT, _COUNTED, _JOB = halt, counted, job
    _ENGINE = Engine(job[0])


_Job = tuple[Prepared, Sequence[tuple[int, int]], np.ndarray | None, bool]


def _filtered(job: _Job, part: tuple[int, int],
              engine: Engine | None = None) -> Iterator[np.ndarray]:
    prep, arcs, native, probe = job
    n = prep.host.n
    for block in grow(prep, part=part, probe=None if probe else 0, engine=engine):
        if native is not None and len(block):
            ok = np.ones(len(block), dtype=bool)
            for a, b in arcs:
                ok &= np.isin(block[:, a].astype(np.int64) * n + block[:, b], native)
            block = block[ok]
        yield block


def _run_part(part: tuple[int, int], cap: int | None,
              deadline: float | None) -> tuple[np.ndarray, str | None]:
    """One worker process's piece of the anchors (see `_run_local`)."""
    return _run_local(_JOB, part, cap, deadline, _ENGINE, counted=_COUNTED, halt=_HALT)


def _run_local(job: _Job, part: tuple[int, int], cap: int | None, deadline: float | None,
               engine: Engine | None, *, counted: Any = None,
               halt: Any = None) -> tuple[np.ndarray, str | None]:
    """A piece of the anchors: every map it finds, unless `cap` maps or the `deadline`
    (time.monotonic) come first, or `halt` is set; then also which one stopped it."""
    blocks: list[np.ndarray] = []
    count, why = 0, None
    for block in _filtered(job, part, engine):
        blocks.append(block)
        count += len(block)
        if counted is not None and len(block):
            with counted.get_lock():
                counted.value += len(block)
        if cap is not None and count >= cap:
            why = "limit"
            break
        if deadline is not None and time.monotonic() > deadline:
            why = "budget"
            break
        if halt is not None and halt.is_set():
            why = "budget"                   # the caller stopped (its result says why)
            break
    k = job[0].k
    return (np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)), why
