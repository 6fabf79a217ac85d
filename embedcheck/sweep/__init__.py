"""Fleet sweeps: chips x calibration snapshots x patches (or code families x distances).

Every unit (one chip snapshot x one patch) is searched and ranked as one task, its best
placements sampled as further tasks, on an executor from `embedcheck.engine`: Dask by
default (an embedded local cluster of processes, or an existing cluster by address).
Results land in an SQLite database as each task finishes; a rerun resumes. `summarise`
turns the database into the report: per patch, the best chip and region per snapshot and
how often the winner changes.
"""
from ..io.sweepfile import Sweep, load_sweep
from .run import SweepOutcome, plan_units, run_sweep
from .store import ResultRow, ResultStore, Unit
from .summary import summarise

__all__ = ["ResultRow", "ResultStore", "Sweep", "SweepOutcome", "Unit", "load_sweep",
           "plan_units", "run_sweep", "summarise"]
