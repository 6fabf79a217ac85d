"""Logical figures against Monte Carlo: how well each ranks placements, and what it costs.

    python bench/logical.py [--part correction|detection|all] [--cases surface-d3,...]
                            [--shots N]

correction (issue 15; the default): every placement that `vet_patch` ranks, on invented,
seeded log-normal calibrations (`tests/helpers.lognormal_calibration`: two-qubit error
median 0.01, log-sigma 0.6; readout 0.02; T1 100 us and T2 80 us, log-sigma 0.3):

    surface-d3   rotated surface code, d = 3, 3 rounds, 10 x 10 square grid
    surface-d5   rotated surface code, d = 5, 3 rounds, 13 x 13 square grid
    hhchipfit-d3 heavy-hex-chipfit, d = 3, 3 rounds, 4 x 6 heavy-hex chip
    hhchipfit-d5 heavy-hex-chipfit, d = 5, 3 rounds, 5 x 7 heavy-hex chip

The reference is decoded Monte Carlo sampled by `sinter.collect` (stim's sampling companion:
its own worker processes, stim's detector sampler, pymatching on the circuit's decomposed
model), --shots per placement in two independent halves, so the check does not rest on our
own sampler (`--reference ours` uses `score.sampling.sample_decoded`, seeded, instead).
`--seeds` repeats every case on several calibrations and ends with how often the estimate's
pick lay inside the best sampled placement's interval.
Per figure (the decoded estimate of `score.estimate`, the fidelity product, `kept` and
`undetected` of `score.logical.fast_scores`) it prints the Spearman rank correlation with
the reference and the time per placement; then the estimate's order, its pick's sampled
error against the 95% Wilson interval of the best sampled placement, and what a Monte
Carlo needs to rank as well as the estimate does: the shots per placement whose expected
Spearman with the reference reaches the estimate's (binomial resampling of the reference
rates, which takes the reference as the truth and so favours the Monte Carlo) and their
time (fixed cost of the matching graph and sampler plus time per shot, measured in the
same loop as the estimate). The noisy circuit and its model, which both need, are timed
apart. Every figure is a model estimate from the (here invented) calibration.

detection: the post-selection figure `undetected` on the demo chip's flagged unit with a
random (invented) calibration against Monte Carlo post-selected logical error (issue 15's
starting point), and its time against bare detector-error-model builds.
"""
import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import numpy as np  # noqa: E402
from scipy.stats import spearmanr  # noqa: E402

from embedcheck import Device, heavy_hex, load_device, square_grid, vet_patch  # noqa: E402
from embedcheck.io.patchfile import patch_from_family  # noqa: E402
from embedcheck.score.estimate import (  # noqa: E402
    clear_estimate_cache,
    decoded_logical_estimate,
)
from embedcheck.score.logical import (  # noqa: E402
    decoder_model,
    fast_scores,
    monte_carlo,
)
from embedcheck.score.noise import noisy_circuit  # noqa: E402
from embedcheck.score.sampling import sample_decoded, wilson  # noqa: E402
from helpers import (  # noqa: E402
    DEMO_CHIP,
    lognormal_calibration,
    random_calibration,
    syndrome_detector_patch,
)

CASES = {
    "surface-d3": ("surface", 3, square_grid, 10, 10),
    "surface-d5": ("surface", 5, square_grid, 13, 13),
    "hhchipfit-d3": ("heavy-hex-chipfit", 3, heavy_hex, 4, 6),
    "hhchipfit-d5": ("heavy-hex-chipfit", 5, heavy_hex, 5, 7),
}
CALIBRATION_SEED = 2027
TIME_SHOTS = 10_000


def shots_needed(rates, target, rng, reps=200):
    """Fewest shots per placement (on a grid, interpolated in log) whose expected Spearman
    against `rates` reaches `target`, sampling binomially from `rates`."""
    previous = None
    for n in (int(round(250 * 2 ** (i / 2))) for i in range(25)):
        rho = float(np.nanmean([spearmanr(rng.binomial(n, rates) / n, rates).statistic
                                for _ in range(reps)]))
        if rho >= target:
            if previous is None:
                return n
            n0, r0 = previous
            t = (target - r0) / (rho - r0) if rho > r0 else 1.0
            return int(round(math.exp(math.log(n0) + t * (math.log(n) - math.log(n0)))))
        previous = (n, rho)
    return None


