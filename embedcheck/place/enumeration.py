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

__all__ = ["Effort", "raw_maps", "role_masks"]


class Effort:
    """How far a search has got, for progress before any map is found: `work` candidate
    extensions tried (the matcher's work unit: partial maps tried), `anchors` begun of
    `anchors_total` (summed over pieces in worker processes). Updated in place."""

    __slots__ = ("work", "anchors", "anchors_total")

    def __init__(self) -> None:
        self.work = 0
        self.anchors = 0
        self.anchors_total = 0


def raw_maps(device: Device, chip: rx.PyGraph, pattern: rx.PyGraph,
             allowed: Mapping[str, set[int]] | None, blocked: set[int],
             arcs: Sequence[tuple[int, int]], autos: Sequence[Sequence[int]] | None, *,
             processes: int = 1, cap: int | None = None,
             seconds: float | None = None, probe: bool = True,
             max_work: int | None = None,
             effort: Effort | None = None) -> Iterator[tuple[np.ndarray, str | None, int]]:
    """(block, why, reported) triples: blocks of raw maps (rows: chip node of pattern node
    0, 1, ...), one per symmetry orbit when `autos` is given, without the maps whose
    directional gates run against a coupler's native direction when `arcs` is given.
    `why` is None, or 'limit' / 'budget' when a worker process stopped its part early (at
    `cap` maps, or after `seconds`), or 'work' on the block where `max_work` candidate
    extensions have been tried (the last block yielded); `reported` is, while workers
    still run, how many maps they have found so far (for progress), else 0. `probe`:
    look for a first map depth first before the batches (worth it unless every map is
    wanted anyway). `effort`, when given, is kept up to date (see `Effort`).

    The work budget stops at the same block on every run: work is counted per piece of
    the anchors, and pieces are handed on in their own order whoever ran them."""
    n = chip.num_nodes()
    masks = role_masks(chip, pattern, allowed, blocked)
    native = None
    if arcs:
        native = np.array(sorted(a * n + b for a, b in chip.edge_list() for a, b in
                                 ((a, b), (b, a)) if device.runs_natively(chip[a], chip[b])),
                          dtype=np.int64)
    prep = prepare(Host.from_edges(n, chip.edge_list()), pattern.num_nodes(),
                   list(pattern.edge_list()), candidates=masks, symmetries=autos)
    steps = None if probe else 0             # the probe's steps (None: the matcher's default)
    if probe and max_work is not None:
        steps = min(32 * prep.k + 512, max_work)     # the probe's steps count as work too
    job: _Job = (prep, arcs, native, steps)
    effort = effort if effort is not None else Effort()
    effort.anchors_total = len(prep.start)
    engine = Engine(prep)
    if processes <= 1 or len(prep.start) < 2 * processes:
        for block in _filtered(job, (0, 1), engine):
            effort.work, effort.anchors = engine.work, engine.reached
            if max_work is not None and engine.work >= max_work:
                yield block, "work", 0
                return
            yield block, None, 0
        return
    import multiprocessing
    from concurrent.futures import Future, ProcessPoolExecutor, wait
    deadline = None if seconds is None else time.monotonic() + seconds
    context = multiprocessing.get_context()
    halt = context.Event()                   # set when the caller has enough
    counted = context.Value("q", 0)          # maps found by all workers so far (progress)
    worked = context.Value("q", 0)           # work done by all workers so far (progress)
    # The anchors in PIECES pieces per process. This process works too: it takes the
    # first piece, and later ones that no worker has started yet (from the end) rather
    # than wait; pieces are handed on in their own order whoever ran them, so a limit
    # or a work budget keeps the same maps on every run.
    pieces = [(i, PIECES * processes) for i in range(PIECES * processes)]
    done_work = 0                            # work of the pieces handed on so far
    with ProcessPoolExecutor(processes - 1, initializer=_start_worker,
                             initargs=(halt, counted, worked, job)) as pool:
        futures: dict[int, Future] = {
            i: pool.submit(_run_part, part, cap, deadline, max_work)
            for i, part in enumerate(pieces) if i}
        ours: dict[int, _Piece] = {}        # pieces run here ahead of their turn
        try:
            for i, part in enumerate(pieces):
                if i in ours:
                    piece = ours.pop(i)
                else:
                    future = futures.get(i)
                    if future is None or future.cancel():       # run it here, streaming
                        for block in _filtered(job, part, engine):
                            effort.work = done_work + engine.work
                            if max_work is not None and effort.work >= max_work:
                                yield block, "work", 0
                                return
                            yield block, None, 0
                        done_work += engine.work
                        effort.anchors += engine.reached
                        continue
                    while not future.done():
                        j = next((j for j in sorted(futures, reverse=True)
                                  if j > i and j not in ours and futures[j].cancel()), None)
                        if j is not None:            # no worker started it: run it here
                            ours[j] = _run_local(job, pieces[j], cap, deadline, engine,
                                                 max_work)
                            continue
                        wait([future], timeout=0.5)
                        if not future.done():            # tell how far the workers are
                            effort.work = done_work + worked.value
                            yield np.zeros((0, prep.k), dtype=np.int64), None, counted.value
                    piece = future.result()
                blocks, works, total, why, reached = piece
                for block, work in zip(blocks, works, strict=True):
                    if max_work is not None and done_work + work >= max_work:
                        effort.work = done_work + work
                        yield block, "work", 0
                        return
                    yield block, None, 0
                done_work += total
                effort.work = done_work
                effort.anchors += reached
                if max_work is not None and done_work >= max_work:
                    yield np.zeros((0, prep.k), dtype=np.int64), "work", 0
                    return
                if why is not None:
                    yield np.zeros((0, prep.k), dtype=np.int64), why, 0
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
_WORKED: Any = None
_JOB: Any = None
_ENGINE: Any = None


