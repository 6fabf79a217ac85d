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
from .matcher import Host, Prepared, grow, prepare

__all__ = ["raw_maps"]


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
    live = np.ones(n, dtype=bool)
    live[list(blocked)] = False
    masks = None
    if allowed is not None or blocked:
        by_role: dict[str, np.ndarray] = {}
        for role in set(pattern.nodes()):
            mask = live.copy()
            if allowed is not None:
                ok = np.zeros(n, dtype=bool)
                ok[[i for i in range(n) if chip[i] in allowed[role]]] = True
                mask &= ok
            by_role[role] = mask
        masks = [by_role[role] for role in pattern.nodes()]
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
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    deadline = None if seconds is None else time.monotonic() + seconds
    context = multiprocessing.get_context()
    halt = context.Event()                   # set when the caller has enough
    counted = context.Value("q", 0)          # maps found by all workers so far (progress)
    with ProcessPoolExecutor(processes, initializer=_start_worker,
                             initargs=(halt, counted)) as pool:
        futures = [pool.submit(_run_part, job, (i, processes), cap, deadline)
                   for i in range(processes)]
        try:
            pending = set(futures)
            while pending:
                done, pending = wait(pending, timeout=0.5, return_when=FIRST_COMPLETED)
                for future in done:
                    yield future.result() + (0,)
                if not done:                 # nothing back yet: tell how far the workers are
                    yield np.zeros((0, prep.k), dtype=np.int64), None, counted.value
        finally:
            halt.set()                       # running workers stop at their next block
            for future in futures:
                future.cancel()


_HALT: Any = None
_COUNTED: Any = None


def _start_worker(halt: Any, counted: Any) -> None:
    global _HALT, _COUNTED
    _HALT, _COUNTED = halt, counted


_Job = tuple[Prepared, Sequence[tuple[int, int]], np.ndarray | None, bool]


def _filtered(job: _Job, part: tuple[int, int]) -> Iterator[np.ndarray]:
    prep, arcs, native, probe = job
    n = prep.host.n
    for block in grow(prep, part=part, probe=None if probe else 0):
        if native is not None and len(block):
            ok = np.ones(len(block), dtype=bool)
            for a, b in arcs:
                ok &= np.isin(block[:, a].astype(np.int64) * n + block[:, b], native)
            block = block[ok]
        yield block


def _run_part(job: _Job, part: tuple[int, int], cap: int | None,
              deadline: float | None) -> tuple[np.ndarray, str | None]:
    """One worker process's share of the anchors: every map it finds, unless `cap` maps
    or the `deadline` (time.monotonic) come first; then also which one stopped it."""
    blocks: list[np.ndarray] = []
    count, why = 0, None
    for block in _filtered(job, part):
        blocks.append(block)
        count += len(block)
        if _COUNTED is not None and len(block):
            with _COUNTED.get_lock():
                _COUNTED.value += len(block)
        if cap is not None and count >= cap:
            why = "limit"
            break
        if deadline is not None and time.monotonic() > deadline:
            why = "budget"
            break
        if _HALT is not None and _HALT.is_set():
            why = "budget"                   # the caller stopped (its result says why)
            break
    k = job[0].k
    return (np.concatenate(blocks) if blocks else np.zeros((0, k), dtype=np.int64)), why
