"""The forecast's sampling speed against sinter, and its curves against outside references.

    python bench/forecast.py [--part speed|stim|threshold|all] [--shots N]

speed: shots per second of our sampling path (`score.sampling.sample_in_chunks`: chunked,
seeded, each chunk stored in SQLite) against a bare `sinter.collect` (pymatching decoder)
of the same circuits in the same process: the rotated surface code at d = 3, 5, 7 (d
rounds) on an invented uniform chip (p = 0.5%, idle model), with 1 and with 2 worker
processes (ours: the serial executor and `ProcessExecutor(2)`; sinter: num_workers 1 and
2). Runs are interleaved; the median of --repeats is kept. Worker start-up is included
for both (it is what a user waits for).

stim: the surface code at d = 3, 5, 7 with every channel p and no idle noise, ours
(`run_forecast` on an invented uniform square-grid chip) against stim's own generated
circuit (after_clifford_depolarization = before_measure_flip = after_reset_flip = p)
decoded by pymatching, at p = 0.3%, 0.6%, 1%: both per-shot rates with 95% intervals.

threshold: logical error per round against p for d = 3, 5, 7 of the surface code and of
heavy-hex-chipfit on invented uniform chips, with the idle model (every step a qubit
waits costs DEPOLARIZE1(p); see tests/helpers.uniform_chip) and without it; the
crossings, as the chip's two-qubit error r = 4p/5 and as p. References: the rotated
surface code with matching, 0.5-1% (Fowler, Mariantoni, Martinis & Cleland, Phys. Rev. A
86, 032324 (2012): about 0.57%; from memory); the heavy-hex code, 0.45% (Chamberland et
al., Phys. Rev. X 10, 011022 (2020), their layout, decoder and noise: a comparison only).
"""
import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from embedcheck import (  # noqa: E402
    find_placements,
    heavy_hex,
    noisy_circuit,
    patch_from_family,
    run_forecast,
    square_grid,
)
from embedcheck.engine import ProcessExecutor, SerialExecutor  # noqa: E402
from embedcheck.score.sampling import (  # noqa: E402
    SampleStore,
    circuit_key,
    sample_decoded,
    sample_in_chunks,
)
from helpers import uniform_chip  # noqa: E402


def _surface_circuits(p: float) -> dict[int, str]:
    out = {}
    for d in (3, 5, 7):
        chip = uniform_chip(square_grid(2 * d - 1, 2 * d - 1), p, idle=True)
        patch = patch_from_family("surface", distance=d, rounds=d)
        placement = find_placements(chip, patch, limit=1).placements[0]
        out[d] = str(noisy_circuit(chip, patch, placement))
    return out


def _ours(texts: dict[int, str], shots: int, workers: int) -> tuple[float, int, dict]:
    keyed = {circuit_key(text, 1): text for text in texts.values()}
    with tempfile.TemporaryDirectory() as folder:
        store = SampleStore(str(Path(folder) / "s.sqlite"))
        executor = SerialExecutor() if workers == 1 else ProcessExecutor(workers)
        started = time.perf_counter()
        with executor:
            sample_in_chunks(keyed, shots=shots, max_errors=10**12, store=store,
                             executor=executor, chunk_shots=25_000)
        seconds = time.perf_counter() - started
        totals = {d: store.total(circuit_key(text, 1)) for d, text in texts.items()}
        store.close()
    return seconds, sum(t.shots for t in totals.values()), {d: t.errors for d, t in
                                                             totals.items()}


def _sinter(texts: dict[int, str], shots: int, workers: int) -> tuple[float, int, dict]:
    import sinter
    import stim
    tasks = [sinter.Task(circuit=stim.Circuit(text), json_metadata={"d": d})
             for d, text in texts.items()]
    started = time.perf_counter()
    stats = sinter.collect(num_workers=workers, tasks=tasks, decoders=["pymatching"],
                           max_shots=shots, max_errors=10**12)
    seconds = time.perf_counter() - started
    return seconds, sum(s.shots for s in stats), {s.json_metadata["d"]: s.errors
                                                  for s in stats}


def speed(shots: int, repeats: int) -> None:
    texts = _surface_circuits(0.005)
    print(f"speed: surface code d = 3, 5, 7 (d rounds), uniform p = 0.5% with idle, {shots} "
          f"shots each, median of {repeats}")
    for workers in (1, 2):
        ours, theirs = [], []
        for _ in range(repeats):
            s, n, errors_ours = _ours(texts, shots, workers)
            ours.append(n / s)
            s, n, errors_theirs = _sinter(texts, shots, workers)
            theirs.append(n / s)
        a, b = statistics.median(ours), statistics.median(theirs)
        print(f"  {workers} worker(s): ours {a:,.0f} shots/s, sinter.collect {b:,.0f} shots/s,"
              f" ratio ours/sinter {a / b:.2f}")
        print(f"    logical errors (last run) ours {errors_ours}, sinter {errors_theirs}")


