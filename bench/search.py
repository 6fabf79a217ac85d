"""Placement search speed on large heavy-hex chips, against rustworkx VF2++ in the same run.

    python bench/search.py

For each case: our time for the complete, de-duplicated and ranked result
(`find_placements` + `rank_placements`) divided by the time rustworkx's VF2++ (vf2_mapping,
id_order=False, induced=False) takes just to enumerate the raw maps; whether the two
sets agree (every raw map is a symmetry image of exactly one of our placements); and
the peak traced memory of a second, traced run (tracing is left out of the timed
run, since it slows every Python allocation). Chips and calibrations are invented (seeded).
"""
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import rustworkx as rx

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
from embedcheck import Device, heavy_hex, load_patch, rank_placements  # noqa: E402
from embedcheck.model.device import CouplerCalibration, QubitCalibration  # noqa: E402
from embedcheck.place.search import find_placements  # noqa: E402
from embedcheck.place.symmetry import automorphisms, interaction_pattern  # noqa: E402
from helpers import FIXED_PATCH, patch_from_edges  # noqa: E402


def chip(rows, columns):
    lat = heavy_hex(rows, columns)
    rng = np.random.default_rng(rows * 1000 + columns)
    return Device.from_lattice(
        lat, name=f"hh{rows}x{columns}",
        coupler_calibration={c: CouplerCalibration(float(rng.uniform(0.004, 0.03)))
                             for c in lat.couplers},
        qubit_calibration={q: QubitCalibration(float(rng.uniform(0.005, 0.04)))
                           for q in lat.qubits})


def piece(rows, columns):
    """A piece of the heavy-hex lattice itself (the subdivided hexagonal lattice)."""
    lat = heavy_hex(rows, columns)
    return patch_from_edges(list(lat.couplers), name=f"piece{rows}x{columns}")


def case(label, device, patch, circuits=None, processes=1):
    names = circuits or list(patch.circuits)
    pattern, placed = interaction_pattern(patch, names)
    graph = device.live_graph()
    t = time.perf_counter()
    raw = [tuple(sorted((p, c) for c, p in m.items()))
           for m in rx.vf2_mapping(graph, pattern, subgraph=True, induced=False, id_order=False)]
    base = time.perf_counter() - t
    t = time.perf_counter()
    result = find_placements(device, patch, circuits=names, limit=None, processes=processes)
    rank_placements(device, patch, result.placements)
    ours = time.perf_counter() - t
    tracemalloc.start()                  # memory in a second run: tracing slows Python down
    find_placements(device, patch, circuits=names, limit=None)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    autos = automorphisms(pattern)
    ours_images = set()
    for p in result.placements:
        image = tuple(p.physical[q] for q in placed)
        for s in autos:
            ours_images.add(tuple(image[s[i]] for i in range(len(image))))
    raw_images = {tuple(device.qubits[c] for _, c in m) for m in raw}
    agree = ours_images == raw_images and len(raw) == len(result.placements) * len(autos)
    print(f"{label}: {len(raw)} maps, {len(result.placements)} placements x symmetry "
          f"{len(autos)}; VF2++ enumeration {base:.3f} s, ours {ours:.3f} s, ratio "
          f"{ours / base:.2f}; sets agree: {agree}; peak {peak / 2**20:.0f} MiB")


def main():
    flagged = load_patch(FIXED_PATCH)
    case("(i) flagged unit on 1091-qubit chip", chip(14, 14), flagged, ["round"])
    mid, big = chip(20, 20), chip(40, 40)
    case("(ii) 35-qubit piece on 2159-qubit chip", mid, piece(2, 2))
    case("(iii) 87-qubit piece on 2159-qubit chip", mid, piece(3, 4))
    case("(iv-a) 35-qubit piece on 8319-qubit chip", big, piece(2, 2))
    case("(iv-b) 87-qubit piece on 8319-qubit chip", big, piece(3, 4))
    case("(iv-b) the same, anchors split over 2 processes", big, piece(3, 4), processes=2)


if __name__ == "__main__":
    main()