def _start_worker(halt: Any, counted: Any, worked: Any, job: _Job) -> None:
    global _HALT, _COUNTED, _WORKED, _JOB, _ENGINE
    _HALT, _COUNTED, _WORKED, _JOB = halt, counted, worked, job
    _ENGINE = Engine(job[0])


_Job = tuple[Prepared, Sequence[tuple[int, int]], np.ndarray | None, int | None]
# A piece's result: its blocks of maps, the work done after each, its whole work, why it
# stopped early, the anchors it began.
_Piece = tuple[list[np.ndarray], list[int], int, str | None, int]


def _filtered(job: _Job, part: tuple[int, int],
              engine: Engine | None = None) -> Iterator[np.ndarray]:
    prep, arcs, native, probe = job
    n = prep.host.n
    for block in grow(prep, part=part, probe=probe, engine=engine):
        if native is not None and len(block):
            ok = np.ones(len(block), dtype=bool)
            for a, b in arcs:
                ok &= np.isin(block[:, a].astype(np.int64) * n + block[:, b], native)
            block = block[ok]
        yield block


def _run_part(part: tuple[int, int], cap: int | None, deadline: float | None,
              max_work: int | None) -> _Piece:
    """One worker process's piece of the anchors (see `_run_local`)."""
    return _run_local(_JOB, part, cap, deadline, _ENGINE, max_work, counted=_COUNTED,
                      worked=_WORKED, halt=_HALT)


def _run_local(job: _Job, part: tuple[int, int], cap: int | None, deadline: float | None,
               engine: Engine, max_work: int | None, *, counted: Any = None,
               worked: Any = None, halt: Any = None) -> _Piece:
    """A piece of the anchors: every map it finds with the work done after each block,
    unless `cap` maps, `max_work` work (alone: the caller adds the pieces before it), the
    `deadline` (time.monotonic) come first, or `halt` is set; then also which one
    stopped it ('work' is left to the caller, which counts it across pieces)."""
    blocks: list[np.ndarray] = []            # blocks with maps only (the empty ones the
    works: list[int] = []                    # matcher yields to let callers look up: not)
    count, why, last = 0, None, 0
    for block in _filtered(job, part, engine):
        if len(block):
            blocks.append(block)
            works.append(engine.work)
        count += len(block)
        if counted is not None and len(block):
            with counted.get_lock():
                counted.value += len(block)
        if worked is not None:
            with worked.get_lock():
                worked.value += engine.work - last
            last = engine.work
        if cap is not None and count >= cap:
            why = "limit"
            break
        if max_work is not None and engine.work >= max_work:
            break                            # the caller stops at or before this block
        if deadline is not None and time.monotonic() > deadline:
            why = "budget"
            break
        if halt is not None and halt.is_set():
            why = "budget"                   # the caller stopped (its result says why)
            break
    return blocks, works, engine.work, why, engine.reached
