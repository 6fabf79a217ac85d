"""Fleet sweep speed-up: the same sweep in this process and on a local Dask cluster of 1 and
of 2 workers, wall time and CPU time, start-up apart.

    python bench/sweep.py [--shots N] [--repeats R] [--untuned]

3 invented chips (devices/fleet) x 5 daily snapshots x 4 patches (the flagged unit with
its coupler-respecting preparation, repetition codes d=3 and d=5, heavy-hex-chipfit d=3)
= 60 units, each searched and ranked, its 3 best swap-free placements sampled and decoded
(240 tasks). Each run starts from an empty database; runs are interleaved and the median
of --repeats is printed.

For each run: start-up (making the cluster and warming its workers, what a user waits for
before the first task), the sweep's wall time after that, the CPU time of the tasks (sum
of the `cpu_seconds` they store), of the worker processes as a whole and of this process
(scheduler, client, database), and the load average when the figure was taken. The
machine may be shared: wall times measure the load as well as the work, CPU times the
work. Where the kernel shares the CPU between sessions (autogroup, printed first), all
the workers of one sweep share one session's part of a busy machine; the CPU time of the
busiest worker bounds the wall time on free cores, so its ratio between 1 and 2 workers
is the speed-up the work allows. `--untuned` adds Dask's defaults as a reference (a plain
LocalCluster, every task sent alone, no warm-up): what the executor did before its
settings were measured.
"""
import argparse
import logging
import os
import resource
import sqlite3
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from embedcheck.engine import DaskExecutor, SerialExecutor  # noqa: E402
from embedcheck.io.sweepfile import load_sweep  # noqa: E402
from embedcheck.sweep import run_sweep  # noqa: E402


def _sweep_file(folder: Path, shots: int) -> Path:
    path = folder / "bench.yaml"
    path.write_text(
        "embedcheck_sweep: 1\nname: bench\n"
        f"chips: [{ROOT}/devices/fleet/fleet-hex-a, {ROOT}/devices/fleet/fleet-hex-b, "
        f"{ROOT}/devices/fleet/fleet-grid-c]\n"
        f"patches: [{ROOT}/samples/flagged_weight4_coupler_prep.yaml, "
        "{family: repetition, distances: [3, 5], rounds: 3}, "
        "{family: heavy-hex-chipfit, distances: [3], rounds: 3}]\n"
        f"figures: [fidelity_product, decoded]\ntop: 3\nsampling: {{shots: {shots}, "
        "max_errors: 100000, seed: 1}\nsearch: {limit: 2000, budget_s: 120}\n")
    return path


def _cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime + usage.ru_stime


def _load() -> str:
    return "load {:.1f} {:.1f} {:.1f}".format(*os.getloadavg())


def _sharing() -> str:
    """Whether the kernel shares the CPU between sessions rather than processes."""
    try:
        grouped = Path("/proc/sys/kernel/sched_autogroup_enabled").read_text().strip() == "1"
    except OSError:
        return "CPU sharing between sessions unknown"
    if not grouped:
        return "the kernel shares the CPU between processes"
    return ("the kernel shares the CPU between sessions (autogroup): while another session "
            "keeps the cores busy, a second worker of ours gets no more CPU, only the "
            "busiest-worker ratio shows what 2 workers can do")


def _task_cpu(database: Path) -> tuple[int, float]:
    db = sqlite3.connect(database)
    count, cpu = db.execute("SELECT COUNT(*), SUM(cpu_seconds) FROM tasks").fetchone()
    db.close()
    return count, cpu


def _stored(database: Path) -> list:
    db = sqlite3.connect(database)
    rows = db.execute("SELECT * FROM results ORDER BY unit, rank, figure").fetchall()
    db.close()
    return rows


def _serial(sweep, database):
    start, cpu = time.perf_counter(), _cpu()
    with SerialExecutor() as executor:
        run_sweep(sweep, executor=executor, database=str(database))
    here = _cpu() - cpu
    return {"startup": 0.0, "wall": time.perf_counter() - start, "here": here, "workers": 0.0,
            "busiest": here}


