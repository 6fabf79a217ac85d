"""Start-up cost of the command line: `embedcheck --help` against `python -c pass`, both
measured in this run (best of N fresh interpreters each), printed as seconds and as a ratio.

The target (issue 17, item 5) is `embedcheck --help` under 0.15 s: the command line builds
every command's parser without importing numpy, qiskit, stim, jsonschema, the OpenQASM 3
parser or matplotlib; `import embedcheck` loads names on first use. Also listed: which of
those heavy modules `--help` imported (none is the goal).

    python bench/startup.py [--runs 15]
"""
import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
HEAVY = ("numpy", "qiskit", "stim", "jsonschema", "openqasm3", "matplotlib", "rustworkx",
         "networkx", "scipy", "yaml")


def best_of(command: list[str], runs: int) -> float:
    """The fastest wall time of `runs` fresh runs of `command` (the least disturbed one)."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL, env=env)
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=15)
    runs = parser.parse_args().runs
    python = sys.executable
    bare = best_of([python, "-c", "pass"], runs)
    cli = [python, "-c", "import sys; from embedcheck.cli import main; "
           "sys.argv = ['embedcheck', '--help']; sys.exit(main())"]
    helped = best_of(cli, runs)
    script = Path(python).parent / "embedcheck"          # the installed console script
    console = best_of([str(script), "--help"], runs) if script.exists() else None
    lazy = best_of([python, "-c", "import embedcheck"], runs)
    probe = subprocess.run(
        [python, "-c", "import sys, contextlib, io\nfrom embedcheck.cli import main\n"
         "with contextlib.redirect_stdout(io.StringIO()):\n"
         "    try:\n        main(['--help'])\n    except SystemExit:\n        pass\n"
         f"print(' '.join(m for m in {HEAVY!r} if m in sys.modules))"],
        check=True, capture_output=True, text=True, env={**os.environ, "PYTHONPATH": str(ROOT)})
    print(f"python -c pass:      {bare:.3f} s (best of {runs})")
    print(f"import embedcheck:   {lazy:.3f} s  ratio {lazy / bare:.2f}")
    print(f"embedcheck --help:   {helped:.3f} s  ratio {helped / bare:.2f}  "
          f"(target: under 0.150 s; {helped - bare:.3f} s above a bare interpreter)")
    if console is not None:
        print(f"{script} --help: {console:.3f} s  ratio {console / bare:.2f}")
    print(f"heavy modules --help imported: {probe.stdout.strip() or 'none'}")


if __name__ == "__main__":
    main()
