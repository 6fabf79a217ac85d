# ruff: noqa: B023  (every closure made in a loop here is timed and dropped in that same iteration)
"""Placement search speed against rustworkx's VF2++ and VF3 (vf3py), in the same process.

    python bench/search.py [--runs 3] [--only enumerate,first,processes,best]

Needs the bench extra (`pip install '.[bench]'`: vf3py 1.0.2). Chips and calibrations are
invented (seeded). Every time is the median of `--runs` interleaved runs (ours, VF2++,
VF3, ours, ...), so a burst of load on the shared machine hits all three alike; the load
average is printed before and after each section. Read the ratios, not the seconds.

- enumerate: `find_placements(limit=None)` (every distinct placement, one per symmetry
  orbit, completed and de-duplicated) against VF2++ (`vf2_mapping`, induced=False,
  id_order=False) and VF3 (`main_vf3_caller`, induced=False) enumerating every raw map;
  the sets are compared (every raw map is a symmetry image of exactly one placement).
  Also our time with the ranking (`rank_placements`) added, and the peak traced memory
  of one more run (traced apart: tracing slows Python down).
- growth: per family, the least-squares slope of log(time) against log(chip qubits), and
  the same slope for the number of maps (no enumeration can grow slower than its output).
- first: `find_placements(limit=1)` against VF2++'s and VF3's first map.
- processes: `--processes 2` against 1 on the 87-qubit piece on the 8319-qubit chip.
- best: the best-first search for the 10 best placements by the fidelity product's
  additive terms, with the proof of optimality, on heavy-hex-chipfit d=5 on a 20 x 20
  grid (millions of placements); on a case small enough to enumerate, checked against
  ranking every placement.
"""
import argparse
import os
import sys
import time
import tracemalloc
from pathlib import Path

import networkx as nx
import numpy as np
import rustworkx as rx

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
from embedcheck import Device, heavy_hex, load_patch, rank_placements  # noqa: E402
from embedcheck.io.patchfile import patch_from_family as build_patch  # noqa: E402
from embedcheck.model.device import CouplerCalibration, QubitCalibration  # noqa: E402
from embedcheck.model.lattices import square_grid  # noqa: E402
from embedcheck.model.placement import Placement  # noqa: E402
from embedcheck.place.matcher import Host, grow, prepare  # noqa: E402
from embedcheck.place.search import find_placements  # noqa: E402
from embedcheck.place.symmetry import automorphisms, interaction_pattern  # noqa: E402
from embedcheck.score.best_placements import find_best_placements  # noqa: E402
from helpers import FIXED_PATCH, patch_from_edges  # noqa: E402

try:
    import vf3py
except ImportError:                         # the bench extra is not installed
    vf3py = None


def chip(lattice, name):
    """A device on `lattice` with invented, seeded calibration."""
    rng = np.random.default_rng(len(lattice.qubits))
    return Device.from_lattice(
        lattice, name=name,
        coupler_calibration={c: CouplerCalibration(float(rng.uniform(0.004, 0.03)))
                             for c in lattice.couplers},
        qubit_calibration={q: QubitCalibration(float(rng.uniform(0.005, 0.04)))
                           for q in lattice.qubits})


def piece(rows, columns):
    """A piece of the heavy-hex lattice itself (the subdivided hexagonal lattice)."""
    return patch_from_edges(list(heavy_hex(rows, columns).couplers),
                            name=f"piece{rows}x{columns}")


def load():
    return os.getloadavg()[0]


CLOCK = time.process_time      # --clock wall: time.perf_counter


def median_times(functions, runs):
    """Median seconds of each function over `runs` interleaved rounds, read from CLOCK:
    by default the process's CPU time, since the machine is shared and a neighbour's
    burst would otherwise land on whichever of the three happens to be running (wall
    time with --clock wall; the processes section always uses wall time)."""
    times = [[] for _ in functions]
    for _ in range(runs):
        for slot, fn in zip(times, functions, strict=True):
            t = CLOCK()
            fn()
            slot.append(CLOCK() - t)
    return [float(np.median(t)) for t in times]


def graphs(device, patch, names):
    pattern, placed = interaction_pattern(patch, names)
    host = device.live_graph()
    nxh = nx.Graph(list(host.edge_list()))
    nxh.add_nodes_from(host.node_indices())
    nxp = nx.Graph(list(pattern.edge_list()))
    nxp.add_nodes_from(pattern.node_indices())
    return pattern, placed, host, nxh, nxp


def vf2_all(host, pattern):
    return [m for m in rx.vf2_mapping(host, pattern, subgraph=True, induced=False,
                                      id_order=False)]


def vf3_all(nxp, nxh):
    return vf3py.main_vf3_caller(nxp, nxh, induced=False, return_integers=True)


