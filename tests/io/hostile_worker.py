"""Run many embedcheck command lines in one process, with its memory and CPU time bounded.

Used by the hostile-input tests: `python hostile_worker.py JOBS.json RESULTS.jsonl`. Each
job is {"id": ..., "argv": [...], "env": {...}}; each result line {"id", "code", "out",
"err"} is written (and flushed) as soon as the job ends, so a worker killed by a limit
still says how far it got. The limits are set by the parent (`resource.setrlimit` on
RLIMIT_AS and RLIMIT_CPU): a regression that eats memory fails its test instead of the
machine. `run_jobs` splits a list of jobs over two such workers (the suite runs on two
cores) and gathers their results. Not a test module (pytest collects only test_*.py).
"""
import contextlib
import io
import json
import os
import resource
import subprocess
import sys
from pathlib import Path

MEMORY_BYTES = 3 * 1024 ** 3          # each worker's address space
CPU_SECONDS = 1800                    # a guard against a hang, not a speed check


def worker_env() -> dict:
    """The environment for a worker under an address-space limit: one thread for the
    numerical libraries and two malloc arenas, so that the virtual memory they reserve up
    front (which grows with the number of CPUs) stays far below the limit."""
    return {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1",
            "MKL_NUM_THREADS": "1", "MALLOC_ARENA_MAX": "2"}


def _limits() -> None:
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_BYTES, MEMORY_BYTES))
    resource.setrlimit(resource.RLIMIT_CPU, (CPU_SECONDS, CPU_SECONDS))


def run_jobs(jobs: list, folder: Path, *, workers: int = 2) -> tuple[dict, list]:
    """Run `jobs` in `workers` capped worker processes at once (jobs dealt in turn);
    return (result by job id, the finished `subprocess.CompletedProcess`-like records
    {"returncode", "stderr"} of the workers, for a failure message)."""
    procs = []
    for k in range(workers):
        part = jobs[k::workers]
        jobs_file, results_file = folder / f"jobs{k}.json", folder / f"results{k}.jsonl"
        jobs_file.write_text(json.dumps(part))
        results_file.unlink(missing_ok=True)
        proc = subprocess.Popen([sys.executable, __file__, str(jobs_file), str(results_file)],
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                                preexec_fn=_limits, env=worker_env(), cwd=folder)
        procs.append((proc, results_file))
    results, finished = {}, []
    for proc, results_file in procs:
        _, stderr = proc.communicate()
        finished.append({"returncode": proc.returncode, "stderr": stderr})
        if results_file.exists():
            for line in results_file.read_text().splitlines():
                item = json.loads(line)
                results[item["id"]] = item
    return results, finished


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
