"""Executors: the same stream of tasks run serially, on local processes, or on Dask.

`Executor.results(tasks, follow=...)` yields a `Done` for every task as it finishes (in
completion order, not submission order). `follow(done)` may return more tasks, submitted
at once: a sweep submits the sampling of a unit's best placements as soon as the unit's
ranking is back. An exception inside a task never stops the stream: it comes back as
`Done.error`, one line. Results must be picklable.

`DaskExecutor` runs on `dask.distributed`: an embedded `LocalCluster` of worker processes
(one thread each) by default, an existing cluster given as `scheduler="tcp://host:8786"`,
or a cluster object the caller made. Dask re-runs the tasks of a worker that dies.
"""
from __future__ import annotations

import os
from collections import deque
from dataclasses import dataclass
from typing import Any, Callable, Iterable, Iterator

__all__ = ["DaskExecutor", "Done", "Executor", "ProcessExecutor", "SerialExecutor", "Task",
           "executor"]


@dataclass(frozen=True, kw_only=True)
class Task:
    """One unit of work: `function(argument)`, known by `key` (unique in a stream)."""

    key: str
    function: Callable[[Any], Any]
    argument: Any = None


@dataclass(frozen=True, kw_only=True)
class Done:
    """A finished task: its value, or its error as one line ('TypeName: message')."""

    key: str
    value: Any = None
    error: str | None = None


Follow = Callable[[Done], Iterable[Task]]


class Executor:
    """Base class: a context manager with `results`; subclasses implement `_run`."""

    name = "executor"

    def __enter__(self) -> "Executor":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        """Release workers (a no-op for the serial executor)."""

    def results(self, tasks: Iterable[Task], *, follow: Follow | None = None) -> Iterator[Done]:
        """Run `tasks` (and whatever `follow` adds); yield each as it finishes."""
        seen: set[str] = set()

        def unique(batch: Iterable[Task]) -> list[Task]:
            out = []
            for task in batch:
                if task.key in seen:
                    raise ValueError(f"task key {task.key!r} given twice")
                seen.add(task.key)
                out.append(task)
            return out

        return self._run(unique(tasks), lambda d: unique(follow(d)) if follow else [])

    def _run(self, tasks: list[Task], follow: Callable[[Done], list[Task]]) -> Iterator[Done]:
        raise NotImplementedError


class SerialExecutor(Executor):
    """Every task in this process, in submission order (tests, debugging, tiny jobs)."""

    name = "serial"

    def _run(self, tasks, follow):
        queue = deque(tasks)
        while queue:
            task = queue.popleft()
            done = _call(task)
            queue.extend(follow(done))
            yield done


class ProcessExecutor(Executor):
    """Tasks on `processes` local worker processes (concurrent.futures)."""

    name = "processes"

    def __init__(self, processes: int | None = None) -> None:
        from concurrent.futures import ProcessPoolExecutor
        self.processes = processes or os.cpu_count() or 1
        self._pool = ProcessPoolExecutor(self.processes)

    def close(self) -> None:
        self._pool.shutdown(cancel_futures=True)

    def _run(self, tasks, follow):
        from concurrent.futures import FIRST_COMPLETED, wait
        running = {self._pool.submit(_call, t): t for t in tasks}
        while running:
            finished, _ = wait(running, return_when=FIRST_COMPLETED)
            for future in finished:
                task = running.pop(future)
                try:
                    done = future.result()
                except BaseException as exc:          # the pool itself broke
                    done = Done(key=task.key, error=_one_line(exc))
                for more in follow(done):
                    running[self._pool.submit(_call, more)] = more
                yield done


