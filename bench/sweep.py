"""Fleet sweep speed-up: the same sweep on a local Dask cluster of 1 and of 2 workers.

    python bench/sweep.py [--shots N]

3 invented chips (devices/fleet) x 5 daily snapshots x 4 patches (the flagged unit with
its coupler-respecting preparation, repetition codes d=3 and d=5, heavy-hex-chipfit d=3)
= 60 units, each searched and ranked, its 3 best swap-free placements sampled and decoded.
Prints wall time for 1 and 2 workers (runs interleaved, median of --repeats), the
speed-up, and the serial in-process time as the reference. Each run starts from an empty
database; cluster start-up is included (it is what a user waits for).
"""
import argparse
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


def _time(sweep, make, folder, tag):
    start = time.perf_counter()
    with make() as executor:
        outcome = run_sweep(sweep, executor=executor, database=str(folder / f"{tag}.sqlite"))
    return time.perf_counter() - start, outcome


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--shots", type=int, default=20000)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        sweep = load_sweep(_sweep_file(folder, args.shots))
        serial, outcome = _time(sweep, SerialExecutor, folder, "serial")
        print(f"{outcome.units} units, {outcome.computed} tasks; serial in-process: "
              f"{serial:.1f} s")
        times = {1: [], 2: []}
        for repeat in range(args.repeats):
            for workers in (1, 2):
                elapsed, _ = _time(sweep, lambda w=workers: DaskExecutor(workers=w), folder,
                                   f"w{workers}-{repeat}")
                times[workers].append(elapsed)
                print(f"  run {repeat + 1}, {workers} worker(s): {elapsed:.1f} s", flush=True)
        one, two = statistics.median(times[1]), statistics.median(times[2])
        print(f"median: 1 worker {one:.1f} s, 2 workers {two:.1f} s; speed-up {one / two:.2f}x; "
              f"1 worker / serial {one / serial:.2f}")


if __name__ == "__main__":
    main()
