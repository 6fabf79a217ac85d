"""The Dask worker plugin that imports what embedcheck's tasks need once, when a worker
starts (in its own module: importing it imports `dask.distributed`, which only the Dask
executor needs).

Without it the first task on each worker pays for the imports (about a second of CPU
time on the development machine, see bench/sweep.py), inside the timed sweep and inside
the task's own `seconds`; a worker restarted after a crash runs the plugin again.

    >>> Preload(("math",)).modules
    ('math',)
"""
from __future__ import annotations

import importlib
from typing import Any

from distributed import WorkerPlugin

__all__ = ["PRELOAD", "Preload"]

# What every embedcheck task imports on a worker (by name: the engine depends on no stage).
PRELOAD = ("numpy", "rustworkx", "stim", "pymatching", "embedcheck.pipeline.vet",
           "embedcheck.score.logical", "embedcheck.score.noise", "embedcheck.score.sampling",
           "embedcheck.sweep.tasks")


class Preload(WorkerPlugin):
    """Import `modules` when a worker starts. A module that does not import is skipped
    here: the task that needs it fails with its own one-line error."""

    def __init__(self, modules: tuple[str, ...]) -> None:
        self.modules = tuple(modules)

    def setup(self, worker: Any) -> None:
        for name in self.modules:
            try:
                importlib.import_module(name)
            except ImportError:
                pass