class DaskExecutor(Executor):
    """Tasks on a Dask cluster: an embedded local one by default.

    `scheduler`: address of an existing scheduler ("tcp://10.0.0.5:8786"); `cluster`: a
    cluster object (e.g. `dask.distributed.LocalCluster`), not closed here; neither: a
    `LocalCluster` of `workers` processes (default: the machine's cores), one thread each,
    made here and closed on exit. `retries`: times a task that raised is run again.

    Start-up is paid once, before the first task: every worker (and any worker that joins
    later, e.g. one restarted after a crash) imports `preload` (default: the modules every
    embedcheck task needs: numpy, rustworkx, stim, pymatching, the search, the ranking and
    the sampler). `startup_seconds` is how long making the executor took.

    `batch`: at most this many tasks travel as one Dask task. Tasks submitted together
    (the first list, or what `follow` returns for one finished piece) are cut into pieces
    of up to `batch`; while fewer than two pieces per worker are queued, into at least four
    pieces per worker, so no worker waits. Each task's `Done` still comes back on its own,
    and `follow` sees every `Done` of a piece before any is yielded. Dask's cost per task
    (a scheduler round trip: about 14 ms of this process's CPU time on the development
    machine, 4.3 s for the 240 tasks of bench/sweep.py sent alone, 1.3 s for 31 pieces)
    is then paid per piece; 1 sends every task alone.
    """

    name = "dask"

    def __init__(self, *, scheduler: str | None = None, workers: int | None = None,
                 cluster: Any = None, retries: int = 1, batch: int = 8,
                 preload: tuple[str, ...] | None = None) -> None:
        import logging
        import time

        from dask.distributed import Client, LocalCluster
        started = time.perf_counter()
        if batch < 1:
            raise ValueError(f"batch must be at least 1, not {batch}")
        self._own_cluster = None
        if scheduler is not None:
            try:
                self.client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError) as exc:
                raise ConnectionError(f"cannot reach the Dask scheduler at {scheduler}: "
                                      f"{_one_line(exc)}") from None
        else:
            if cluster is None:
                import dask
                with dask.config.set(_LOCAL_CONFIG):
                    cluster = self._own_cluster = LocalCluster(
                        n_workers=workers or os.cpu_count() or 1, threads_per_worker=1,
                        processes=True, dashboard_address=None, silence_logs=logging.ERROR)
            self.client = Client(cluster)
        self.retries = retries
        self.batch = batch
        from .preload import PRELOAD, Preload
        try:
            self.client.register_plugin(Preload(PRELOAD if preload is None else preload),
                                        name="embedcheck-preload")
        except BaseException:                       # no cluster left running behind
            self.close()
            raise
        self.startup_seconds = time.perf_counter() - started

    @property
    def worker_pids(self) -> dict[str, int]:
        """Worker address -> process id (the fault tests kill one by its pid)."""
        return self.client.run(os.getpid)

    def close(self) -> None:
        self.client.close()
        if self._own_cluster is not None:
            self._own_cluster.close()

    def _run(self, tasks, follow):
        import uuid

        from dask.distributed import as_completed
        tag = uuid.uuid4().hex[:8]                   # keys unique on a shared cluster
        workers = max(1, len(self.client.scheduler_info(n_workers=-1).get("workers", {})))
        batches_of: dict[str, list[Task]] = {}
        stream = as_completed()

        def submit(batch: list[Task]) -> None:
            if len(batches_of) >= 2 * workers:       # enough queued: pack tightly
                size = self.batch
            else:                                    # few left: spread over the workers
                size = max(1, min(self.batch, -(-len(batch) // (4 * workers))))
            for start in range(0, len(batch), size):
                piece = batch[start:start + size]
                future = self.client.submit(_call_many, piece, pure=False, retries=self.retries,
                                            key=f"embedcheck-{tag}-{piece[0].key}")
                batches_of[str(future.key)] = piece
                stream.add(future)

        submit(tasks)
        for future in stream:
            piece = batches_of.pop(str(future.key))
            try:
                finished = future.result()
            except BaseException as exc:            # KilledWorker, lost connection, ...
                finished = [Done(key=task.key, error=_one_line(exc)) for task in piece]
            future.release()
            more = [task for done in finished for task in follow(done)]
            if more:
                submit(more)
            yield from finished


# The embedded cluster's settings (measured with bench/sweep.py, see DEVELOPERS.md):
# - Dask's nanny sets MALLOC_TRIM_THRESHOLD_=65536 in every worker to hand memory back to
#   the system; glibc then stops adapting its mmap threshold (mallopt(3)), so every numpy
#   array above 128 kB is mapped and unmapped afresh: the sweep's tasks took about 25%
#   more CPU time in a worker than in this process. None unsets it (the BLAS thread
#   limits of 1 stay).
# - Scheduler-side queuing (worker-saturation 1.1) hands a worker its next task only when
#   one finishes: a round trip through this process per task, slow on a loaded machine.
#   Our tasks are small, independent and cheap to ship, so each worker keeps a queue.
_LOCAL_CONFIG = {
    "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
    "distributed.scheduler.worker-saturation": float("inf"),
}


def executor(kind: str = "serial", *, processes: int | None = None,
             scheduler: str | None = None) -> Executor:
    """An executor by name: 'serial', 'processes' or 'dask' (scheduler: an address)."""
    if kind == "serial":
        return SerialExecutor()
    if kind == "processes":
        return ProcessExecutor(processes)
    if kind == "dask":
        return DaskExecutor(scheduler=scheduler, workers=processes)
    raise ValueError(f"executor kind must be serial, processes or dask, not {kind!r}")


def _call_many(tasks: list[Task]) -> list[Done]:
    return [_call(task) for task in tasks]


def _call(task: Task) -> Done:
    try:
        return Done(key=task.key, value=task.function(task.argument))
    except Exception as exc:                   # returned, never raised: the stream goes on
        return Done(key=task.key, error=_one_line(exc))


def _one_line(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {' '.join(str(exc).split())}"
