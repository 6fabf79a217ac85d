"""The sweep's results in an embedded SQLite database: written as tasks finish, never lost.

Tables (one row per ...):

- `units`: chip x snapshot x patch: names, when the snapshot was taken, status ('done' or
  'failed' with its one-line error), how many placements the search found and whether
  it was complete, which figure ranks the unit, and `note`: why a figure the sweep asked
  for was not computed for it (e.g. sampling that could say nothing), once per unit.
- `results`: unit x placement rank x figure: the value, its interval (sampled figures),
  shots and errors, the placement (JSON: patch qubit -> chip qubit) and its off-coupler
  gate count.
- `tasks`: every finished task (its key includes the parameters it ran with), so a rerun
  skips what is stored: that is the resume. `seconds` is the task's wall time on its
  worker, `cpu_seconds` the CPU time its process spent on it (on a shared machine the
  wall time also measures the load; older databases get the column empty).

Every task's rows are written in one transaction together with its `tasks` row: an
interrupted sweep leaves whole tasks or nothing, and a resumed one computes each missing
task once. Only the process that runs the sweep writes (SQLite's single writer); WAL mode
lets a report read while a sweep runs.

    >>> store = ResultStore(":memory:")
    >>> store.record_unit(Unit(key="u", chip="c", chip_file="c.yaml", snapshot="s", patch="p"),
    ...                   task="rank:u", rows=[], placements=0, complete=True, seconds=0.1)
    >>> store.done_tasks()
    {'rank:u'}
"""
from __future__ import annotations

import datetime as dt
import json
import sqlite3
from dataclasses import dataclass
from typing import Iterable

__all__ = ["ResultRow", "ResultStore", "Unit"]

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS tasks (
    task TEXT PRIMARY KEY, kind TEXT NOT NULL, unit TEXT NOT NULL,
    status TEXT NOT NULL CHECK (status IN ('done', 'failed')),
    error TEXT, seconds REAL, finished_at TEXT NOT NULL, cpu_seconds REAL);
CREATE TABLE IF NOT EXISTS units (
    unit TEXT PRIMARY KEY, chip TEXT NOT NULL, chip_file TEXT NOT NULL, snapshot TEXT NOT NULL,
    taken_at TEXT, patch TEXT NOT NULL, distance INTEGER, rounds INTEGER,
    status TEXT NOT NULL CHECK (status IN ('done', 'failed')), error TEXT,
    placements INTEGER, complete INTEGER, ranked_by TEXT, note TEXT);
CREATE TABLE IF NOT EXISTS results (
    unit TEXT NOT NULL, rank INTEGER NOT NULL, figure TEXT NOT NULL,
    value REAL, low REAL, high REAL, shots INTEGER, errors INTEGER, per_round REAL,
    placement TEXT NOT NULL, off_coupler INTEGER NOT NULL,
    PRIMARY KEY (unit, rank, figure));