def agree(device, result, placed, autos, raw):
    ours = set()
    for p in result.placements:
        image = tuple(p.physical[q] for q in placed)
        for s in autos:
            ours.add(tuple(image[s[i]] for i in range(len(image))))
    theirs = {tuple(device.qubits[c] for _, c in sorted((p, c) for c, p in m.items()))
              for m in raw}
    return ours == theirs and len(raw) == len(result.placements) * len(autos)


CASES = [   # (family, label, chip, patch, circuits)
    ("flagged", "flagged unit on 579-qubit heavy-hex", lambda: chip(heavy_hex(10, 10), "hh579"),
     lambda: load_patch(FIXED_PATCH), ["round"]),
    ("flagged", "flagged unit on 2159-qubit heavy-hex", lambda: chip(heavy_hex(20, 20), "hh2159"),
     lambda: load_patch(FIXED_PATCH), ["round"]),
    ("flagged", "flagged unit on 8319-qubit heavy-hex", lambda: chip(heavy_hex(40, 40), "hh8319"),
     lambda: load_patch(FIXED_PATCH), ["round"]),
    ("piece87", "87-qubit piece on 579 qubits", lambda: chip(heavy_hex(10, 10), "hh579"),
     lambda: piece(3, 4), None),
    ("piece87", "87-qubit piece on 2159 qubits", lambda: chip(heavy_hex(20, 20), "hh2159"),
     lambda: piece(3, 4), None),
    ("piece87", "87-qubit piece on 8319 qubits", lambda: chip(heavy_hex(40, 40), "hh8319"),
     lambda: piece(3, 4), None),
    ("surface", "surface d=5 on 20x20 grid", lambda: chip(square_grid(20, 20), "sq400"),
     lambda: build_patch("surface", distance=5, rounds=1), None),
    ("surface", "surface d=5 on 40x40 grid", lambda: chip(square_grid(40, 40), "sq1600"),
     lambda: build_patch("surface", distance=5, rounds=1), None),
    ("chipfit", "heavy-hex-chipfit d=5 on 2159 qubits", lambda: chip(heavy_hex(20, 20), "hh2159"),
     lambda: build_patch("heavy-hex-chipfit", distance=5, rounds=1), None),
]


def enumerate_section(runs):
    print(f"== enumerate (medians of {runs} interleaved runs; load {load():.2f}) ==")
    print("case | qubits | maps | ours s | ours/VF2++ | ours/VF3 | with rank: /VF2++, /VF3 "
          "| sets agree | peak MiB")
    rows = []
    for family, label, make_chip, make_patch, circuits in CASES:
        device, patch = make_chip(), make_patch()
        names = circuits or list(patch.circuits)
        pattern, placed, host, nxh, nxp = graphs(device, patch, names)
        result = find_placements(device, patch, circuits=names, limit=None)   # warm up
        ours_rank = lambda: rank_placements(  # noqa: E731
            device, patch, find_placements(device, patch, circuits=names,
                                           limit=None).placements)
        functions = [lambda: find_placements(device, patch, circuits=names, limit=None),
                     lambda: vf2_all(host, pattern), ours_rank]
        if vf3py is not None:
            functions.append(lambda: vf3_all(nxp, nxh))
        times = median_times(functions, runs)
        ours, vf2, ranked = times[:3]
        vf3 = times[3] if vf3py is not None else float("nan")
        raw = vf2_all(host, pattern)
        same = agree(device, result, placed, automorphisms(pattern), raw)
        if vf3py is not None:
            same = same and len(vf3_all(nxp, nxh)) == len(raw)
        tracemalloc.start()
        find_placements(device, patch, circuits=names, limit=None)
        peak = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
        rows.append((family, device.num_qubits, len(raw), ours, vf2, vf3))
        print(f"{label} | {device.num_qubits} | {len(raw)} | {ours:.4f} | {ours / vf2:.3f} | "
              f"{ours / vf3:.3f} | {ranked / vf2:.3f}, {ranked / vf3:.3f} | {same} | "
              f"{peak:.0f}", flush=True)
    print(f"(load after: {load():.2f})")
    print("== growth in chip size (least-squares slope of log time on log qubits) ==")
    print("family | sizes | ours | VF2++ | VF3 | maps (output size) | ours per map")
    for family in dict.fromkeys(r[0] for r in rows):
        got = [r for r in rows if r[0] == family]
        if len(got) < 2:
            continue
        x = np.log([r[1] for r in got])

        def slope(values):
            return float(np.polyfit(x, np.log(values), 1)[0])

        per_map = [r[3] / r[2] for r in got]
        print(f"{family} | {', '.join(str(r[1]) for r in got)} | {slope([r[3] for r in got]):.2f} "
              f"| {slope([r[4] for r in got]):.2f} | {slope([r[5] for r in got]):.2f} | "
              f"{slope([r[2] for r in got]):.2f} | {slope(per_map):.2f}")


