"""Budgets and stored placements: memory per placement and how well --budget-s bounds a run.

    python bench/budget.py [--budget 5]

memory: 10^5 placements of a 9-qubit patch (the repetition code, distance 5) found on a
45 x 45 square grid, measured with tracemalloc as the search keeps them (`PlacementRows`),
against a bare numpy array of the same integers (int64, numpy's default for Python ints)
and against a tuple of `Placement` objects made from that array (how they were kept
before, without the set of seen keys the search also kept then).
peak: a whole `run_find` keeping 10^6 placements (ranked by the cost model), its traced
peak per placement.
budget: `run_find` with a huge limit and `budget_s` on the same grid, by the cost model
and by a logical figure: wall time of the whole call as a ratio of the budget (search,
ranking, audit, logical figures; the process start-up and the chip file are not in it).
Machines here are noisy: read the ratios, not the seconds.
"""
import argparse
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from embedcheck import Device, find_placements, run_find  # noqa: E402
from embedcheck.io.patchfile import patch_from_family  # noqa: E402
from embedcheck.model.lattices import square_grid  # noqa: E402
from embedcheck.model.placement import Placement  # noqa: E402

N = 100_000


def traced(make):
    """(bytes still held by what `make` returns, the object)."""
    tracemalloc.start()
    before = tracemalloc.take_snapshot()
    out = make()
    after = tracemalloc.take_snapshot()
    tracemalloc.stop()
    held = sum(s.size_diff for s in after.compare_to(before, "filename"))
    return held, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--budget", type=float, default=5.0)
    args = parser.parse_args()
    device = Device.from_lattice(square_grid(45, 45), name="grid-45")
    patch = patch_from_family("repetition", distance=5, rounds=1)
    result = find_placements(device, patch, limit=N)
    rows = [p.physical for p in result.placements]
    assert len(rows) == N
    stored, kept = traced(lambda: find_placements(device, patch, limit=N).placements)
    bare, array = traced(lambda: np.array(rows))
    objects, tupled = traced(lambda: tuple(Placement(tuple(r)) for r in array.tolist()))
    assert np.array_equal(kept.array, array) and tupled[-1] == kept[-1]
    per = [x / N for x in (stored, bare, objects)]
    print(f"memory ({N} placements of {patch.num_qubits} qubits): stored {per[0]:.1f} B each, "
          f"bare int64 array {per[1]:.1f} B, Placement objects {per[2]:.1f} B; "
          f"stored / bare array = {per[0] / per[1]:.2f}, objects / stored = "
          f"{per[2] / per[0]:.1f}")
    million = 10**6                 # a whole find keeping a million: the peak per placement
    tracemalloc.start()
    found = run_find([device], patch, limit=million, budget_s=None, figure="fidelity_product")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    kept = len(found.vetting.ranking.placements)
    print(f"whole find keeping {kept} placements: traced peak {peak / 2**20:.0f} MiB, "
          f"{peak / kept:.0f} B per placement = {peak / kept / per[1]:.1f} x a bare int64 row "
          "(rows, five score terms, off-coupler counts, sorting)")
    del found
    for figure in ("fidelity_product", "auto", "undetected"):
        start = time.perf_counter()
        found = run_find([device], patch, limit=10**12, budget_s=args.budget, figure=figure)
        wall = time.perf_counter() - start
        v = found.vetting
        cut = found.logical.unscored if found.logical is not None else 0
        print(f"budget {args.budget:g} s, figure {figure}: whole run {wall:.2f} s = "
              f"{wall / args.budget:.2f} x budget; search {v.search.stop_reason.value} after "
              f"{len(v.ranking.placements)} placement(s) ({v.search.elapsed_s:.2f} s)"
              + (f"; logical figure on {len(found.logical.placements)}, {cut} left out"
                 if found.logical is not None else ""))


if __name__ == "__main__":
    main()
