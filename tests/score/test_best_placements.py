"""The best placements by the fidelity product, searched best first, against ranking every
placement: every map of every orbit (find_placements' placements expanded by their
symmetries, find_placements itself held to networkx's and rustworkx's matchers in
test_matcher.py / test_search_scaling.py), scored by rank_placements."""
import numpy as np
import pytest

from embedcheck import Device, find_placements, load_patch, rank_placements
from embedcheck.io.patchfile import patch_from_family as build_patch
from embedcheck.model.constraints import build
from embedcheck.model.device import CouplerCalibration, QubitCalibration
from embedcheck.model.lattices import heavy_hex, square_grid
from embedcheck.model.placement import Placement
from embedcheck.score.best_placements import find_best_placements
from helpers import FIXED_PATCH, patch_from_edges


def _chip(lattice, seed, *, vary_durations=False):
    rng = np.random.default_rng(seed)
    return Device.from_lattice(
        lattice, name="invented",
        coupler_calibration={c: CouplerCalibration(
            float(rng.uniform(0.004, 0.03)),
            float(rng.uniform(200, 400)) if vary_durations else 300.0)
            for c in lattice.couplers},
        qubit_calibration={q: QubitCalibration(
            float(rng.uniform(0.005, 0.04)), float(rng.uniform(1e-4, 1e-3)),
            t1_us=float(rng.uniform(60, 150)), t2_us=float(rng.uniform(40, 110)),
            single_qubit_duration_ns=40.0, measurement_duration_ns=800.0)
            for q in lattice.qubits})


def _every_orbit_best(device, patch, constraints=None):
    """Each orbit's best map by the full model, best first: (log S, placement)."""
    found = find_placements(device, patch, limit=None, constraints=constraints)
    assert found.complete
    members = []
    for p in found.placements:
        for perm in found.symmetries:
            members.append(Placement(tuple(p.physical[perm[i]]
                                           for i in range(patch.num_qubits))))
    ranked = rank_placements(device, patch, members)
    score = dict(zip(ranked.placements, ranked.log_success.tolist(), strict=True))
    best = {}
    for p in found.placements:
        orbit = [Placement(tuple(p.physical[perm[i]] for i in range(patch.num_qubits)))
                 for perm in found.symmetries]
        top = max(orbit, key=lambda q: (score[q], [-x for x in q.physical]))
        best[p] = (score[top], top)
    return sorted(best.values(), key=lambda x: -x[0])


CASES = [
    (lambda: heavy_hex(5, 5), lambda: load_patch(FIXED_PATCH)),
    (lambda: square_grid(6, 6), lambda: build_patch("surface", distance=3, rounds=2)),
    (lambda: heavy_hex(4, 4), lambda: patch_from_edges([(i, (i + 1) % 12) for i in range(12)])),
    (lambda: square_grid(5, 6), lambda: patch_from_edges([(0, 1), (1, 2), (2, 3), (1, 4)])),
]


@pytest.mark.parametrize("case", range(len(CASES)))
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_top_ten_equal_the_full_ranking_of_every_orbit(case, seed):
    lattice, make_patch = CASES[case]
    device, patch = _chip(lattice(), seed), make_patch()
    best = find_best_placements(device, patch, top=10)
    assert best.proven and best.idle_exact
    want = _every_orbit_best(device, patch)[:10]
    np.testing.assert_allclose(best.log_success, [s for s, _ in want], rtol=1e-9)
    np.testing.assert_allclose(best.full_log_success, best.log_success, rtol=1e-9)
    if len(want) < 10 or want[-1][0] > (_every_orbit_best(device, patch)[10:11] or
                                        [(-np.inf,)])[0][0] + 1e-12:
        # Same orbits (members of one orbit may tie: then either may stand for it).
        perms = find_placements(device, patch, limit=1).symmetries

        def orbit(p):
            return min(tuple(p.physical[i] for i in perm) for perm in perms)

        assert {orbit(p) for p in best.placements} == {orbit(p) for _, p in want}


def test_durations_that_vary_are_scored_afterwards_with_the_full_model():
    device, patch = _chip(heavy_hex(5, 5), 4, vary_durations=True), load_patch(FIXED_PATCH)
    best = find_best_placements(device, patch, top=5)
    assert best.proven and not best.idle_exact and best.notes
    full = rank_placements(device, patch, list(best.placements))
    score = dict(zip(full.placements, full.log_success.tolist(), strict=True))
    assert best.full_log_success.tolist() == [score[p] for p in best.placements]


def test_a_budget_stops_at_the_same_place_on_identical_runs():
    device, patch = _chip(square_grid(12, 12), 5), build_patch("surface", distance=3, rounds=1)
    runs = [find_best_placements(device, patch, top=5, budget=3000) for _ in range(2)]
    a, b = runs
    assert a.stop_reason == "budget" and not a.proven
    assert a.placements == b.placements and a.gap == b.gap and a.work == b.work
    assert np.array_equal(a.log_success, b.log_success)


def test_constraints_and_native_directions_are_kept():
    lattice = heavy_hex(4, 4)
    ways = {c: c for c in lattice.couplers}                 # every coupler one way
    base = _chip(lattice, 6)
    device = Device.from_lattice(lattice, name="directed", directed=ways,
                                 coupler_calibration=dict(base.coupler_calibration),
                                 qubit_calibration=dict(base.qubit_calibration))
    line = patch_from_edges([(0, 1), (1, 2), (2, 3)])
    rules = build(["data: readout_error <= 0.03"], forbid_direction_fixes=True)
    best = find_best_placements(device, line, top=5, constraints=rules)
    want = _every_orbit_best(device, line, rules)[:5]
    assert best.proven and len(best.placements) == len(want) == 5
    np.testing.assert_allclose(best.log_success, [s for s, _ in want], rtol=1e-9)
    for p in best.placements:
        a = p.physical
        assert all(device.runs_natively(a[i], a[i + 1]) for i in range(3))
        assert all(device.qubit_calibration[q].readout_error <= 0.03 for q in a)


def test_nothing_fits_says_why():
    device = _chip(heavy_hex(2, 2), 7)
    triangle = patch_from_edges([(0, 1), (1, 2), (2, 0)])
    best = find_best_placements(device, triangle)
    assert not best.placements and best.proven and best.reasons
