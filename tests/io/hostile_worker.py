"""Run many embedcheck command lines in one process, with its memory and CPU time bounded.

Used by the hostile-input tests: `python hostile_worker.py JOBS.json RESULTS.jsonl`. Each
job is {"id": ..., "argv": [...], "env": {...}}; each result line {"id", "code", "out",
"err"} is written (and flushed) as soon as the job ends, so a worker killed by a limit
still says how far it got. The limits are set by the parent (`resource.setrlimit` on
RLIMIT_AS and RLIMIT_CPU): a regression that eats memory fails its test instead of the
machine. Not a test module (pytest collects only test_*.py).
"""
import contextlib
import io
import json
import os
import sys


def worker_env() -> dict:
    """The environment for a worker under an address-space limit: one thread for the
    numerical libraries and two malloc arenas, so that the virtual memory they reserve up
    front (which grows with the number of CPUs) stays far below the limit."""
    return {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1",
            "MKL_NUM_THREADS": "1", "MALLOC_ARENA_MAX": "2"}


def main(jobs_path: str, results_path: str) -> None:
    from embedcheck.cli import main as embedcheck_main

    with open(jobs_path) as handle:
        jobs = json.load(handle)
    with open(results_path, "w") as results:
        for job in jobs:
            saved = {k: os.environ.get(k) for k in job.get("env", {})}
            os.environ.update(job.get("env", {}))
            out, err = io.StringIO(), io.StringIO()
            try:
                with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
                    code = embedcheck_main(job["argv"])
            except BaseException as exc:           # main itself must never raise
                code = f"raised {type(exc).__name__}: {exc}"
            finally:
                for key, value in saved.items():
                    if value is None:
                        os.environ.pop(key, None)
                    else:
                        os.environ[key] = value
            results.write(json.dumps({"id": job["id"], "code": code, "out": out.getvalue(),
                                      "err": err.getvalue()}) + "\n")
            results.flush()


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
