"""Search and ranking speed, as ratios against a baseline measured in the same run.

    python bench/search_bench.py

search: `find_placements` (VF2 + symmetry de-duplication + completion) against plain
rustworkx `vf2_mapping` enumeration of the same pattern, on large heavy-hex chips.
rank: the vectorised cost model against a per-placement Python loop.
Machines here are noisy: read the ratios, not the seconds.
"""
import sys
import time
from pathlib import Path

import numpy as np
import rustworkx as rx

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from embedcheck import Device, find_placements, heavy_hex, load_patch, rank_placements  # noqa: E402
from embedcheck.model.device import CouplerCalibration, QubitCalibration  # noqa: E402
from embedcheck.place.symmetry import interaction_pattern  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent


def best_of(fn, repeat=3):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def search_case(rows, columns, patch):
    lat = heavy_hex(rows, columns)
    rng = np.random.default_rng(1)
    dev = Device.from_lattice(
        lat, name="bench",
        coupler_calibration={c: CouplerCalibration(float(rng.uniform(0.005, 0.02)))
                             for c in lat.couplers},
        qubit_calibration={q: QubitCalibration(float(rng.uniform(0.01, 0.03)))
                           for q in lat.qubits})
    pattern, _ = interaction_pattern(patch, ["round"])
    chip = dev.live_graph()
    base_t, raw = best_of(lambda: sum(1 for _ in rx.vf2_mapping(
        chip, pattern, subgraph=True, induced=False, id_order=False)))
    ours_t, res = best_of(lambda: find_placements(dev, patch, circuits=["round"], limit=None))
    print(f"search heavy-hex {rows}x{columns} ({len(lat.qubits)} qubits): {raw} maps, "
          f"{len(res.placements)} placements; rustworkx enumeration {base_t:.3f} s, "
          f"find_placements {ours_t:.3f} s, ratio {ours_t / base_t:.2f}")
    return dev, res


def rank_case(dev, patch, placements):
    arrays = dev.calibration_arrays
    readout, single = arrays.readout_error, arrays.single_qubit_error

    def loop():
        out = []
        for p in placements:
            s = 0.0
            where = p.as_dict(patch)
            for name, times in patch.experiment():
                for op in patch.circuits[name].operations:
                    if op.kind == "2q":
                        a, b = np.array([where[op.qubits[0]]]), np.array([where[op.qubits[1]]])
                        e = arrays.coupler(a, b, arrays.coupler_error)[0]
                        s += times * np.log1p(-(0.0 if np.isnan(e) else e))
                    elif op.kind == "measure":
                        s += times * np.log1p(-readout[where[op.qubits[0]]])
                    elif op.kind == "1q":
                        s += times * np.log1p(-single[where[op.qubits[0]]])
            out.append(s)
        return out

    base_t, _ = best_of(loop, 1)
    ours_t, _ = best_of(lambda: rank_placements(dev, patch, placements))
    print(f"rank {len(placements)} placements: per-placement loop {base_t:.3f} s, "
          f"vectorised {ours_t:.4f} s, ratio {ours_t / base_t:.3f}")


def main():
    patch = load_patch(ROOT / "samples" / "flagged_weight4_coupler_prep.yaml")
    for rows, columns in ((6, 6), (12, 12), (20, 20)):
        dev, res = search_case(rows, columns, patch)
    rank_case(dev, patch, list(res.placements))


if __name__ == "__main__":
    main()