def _dask(sweep, database, workers, untuned):
    start = time.perf_counter()
    cluster = None
    if untuned:
        from dask.distributed import LocalCluster
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               dashboard_address=None, silence_logs=logging.ERROR)
        executor = DaskExecutor(cluster=cluster, batch=1, preload=())
    else:
        executor = DaskExecutor(workers=workers)
    try:
        startup = time.perf_counter() - start
        before = executor.client.run(_cpu)
        start, cpu = time.perf_counter(), _cpu()
        run_sweep(sweep, executor=executor, database=str(database))
        wall, here = time.perf_counter() - start, _cpu() - cpu
        after = executor.client.run(_cpu)
    finally:
        executor.close()
        if cluster is not None:
            cluster.close()
    spent = [after[w] - before.get(w, 0.0) for w in after]
    return {"startup": startup, "wall": wall, "here": here, "workers": sum(spent),
            "busiest": max(spent)}


def _line(label, figures, database):
    tasks, cpu = _task_cpu(database)
    return (f"  {label:<22} start-up {figures['startup']:5.1f} s  sweep {figures['wall']:5.1f} s "
            f"wall | CPU: tasks {cpu:5.1f} s, workers {figures['workers']:5.1f} s "
            f"(busiest {figures['busiest']:4.1f} s), "
            f"this process {figures['here']:4.1f} s  ({tasks} tasks; {_load()})")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--shots", type=int, default=20000)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--untuned", action="store_true",
                        help="also run Dask's defaults (every task alone, no warm-up)")
    args = parser.parse_args()
    kinds = ["serial", "1 worker", "2 workers"]
    if args.untuned:
        kinds += ["1 worker untuned", "2 workers untuned"]
    print(f"before: {_load()}; {_sharing()}", flush=True)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        sweep = load_sweep(_sweep_file(folder, args.shots))
        runs: dict[str, list[dict]] = {kind: [] for kind in kinds}
        reference = None
        for repeat in range(args.repeats):
            print(f"run {repeat + 1}:", flush=True)
            for kind in kinds:
                database = folder / f"{kind.replace(' ', '-')}-{repeat}.sqlite"
                if kind == "serial":
                    figures = _serial(sweep, database)
                else:
                    figures = _dask(sweep, database, int(kind[0]), "untuned" in kind)
                _, figures["tasks"] = _task_cpu(database)
                runs[kind].append(figures)
                print(_line(kind, figures, database), flush=True)
                stored = _stored(database)
                reference = reference or stored
                if stored != reference:
                    raise SystemExit(f"{kind}: stored results differ from the first run's")

        def median(kind, what):
            return statistics.median(r[what] for r in runs[kind])

        print(f"medians ({_load()}):")
        for kind in kinds:
            print(f"  {kind:<22} start-up {median(kind, 'startup'):5.1f} s  sweep "
                  f"{median(kind, 'wall'):5.1f} s wall  task CPU {median(kind, 'tasks'):5.1f} s  "
                  f"this process {median(kind, 'here'):4.1f} s CPU")
        for tag in ("", " untuned") if args.untuned else ("",):
            one, two = median("1 worker" + tag, "wall"), median("2 workers" + tag, "wall")
            serial = median("serial", "wall")
            with_start = ((median("1 worker" + tag, "startup") + one)
                          / (median("2 workers" + tag, "startup") + two))
            print(f"speed-up 2 vs 1 worker{tag}: {one / two:.2f}x sweep wall "
                  f"({with_start:.2f}x with start-up); 1 worker / serial {one / serial:.2f}, "
                  f"2 workers / serial {two / serial:.2f}")
            # On free cores the sweep lasts as long as its busiest worker computes: the
            # speed-up the work allows, whatever else runs on the machine.
            bound = median("1 worker" + tag, "busiest") / median("2 workers" + tag, "busiest")
            print(f"  CPU-bound (busiest worker's CPU time, 1 / 2 workers): {bound:.2f}x")
        print("every run stored the same results")


if __name__ == "__main__":
    main()