FIRST = CASES + [
    ("grid", "heavy-hex-chipfit d=5 on 20x20 grid", lambda: chip(square_grid(20, 20), "sq400"),
     lambda: build_patch("heavy-hex-chipfit", distance=5, rounds=1), None),
]


def first_section(runs):
    print(f"== first placement (medians of {runs} interleaved runs; load {load():.2f}) ==")
    print("case | ours limit=1 s | VF2++ first s | VF3 first s | ours/VF2++ | ours/VF3")
    for _, label, make_chip, make_patch, circuits in FIRST:
        device, patch = make_chip(), make_patch()
        names = circuits or list(patch.circuits)
        pattern, placed, host, nxh, nxp = graphs(device, patch, names)
        functions = [
            lambda: find_placements(device, patch, circuits=names, limit=1),
            lambda: next(iter(rx.vf2_mapping(host, pattern, subgraph=True, induced=False,
                                             id_order=False))),
        ]
        if vf3py is not None:
            functions.append(lambda: vf3py.main_vf3_caller(
                nxp, nxh, induced=False, return_integers=True, all_solutions=False))
        functions[0]()
        times = median_times(functions, max(runs, 9))
        vf3 = times[2] if vf3py is not None else float("nan")
        print(f"{label} | {times[0]:.4f} | {times[1]:.4f} | {vf3:.4f} | "
              f"{times[0] / times[1]:.2f} | {times[0] / vf3:.2f}", flush=True)
    print(f"(load after: {load():.2f})")


def _grow_parts(prep, parts):
    return sum(len(b) for part in parts for b in grow(prep, part=part, probe=0))


def _pool_time(prep, workers):
    """Wall seconds for `workers` forked processes to search the two halves of the
    anchors (one process: both halves in turn). A bare measure of how much parallel
    work the machine gives right now, with our own search as the work."""
    import multiprocessing
    context = multiprocessing.get_context("fork")
    halves = [[(0, 2)], [(1, 2)]] if workers == 2 else [[(0, 2), (1, 2)]]
    with context.Pool(workers) as pool:
        t = time.perf_counter()
        pool.starmap(_grow_parts, [(prep, h) for h in halves])
        return time.perf_counter() - t


def processes_section(runs):
    print(f"== worker processes (medians of {runs} interleaved runs; load {load():.2f}, "
          f"cores {os.cpu_count()}) ==")
    device, patch = chip(heavy_hex(40, 40), "hh8319"), piece(3, 4)
    pattern, placed = interaction_pattern(patch, list(patch.circuits))
    graph = device.live_graph()
    prep = prepare(Host.from_edges(graph.num_nodes(), graph.edge_list()), pattern.num_nodes(),
                   list(pattern.edge_list()), symmetries=automorphisms(pattern))
    one = lambda: find_placements(device, patch, limit=None)  # noqa: E731
    two = lambda: find_placements(device, patch, limit=None, processes=2)  # noqa: E731
    one(), two()
    global CLOCK
    saved, CLOCK = CLOCK, time.perf_counter       # parallel work: wall time
    try:
        t1, t2, p1, p2 = median_times([one, two, lambda: _pool_time(prep, 1),
                                       lambda: _pool_time(prep, 2)], runs)
        grow_s, start_s = median_times([lambda: _grow_parts(prep, [(0, 1)]), _worker_start],
                                       runs)
    finally:
        CLOCK = saved
    serial = find_placements(device, patch, limit=None)
    split = find_placements(device, patch, limit=None, processes=2)
    print(f"87-qubit piece on 8319 qubits: 1 process {t1:.3f} s, 2 processes {t2:.3f} s, "
          f"speed-up {t1 / t2:.2f}; same placements: "
          f"{set(serial.placements) == set(split.placements)}")
    print(f"the machine right now: two halves of the same search in 1 forked process "
          f"{p1:.3f} s, in 2 {p2:.3f} s: it gives {p1 / p2:.2f}x for 2 processes (2.00 "
          f"on an idle 2-core machine); our speed-up is {t1 / t2 / (p1 / p2):.2f} of that")
    # Where the time goes: the search proper (the part workers share) against the rest,
    # which one process does whatever --processes says (reading the chip into the matcher's
    # form, the pattern and its symmetries, turning maps into placement rows), and the
    # fixed cost of starting one worker process. Amdahl's law bounds the speed-up.
    rest = max(t1 - grow_s, 0.0)
    bound = t1 / (rest + grow_s / 2 + start_s)
    print(f"where one process's {t1:.3f} s go: the search proper {grow_s:.3f} s (split "
          f"between workers), the rest {rest:.3f} s (done once); starting a worker process "
          f"{start_s:.3f} s. Amdahl's bound for 2 processes on an idle machine: "
          f"{t1:.3f} / ({rest:.3f} + {grow_s:.3f} / 2 + {start_s:.3f}) = {bound:.2f}x; "
          f"ours {t1 / t2:.2f}x")
    print(f"(load after: {load():.2f})")