"""
_VERSION = "1"


@dataclass(frozen=True, kw_only=True)
class Unit:
    """One chip snapshot x patch."""

    key: str
    chip: str
    chip_file: str
    snapshot: str
    patch: str
    taken_at: str | None = None
    distance: int | None = None
    rounds: int | None = None


@dataclass(frozen=True, kw_only=True)
class ResultRow:
    """One figure of one placement of one unit."""

    rank: int
    figure: str
    value: float | None
    placement: dict
    off_coupler: int
    low: float | None = None
    high: float | None = None
    shots: int | None = None
    errors: int | None = None
    per_round: float | None = None


class ResultStore:
    """The SQLite file of one sweep (created on first use)."""

    def __init__(self, path: str) -> None:
        self.path = path
        self.db = sqlite3.connect(path, isolation_level=None)     # explicit transactions
        if path != ":memory:":
            self.db.execute("PRAGMA journal_mode=WAL")
        self.db.execute("PRAGMA synchronous=NORMAL")
        self.db.executescript(_SCHEMA)
        columns = {row[1] for row in self.db.execute("PRAGMA table_info(tasks)")}
        if "cpu_seconds" not in columns:          # a database written before the column
            self.db.execute("ALTER TABLE tasks ADD COLUMN cpu_seconds REAL")
        if "note" not in {row[1] for row in self.db.execute("PRAGMA table_info(units)")}:
            self.db.execute("ALTER TABLE units ADD COLUMN note TEXT")   # an older database
        found = self.db.execute("SELECT value FROM meta WHERE key='version'").fetchone()
        if found is None:
            self.db.execute("INSERT INTO meta VALUES ('version', ?)", (_VERSION,))
        elif found[0] != _VERSION:
            raise ValueError(f"results database version {found[0]} is not {_VERSION}")

    def close(self) -> None:
        self.db.close()

    def done_tasks(self) -> set[str]:
        """Keys of every task stored (done or failed on bad input): a rerun skips them."""
        return {row[0] for row in self.db.execute("SELECT task FROM tasks")}

    def record_unit(self, unit: Unit, *, task: str, rows: Iterable[ResultRow], placements: int,
                    complete: bool, seconds: float, ranked_by: str | None = None,
                    cpu_seconds: float | None = None, note: str | None = None) -> None:
        """A unit's ranking: its placements' rows replace any older ones, in one transaction;
        `note` says why a figure asked for was not computed."""
        with _transaction(self.db):
            self._put_unit(unit, "done", None, placements, complete, ranked_by, note)
            self.db.execute("DELETE FROM results WHERE unit = ?", (unit.key,))
            self._put_rows(unit.key, rows)
            self._put_task(task, "rank", unit.key, "done", None, seconds, cpu_seconds)

    def record_failure(self, unit: Unit, *, task: str, error: str, seconds: float = 0.0,
                       cpu_seconds: float | None = None) -> None:
        """A unit that failed (bad chip or patch, or our bug): its one-line error is kept."""
        with _transaction(self.db):
            self._put_unit(unit, "failed", error, None, None, None)
            self.db.execute("DELETE FROM results WHERE unit = ?", (unit.key,))
            self._put_task(task, "rank", unit.key, "failed", error, seconds, cpu_seconds)

    def record_sample(self, unit_key: str, *, task: str, row: ResultRow | None,
                      seconds: float, error: str | None = None,
                      cpu_seconds: float | None = None) -> None:
        """One placement's sampled figure (or the error that stopped it)."""
        with _transaction(self.db):
            if row is not None:
                self._put_rows(unit_key, [row])
            self._put_task(task, "sample", unit_key, "failed" if error else "done", error,
                           seconds, cpu_seconds)

    def placements(self, unit_key: str) -> list[tuple[int, dict, int]]:
        """(rank, placement, off-coupler gates) of a unit's stored placements, best first."""
        rows = self.db.execute("SELECT rank, placement, off_coupler FROM results WHERE unit = ? "
                               "AND figure = 'fidelity_product' ORDER BY rank", (unit_key,))
        return [(r, json.loads(p), off) for r, p, off in rows]

    def units(self) -> list[dict]:
        """Every unit, as dicts."""
        return _dicts(self.db.execute("SELECT * FROM units ORDER BY patch, chip, taken_at, "
                                      "snapshot"))

    def results(self) -> list[dict]:
        """Every result row, as dicts (placement decoded from JSON)."""
        rows = _dicts(self.db.execute("SELECT * FROM results ORDER BY unit, rank, figure"))
        for row in rows:
            row["placement"] = json.loads(row["placement"])
        return rows

    def task_count(self) -> int:
        return int(self.db.execute("SELECT COUNT(*) FROM tasks").fetchone()[0])

    def _put_unit(self, unit, status, error, placements, complete, ranked_by,
                  note=None) -> None:
        self.db.execute(
            "INSERT OR REPLACE INTO units (unit, chip, chip_file, snapshot, taken_at, patch, "
            "distance, rounds, status, error, placements, complete, ranked_by, note) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (unit.key, unit.chip, unit.chip_file, unit.snapshot, unit.taken_at, unit.patch,
             unit.distance, unit.rounds, status, error, placements,
             None if complete is None else int(complete), ranked_by, note))

    def _put_rows(self, unit_key, rows) -> None:
        self.db.executemany(
            "INSERT OR REPLACE INTO results VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            [(unit_key, r.rank, r.figure, r.value, r.low, r.high, r.shots, r.errors,
              r.per_round, json.dumps(r.placement, sort_keys=True), r.off_coupler)
             for r in rows])

    def _put_task(self, task, kind, unit_key, status, error, seconds, cpu_seconds) -> None:
        now = dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds")
        self.db.execute("INSERT OR REPLACE INTO tasks (task, kind, unit, status, error, seconds, "
                        "finished_at, cpu_seconds) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                        (task, kind, unit_key, status, error, seconds, now, cpu_seconds))


class _transaction:
    def __init__(self, db):
        self.db = db

    def __enter__(self):
        self.db.execute("BEGIN IMMEDIATE")

    def __exit__(self, kind, value, traceback):
        self.db.execute("COMMIT" if kind is None else "ROLLBACK")


def _dicts(cursor) -> list[dict]:
    names = [d[0] for d in cursor.description]
    return [dict(zip(names, row, strict=True)) for row in cursor]
