"""Run many independent units of work: in this process, on local worker processes, or on Dask.

One interface (`Executor`) for every command that fans out: the fleet sweep, the logical
ranking's sampling, the projection over distances and scales. A unit is a picklable
function and its argument, with a key; results come back as they finish, each as a
`Done` (key, value or error). This package imports nothing else of embedcheck, so any
stage may use it.

    >>> from embedcheck.engine import SerialExecutor, Task
    >>> with SerialExecutor() as run:
    ...     sorted(d.value for d in run.results([Task(key=str(i), function=abs, argument=-i)
    ...                                          for i in range(3)]))
    [0, 1, 2]
"""
from .executor import DaskExecutor, Done, Executor, ProcessExecutor, SerialExecutor, Task, executor

__all__ = ["DaskExecutor", "Done", "Executor", "ProcessExecutor", "SerialExecutor", "Task",
           "executor"]
