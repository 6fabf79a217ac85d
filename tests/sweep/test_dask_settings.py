"""The Dask executor's measured settings change how tasks travel, never what comes back.

- Tasks sent in pieces (`batch`) store exactly what tasks sent alone store, and exactly
  what the serial run stores; each task's CPU time is stored beside its wall time.
- In a piece, a task that raises keeps its one-line error to itself; `follow` sees every
  task; every key comes back once.
- The embedded cluster's workers are warmed once (`preload`), keep one BLAS/OpenMP thread,
  and run without Dask's MALLOC_TRIM_THRESHOLD_ (see DEVELOPERS.md, bench/sweep.py).

Speed itself is measured by bench/sweep.py, not here (no timed assertions).
"""
import math
import sqlite3

from embedcheck.engine import DaskExecutor, SerialExecutor, Task
from embedcheck.io.sweepfile import load_sweep
from embedcheck.sweep import ResultStore, run_sweep
from embedcheck.sweep.store import Unit
from helpers import FLEET_SWEEP_TASKS as TASKS
from helpers import stored_results


def test_pieces_of_tasks_store_what_single_tasks_and_the_serial_run_store(sweep_file,
                                                                          tmp_path):
    sweep = load_sweep(sweep_file)
    with SerialExecutor() as run:
        run_sweep(sweep, executor=run, database=str(tmp_path / "serial.sqlite"))
    with DaskExecutor(workers=2, batch=1) as run:
        alone = run_sweep(sweep, executor=run, database=str(tmp_path / "alone.sqlite"))
    with DaskExecutor(workers=1, batch=5) as run:
        pieces = run_sweep(sweep, executor=run, database=str(tmp_path / "pieces.sqlite"))
    assert alone.computed == pieces.computed == TASKS and alone.ok and pieces.ok
    reference = stored_results(tmp_path / "serial.sqlite")
    assert stored_results(tmp_path / "alone.sqlite") == reference
    assert stored_results(tmp_path / "pieces.sqlite") == reference
    db = sqlite3.connect(tmp_path / "pieces.sqlite")
    times = db.execute("SELECT seconds, cpu_seconds FROM tasks").fetchall()
    db.close()
    assert len(times) == TASKS
    assert all(wall is not None and cpu is not None and cpu >= 0 for wall, cpu in times)


def test_a_piece_keeps_each_error_to_its_task_and_follow_sees_every_task():
    numbers = [4.0, 9.0, -1.0, 16.0, 25.0, -4.0, 36.0]
    tasks = [Task(key=f"sqrt{i}", function=math.sqrt, argument=x) for i, x in enumerate(numbers)]

    def follow(done):                  # the root of every whole square root, once
        if done.key.startswith("sqrt") and done.error is None and done.value in (2.0, 4.0):
            return [Task(key=f"again-{done.key}", function=math.sqrt, argument=done.value)]
        return []

    with SerialExecutor() as run:
        serial = {d.key: (d.value, d.error) for d in run.results(tasks, follow=follow)}
    with DaskExecutor(workers=1, batch=3, preload=()) as run:
        seen = [(d.key, d.value, d.error) for d in run.results(tasks, follow=follow)]
    assert len(seen) == len({key for key, _, _ in seen}) == len(numbers) + 2
    assert {key: (value, error) for key, value, error in seen} == serial
    assert serial["sqrt2"] == (None, "ValueError: math domain error")
    assert serial["sqrt3"] == (4.0, None) and serial["again-sqrt3"] == (2.0, None)


def test_embedded_workers_are_warmed_once_with_one_blas_thread_and_plain_malloc():
    def state():
        import os
        import sys
        return ("embedcheck.sweep.tasks" in sys.modules, os.environ.get("OMP_NUM_THREADS"),
                os.environ.get("OPENBLAS_NUM_THREADS"), os.environ.get("MALLOC_TRIM_THRESHOLD_"))

    with DaskExecutor(workers=1) as run:
        warm = set(run.client.run(state).values())
        assert run.startup_seconds > 0
    with DaskExecutor(workers=1, preload=()) as run:
        cold = set(run.client.run(state).values())
    assert warm == {(True, "1", "1", None)}
    assert cold == {(False, "1", "1", None)}             # the check above can fail


def test_a_database_written_before_cpu_times_gains_the_column(tmp_path):
    path = tmp_path / "old.sqlite"
    db = sqlite3.connect(path)
    db.executescript(
        "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);"
        "INSERT INTO meta VALUES ('version', '1');"
        "CREATE TABLE tasks (task TEXT PRIMARY KEY, kind TEXT NOT NULL, unit TEXT NOT NULL,"
        " status TEXT NOT NULL, error TEXT, seconds REAL, finished_at TEXT NOT NULL);"
        "INSERT INTO tasks VALUES ('rank:old', 'rank', 'old', 'done', NULL, 0.5, 'then');")
    db.commit()
    db.close()
    store = ResultStore(str(path))
    store.record_unit(Unit(key="u", chip="c", chip_file="c.yaml", snapshot="s", patch="p"),
                      task="rank:u", rows=[], placements=0, complete=True, seconds=0.2,
                      cpu_seconds=0.1)
    assert store.done_tasks() == {"rank:old", "rank:u"}
    rows = dict(store.db.execute("SELECT task, cpu_seconds FROM tasks").fetchall())
    store.close()
    assert rows == {"rank:old": None, "rank:u": 0.1}