def stim_check(shots: int) -> None:
    import stim
    print(f"stim: surface code, every channel p, no idle; {shots} shots per point; per-shot "
          "logical error [95%]")
    p0 = 0.006
    chip = uniform_chip(square_grid(13, 13), p0, idle=False)
    out = run_forecast(chip, "surface", distances=[3, 5, 7], scales=[0.5, 1.0, 5 / 3],
                       shots=shots, max_errors=10**12, search_limit=10)
    print(f"  {'d':>2} {'p':>6}  {'ours':<30} {'stim generated':<30} agree")
    for point in sorted((p for p in out.points if p.placement == "best"),
                        key=lambda p: (p.distance, p.scale)):
        p = p0 * point.scale
        ref = sample_decoded(stim.Circuit.generated(
            "surface_code:rotated_memory_z", distance=point.distance, rounds=point.distance,
            after_clifford_depolarization=p, before_measure_flip_probability=p,
            after_reset_flip_probability=p), shots=shots, seed=2000 + point.distance)
        (a, b), (c, e) = point.per_shot_interval, ref.interval()
        print(f"  {point.distance:>2} {p:>6.2%}  {point.per_shot:.3e} [{a:.2e},{b:.2e}]  "
              f"{ref.rate:.3e} [{c:.2e},{e:.2e}]  {'yes' if a <= e and c <= b else 'NO'}")


def _curves(family: str, lattice, p0: float, ps, idle: bool, shots: int, errors: int) -> None:
    chip = uniform_chip(lattice, p0, idle=idle)
    started = time.perf_counter()
    out = run_forecast(chip, family, distances=[3, 5, 7], scales=[p / p0 for p in ps],
                       shots=shots, max_errors=errors, search_limit=10,
                       executor=ProcessExecutor(2))
    seconds = time.perf_counter() - started
    print(f"\n{family}, {'idle model' if idle else 'no idle noise'} ({seconds:.0f} s): "
          "logical error per round [95%]")
    print(f"  {'p':>6} {'r=4p/5':>7}" + "".join(f"  {'d=' + str(d):<28}" for d in (3, 5, 7)))
    for scale in out.scales:
        row = f"  {p0 * scale:>6.2%} {0.8 * p0 * scale:>7.2%}"
        for d in (3, 5, 7):
            point = out.point(d, scale=scale)
            low, high = point.per_round_interval
            row += f"  {point.per_round:.2e} [{low:.1e},{high:.1e}]"
        print(row)
    for c in out.crossings:
        if c.scale is None:
            print(f"  crossing {c.smaller}/{c.larger}: {c.note}")
        else:
            print(f"  crossing {c.smaller}/{c.larger}: r = {c.two_qubit_error:.2%} (p = "
                  f"{c.two_qubit_error * 1.25:.2%}), between p = {p0 * c.between[0]:.2%} and "
                  f"{p0 * c.between[1]:.2%}{'' if c.resolved else ' (not resolved)'}")


def threshold(shots: int) -> None:
    grid = square_grid(13, 13)
    _curves("surface", grid, 0.006, (0.004, 0.006, 0.007, 0.008, 0.009, 0.01, 0.012), True,
            shots, 3000)
    _curves("surface", grid, 0.006, (0.006, 0.01, 0.012, 0.014, 0.016, 0.018), False,
            shots, 3000)
    hexes = heavy_hex(7, 7)
    _curves("heavy-hex-chipfit", hexes, 0.002, (0.001, 0.0015, 0.002, 0.0025, 0.003, 0.004),
            True, shots, 3000)
    _curves("heavy-hex-chipfit", hexes, 0.006, (0.004, 0.006, 0.008, 0.01, 0.012, 0.014),
            False, shots, 3000)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--part", choices=("speed", "stim", "threshold", "all"), default="all")
    parser.add_argument("--shots", type=int, default=40_000)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    if args.part in ("speed", "all"):
        speed(args.shots * 2, args.repeats)
    if args.part in ("stim", "all"):
        stim_check(args.shots)
    if args.part in ("threshold", "all"):
        threshold(args.shots)


if __name__ == "__main__":
    main()