def sinter_reference(circuits, shots, workers):
    """Decoded logical errors per circuit in two independent halves of shots // 2, sampled
    by sinter (unseeded: sinter's samplers take no seed) with pymatching."""
    import sinter

    halves = []
    for half in range(2):
        tasks = [sinter.Task(circuit=c, json_metadata={"i": i, "half": half})
                 for i, c in enumerate(circuits)]
        stats = sinter.collect(num_workers=workers, tasks=tasks, decoders=["pymatching"],
                               max_shots=shots // 2, max_errors=shots)
        errors = [0] * len(circuits)
        for s in stats:
            assert s.shots == shots // 2, (s.shots, shots // 2)
            errors[s.json_metadata["i"]] += s.errors
        halves.append(errors)
    return [list(pair) for pair in zip(*halves, strict=True)]


def correction_case(name, shots, seed=CALIBRATION_SEED, reference_sampler="sinter", workers=2):
    family, distance, lattice, rows, columns = CASES[name]
    device = lognormal_calibration(Device.from_lattice(lattice(rows, columns),
                                                       name=f"invented-{name}"), seed)
    patch = patch_from_family(family, distance=distance, rounds=3)
    vetting = vet_patch(device, patch)
    placements = list(vetting.ranking.placements)
    clear_estimate_cache()
    shared, t_est, t_fixed, t_shot, estimates, reference = [], [], [], [], [], []
    circuits = []
    for i, placement in enumerate(placements):
        t0 = time.perf_counter()
        circuit = noisy_circuit(device, patch, placement)
        dem = decoder_model(circuit)
        shared.append(time.perf_counter() - t0)
        t0 = time.perf_counter()                  # as estimate_scores does, on that model
        estimates.append(decoded_logical_estimate(dem))
        t_est.append(time.perf_counter() - t0)
        import pymatching
        t0 = time.perf_counter()
        matching = pymatching.Matching.from_detector_error_model(dem)
        circuit.compile_detector_sampler(seed=1)
        t_fixed.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        sample_decoded(circuit, shots=TIME_SHOTS, seed=10**6 + i, matching=matching)
        t_shot.append((time.perf_counter() - t0) / TIME_SHOTS)
        circuits.append(circuit)
        if reference_sampler == "ours":
            reference.append([sample_decoded(circuit, shots=shots // 2, seed=1000 * i + k,
                                             matching=matching).errors for k in range(2)])
    t0 = time.perf_counter()
    if reference_sampler == "sinter":
        reference = sinter_reference(circuits, shots, workers)
    t_reference = time.perf_counter() - t0
    errors = np.array(reference)
    n = 2 * (shots // 2)
    sampled = errors.sum(axis=1) / n
    value = np.array([e.value for e in estimates])
    t0 = time.perf_counter()
    fast = fast_scores(device, patch, placements)
    t_fast = (time.perf_counter() - t0) / len(placements)
    figures = {"estimate": value,
               "fidelity_product": -np.asarray(vetting.ranking.log_success),
               "kept": -np.array([f.kept for f in fast]),
               "undetected": np.array([f.undetected for f in fast])}
    per_placement_ms = {"estimate": 1e3 * float(np.median(t_est[1:] or t_est)),
                        "fidelity_product": 0.0, "kept": 1e3 * t_fast,
                        "undetected": 1e3 * t_fast}
    print(f"\n== {name}: {family} d = {distance}, 3 rounds, {len(placements)} placements "
          f"(calibration seed {seed}); decoded Monte Carlo ({reference_sampler}"
          + (f", {workers} workers, {t_reference:.0f} s" if reference_sampler == "sinter" else "")
          + f") {n} shots each, logical error "
          f"per shot min/median/max {sampled.min():.4f}/{np.median(sampled):.4f}/"
          f"{sampled.max():.4f}; two halves agree with Spearman "
          f"{spearmanr(errors[:, 0], errors[:, 1]).statistic:.3f}")
    rho = {}
    for figure, values in figures.items():
        if np.all(values == values[0]):
            print(f"   {figure:17s} Spearman   --   (the same on every placement: "
                  f"{values[0]:.3g}), {per_placement_ms[figure]:7.1f} ms/placement")
            continue
        rho[figure] = float(spearmanr(values, sampled).statistic)
        print(f"   {figure:17s} Spearman {rho[figure]:6.3f}, {per_placement_ms[figure]:7.1f} "
              f"ms/placement" + (" (the search's own score)" if figure == "fidelity_product"
                                 else ""))
    first = estimates[0]
    print(f"   estimate: leading order {first.order} (ceil(d/2) faults), decoder-graph "
          f"distance {first.distance}, complete {all(e.complete for e in estimates)}; first "
          f"call {1e3 * t_est[0]:.0f} ms (builds the enumeration); median estimate / sampled "
          f"{float(np.median(value / np.maximum(sampled, 1e-12))):.2f}")
    low, high = wilson(int(errors.sum(axis=1).min()), n)
    pick = int(np.argmin(value))
    inside = bool(sampled[pick] <= high)
    print(f"   best sampled {sampled.min():.4f} [{low:.4f}, {high:.4f}]; the estimate's pick "
          f"sampled {sampled[pick]:.4f}, rank {int((sampled < sampled[pick]).sum()) + 1}, "
          f"inside the best's interval: {inside}")
    fixed, per_shot = float(np.median(t_fixed)), float(np.median(t_shot))
    need = shots_needed(sampled, rho["estimate"], np.random.default_rng(0))
    if need is None:
        print("   Monte Carlo: the estimate's Spearman not reached below 10^6 shots")
    else:
        mc_ms = 1e3 * (fixed + need * per_shot)
        print(f"   Monte Carlo to rank as well ({rho['estimate']:.3f}): {need} shots per "
              f"placement = {mc_ms:.1f} ms (fixed {1e3 * fixed:.1f} ms + "
              f"{1e6 * per_shot:.2f} ms per 1000 shots); estimate / Monte Carlo time "
              f"{per_placement_ms['estimate'] / mc_ms:.2f}")
    both = 1e3 * float(np.median(shared))
    line = f"   both need the noisy circuit and its model: {both:.1f} ms/placement"
    if need is not None:
        line += (f"; with it, estimate {per_placement_ms['estimate'] + both:.1f} ms against "
                 f"Monte Carlo {mc_ms + both:.1f} ms")
    print(line)
    return {"rho": rho.get("estimate"), "inside": inside}


def detection_part():
    with tempfile.TemporaryDirectory() as tmp:
        patch = syndrome_detector_patch(Path(tmp))
    device = random_calibration(load_device(DEMO_CHIP), seed=3)
    vetting = vet_patch(device, patch)
    placements = list(vetting.ranking.placements)
    t = time.perf_counter()
    for p in placements:
        noisy_circuit(device, patch, p).detector_error_model()
    base = time.perf_counter() - t
    t = time.perf_counter()
    fast = fast_scores(device, patch, placements)
    ours = time.perf_counter() - t
    print(f"\n== detection: fast score of {len(placements)} placements: {ours:.3f} s; bare "
          f"DEM builds {base:.3f} s; ratio {ours / base:.2f}")
    sample = placements[::4][:42]
    t = time.perf_counter()
    mc = [monte_carlo(device, patch, p, shots=200_000, seed=i).post_selected_error
          for i, p in enumerate(sample)]
    mc_t = time.perf_counter() - t
    index = {p: i for i, p in enumerate(placements)}
    rho_fast = spearmanr([fast[index[p]].undetected for p in sample], mc).statistic
    rho_fid = spearmanr([-vetting.ranking.log_success[index[p]] for p in sample], mc).statistic
    print(f"   Monte Carlo, {len(sample)} placements x 200000 shots: {mc_t:.1f} s")
    print(f"   Spearman with Monte Carlo post-selected logical error: undetected "
          f"{rho_fast:.3f}, fidelity product {rho_fid:.3f}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("correction", "detection", "all"),
                        default="correction")
    parser.add_argument("--cases", default=",".join(CASES))
    parser.add_argument("--shots", type=int, default=200_000,
                        help="decoded Monte Carlo shots per placement (reference)")
    parser.add_argument("--reference", choices=("sinter", "ours"), default="sinter",
                        help="who samples the decoded Monte Carlo reference")
    parser.add_argument("--workers", type=int, default=2, help="sinter's worker processes")
    parser.add_argument("--seeds", default=str(CALIBRATION_SEED),
                        help="calibration seeds, comma-separated (each case on each)")
    args = parser.parse_args()
    print("Every figure below is a model estimate from an invented calibration; real "
          "calibrations drift.")
    if args.part in ("correction", "all"):
        seeds = [int(s) for s in args.seeds.split(",")]
        outcomes = {}
        for name in args.cases.split(","):
            for seed in seeds:
                outcomes[name, seed] = correction_case(name, args.shots, seed, args.reference,
                                                       args.workers)
        if len(seeds) > 1:
            print("\n== over the calibration seeds " + ", ".join(map(str, seeds)))
            for name in args.cases.split(","):
                got = [outcomes[name, seed] for seed in seeds]
                rhos = [g["rho"] for g in got if g["rho"] is not None]
                print(f"   {name:13s} estimate Spearman min/median {min(rhos):.3f}/"
                      f"{float(np.median(rhos)):.3f}; its pick inside the best sampled "
                      f"one's interval on {sum(g['inside'] for g in got)} of {len(got)}")
    if args.part in ("detection", "all"):
        detection_part()


if __name__ == "__main__":
    main()