def _noop():
    return None


def _worker_start():
    """Start a one-process pool the way `place.enumeration` does and run nothing in it."""
    from concurrent.futures import ProcessPoolExecutor
    with ProcessPoolExecutor(1) as pool:
        pool.submit(_noop).result()


def _fidelity_chip(lattice, name):
    """An invented chip with every figure the fidelity product uses (seeded)."""
    rng = np.random.default_rng(len(lattice.qubits) + 7)
    return Device.from_lattice(
        lattice, name=name,
        coupler_calibration={c: CouplerCalibration(float(rng.uniform(0.004, 0.03)), 300.0)
                             for c in lattice.couplers},
        qubit_calibration={q: QubitCalibration(
            float(rng.uniform(0.005, 0.04)), float(rng.uniform(1e-4, 1e-3)),
            t1_us=float(rng.uniform(60, 150)), t2_us=float(rng.uniform(40, 110)),
            single_qubit_duration_ns=40.0, measurement_duration_ns=800.0)
            for q in lattice.qubits})


BEST = [   # (label, chip, patch, budget)
    ("87-qubit piece on 2159 qubits", lambda: _fidelity_chip(heavy_hex(20, 20), "hh2159"),
     lambda: piece(3, 4), None),
    ("surface d=3 on 20x20 grid", lambda: _fidelity_chip(square_grid(20, 20), "sq400"),
     lambda: build_patch("surface", distance=3, rounds=2), None),
    ("12-ring on 20x20 grid", lambda: _fidelity_chip(square_grid(20, 20), "sq400"),
     lambda: patch_from_edges([(i, (i + 1) % 12) for i in range(12)]), None),
    ("heavy-hex-chipfit d=3 on 10x10 grid", lambda: _fidelity_chip(square_grid(10, 10), "sq100"),
     lambda: build_patch("heavy-hex-chipfit", distance=3, rounds=1), None),
    ("heavy-hex-chipfit d=5 on 20x20 grid", lambda: _fidelity_chip(square_grid(20, 20), "sq400"),
     lambda: build_patch("heavy-hex-chipfit", distance=5, rounds=1), 10**7),
]


def _orbit_best(device, patch, found):
    """Each orbit's best log S (every map of the orbit scored: the cost need not be the
    same on all of them), best first."""
    n = patch.num_qubits
    members = [Placement(tuple(p.physical[perm[i]] for i in range(n)))
               for p in found.placements for perm in found.symmetries]
    scores = rank_placements(device, patch, members)
    score = dict(zip(scores.placements, scores.log_success.tolist(), strict=True))
    order = len(found.symmetries)
    return sorted((max(score[m] for m in members[i * order:(i + 1) * order])
                   for i in range(len(found.placements))), reverse=True)


def best_section(runs):
    print(f"== best first: the 10 best placements by the fidelity product (load {load():.2f}) ==")
    print("case | seconds | work | proven | gap (log S) | best log S | enumerate + rank s "
          "| same top 10 as every orbit's best map ranked")
    for label, make_chip, make_patch, budget in BEST:
        device, patch = make_chip(), make_patch()
        t = time.perf_counter()
        best = find_best_placements(device, patch, top=10, budget=budget)
        seconds = time.perf_counter() - t
        versus, same = "-", "-"
        if budget is None:                   # small enough to list: rank them all
            t = time.perf_counter()
            every = find_placements(device, patch, limit=None)
            rank_placements(device, patch, every.placements)
            versus = f"{time.perf_counter() - t:.2f}"
            if len(every.placements) * every.symmetry_order <= 200_000:
                same = bool(np.allclose(best.log_success, _orbit_best(device, patch,
                                                                      every)[:10]))
        print(f"{label} | {seconds:.2f} | {best.work} | {best.proven} | {best.gap:.4f} | "
              f"{best.log_success[0]:.4f} | {versus} | {same}", flush=True)
    print(f"(load after: {load():.2f})")


SECTIONS = {"enumerate": enumerate_section, "first": first_section,
            "processes": processes_section, "best": best_section}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--only", default=",".join(SECTIONS))
    parser.add_argument("--clock", choices=("cpu", "wall"), default="cpu")
    args = parser.parse_args()
    global CLOCK
    CLOCK = time.process_time if args.clock == "cpu" else time.perf_counter
    print(f"clock: {args.clock} time; load average {load():.2f} on {os.cpu_count()} cores")
    if vf3py is None:
        print("vf3py is not installed (pip install '.[bench]'): VF3 columns are nan")
    for name in args.only.split(","):
        SECTIONS[name](args.runs)


if __name__ == "__main__":
    main()
