"""The fast logical score against Monte Carlo, and its speed, on the invented demo.

    python bench/logical.py

Seeded random (invented) calibration on the demo chip; the coupler-respecting demo
patch with every syndrome bit of every round as a detector and the data parity as the
observable. Prints: time for the fast score of every distinct placement against the
time of one plain DEM build per placement (the baseline, same run); and the Spearman
rank correlation of the fast score and of the fidelity product with Monte Carlo
post-selected logical error over 42 placements.
"""
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
from scipy.stats import spearmanr  # noqa: E402

from embedcheck import load_device, vet_patch  # noqa: E402
from embedcheck.score.logical import fast_scores, monte_carlo  # noqa: E402
from embedcheck.score.noise import noisy_circuit  # noqa: E402
from helpers import (  # noqa: E402
    DEMO_CHIP,  # noqa: E402
    random_calibration,
    syndrome_detector_patch,
)


def main():
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
    print(f"fast score of {len(placements)} placements: {ours:.3f} s; bare DEM builds "
          f"{base:.3f} s; ratio {ours / base:.2f}")
    sample = placements[::4][:42]
    t = time.perf_counter()
    mc = [monte_carlo(device, patch, p, shots=200_000, seed=i).post_selected_error
          for i, p in enumerate(sample)]
    mc_t = time.perf_counter() - t
    index = {p: i for i, p in enumerate(placements)}
    rho_fast = spearmanr([fast[index[p]].undetected for p in sample], mc).statistic
    rho_fid = spearmanr([-vetting.ranking.log_success[index[p]] for p in sample], mc).statistic
    print(f"Monte Carlo, 42 placements x 200000 shots: {mc_t:.1f} s")
    print(f"Spearman with Monte Carlo post-selected logical error: fast score {rho_fast:.3f}, "
          f"fidelity product {rho_fid:.3f}")


if __name__ == "__main__":
    main()
