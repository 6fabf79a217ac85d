"""The vectorised cost model against a plain per-gate product, and what it ranks first."""
import math
import random

import numpy as np
import pytest

from embedcheck import Placement, load_device, load_patch, rank_placements, vet_patch
from embedcheck.score.idle import idle_channel
from embedcheck.score.schedule import schedule_circuit
from helpers import DEMO_CHIP, DEMO_PATCH, FIXED_PATCH


def _idle_by_hand(device, patch, circuit, placement, again):
    """Idle ns per patch qubit from a plain per-placement as-soon-as-possible schedule,
    written here independently of the package's one (vectorised) schedule: the whole
    experiment on one clock, each operation starting when its qubits are free; a qubit
    idles between two of its operations unless the first was a Z-basis reset or the
    second is a reset, and the wait belongs to the run holding the second."""
    where = placement.as_dict(patch)
    cals = [device.coupler_calibration.get(c) for c in device.live_couplers]
    known = [c.duration_ns for c in cals if c is not None and c.duration_ns]
    median = sorted(known)[len(known) // 2] if len(known) % 2 else \
        sum(sorted(known)[len(known) // 2 - 1:len(known) // 2 + 1]) / 2
    last_end, decays = {}, {}
    clock = 0.0
    per_run = []                                   # (circuit, repetition, idle dict)
    for name, times in patch.experiment():
        for repetition in range(times):
            free = dict.fromkeys(patch.qubits, clock)
            idle = dict.fromkeys(patch.qubits, 0.0)
            for op in patch.circuits[name].operations:
                qs = op.qubits
                if op.kind == "barrier":
                    t = max(free[q] for q in qs)
                    for q in qs:
                        free[q] = t
                    continue
                phys = [where[q] for q in qs]
                if op.kind == "2q":
                    c = device.coupler_calibration.get(tuple(sorted(phys)))
                    length = (c.duration_ns or 0.0) if device.is_coupled(*phys) and c else median
                else:
                    cal = device.qubit_calibration[phys[0]]
                    length = (cal.single_qubit_duration_ns if op.kind == "1q"
                              else cal.measurement_duration_ns) or 0.0
                start = max(free[q] for q in qs)
                for q in qs:
                    if q in last_end and decays[q] and op.kind != "reset":
                        idle[q] += start - last_end[q]
                    free[q] = last_end[q] = start + length
                    decays[q] = not (op.kind == "reset" and op.written not in ("rx", "ry"))
            clock = max(free.values())
            per_run.append((name, repetition, idle))
    runs = [idle for name, repetition, idle in per_run
            if name == circuit and (repetition > 0) == again]
    assert all(r == pytest.approx(runs[0]) for r in runs)     # every later run alike
    return runs[0]


def _product_by_hand(device, patch, placement):
    """prod (1 - e) over every operation the experiment runs, one gate at a time, times
    the idle factor from a per-placement schedule written here (not the package's)."""
    where = placement.as_dict(patch)
    s = 1.0
    for name, again, times in patch.runs():
        idle = _idle_by_hand(device, patch, name, placement, again)
        assert idle == pytest.approx(dict(schedule_circuit(device, patch, name, placement,
                                                           again=again).idle_ns))
        for _ in range(times):
            for q, t in idle.items():
                cal = device.qubit_calibration[where[q]]
                s *= 1 - float(idle_channel(t, cal.t1_us, cal.t2_us).total)
            for op in patch.circuits[name].operations:
                if op.kind == "2q":
                    a, b = (where[q] for q in op.qubits)
                    if device.is_coupled(a, b):
                        s *= 1 - device.coupler_calibration[(min(a, b), max(a, b))].two_qubit_error
                elif op.kind == "measure":
                    s *= 1 - device.qubit_calibration[where[op.qubits[0]]].readout_error
                elif op.kind == "1q":
                    s *= 1 - device.qubit_calibration[where[op.qubits[0]]].single_qubit_error
                elif op.kind == "reset":
                    s *= 1 - (device.qubit_calibration[where[op.qubits[0]]].reset_error or 0)
    return s


@pytest.mark.parametrize("patch_file", [DEMO_PATCH, FIXED_PATCH])
def test_vectorised_score_equals_gate_by_gate_product(patch_file):
    device, patch = load_device(DEMO_CHIP), load_patch(patch_file)
    placements = list(vet_patch(device, patch).ranking.placements)
    ranking = rank_placements(device, patch, placements)
    for placement, success in zip(ranking.placements, ranking.success, strict=False):
        assert success == pytest.approx(_product_by_hand(device, patch, placement), rel=1e-12)
    total = sum(ranking.terms.values())
    assert np.allclose(total, ranking.log_success)
    assert (np.diff(ranking.log_success) <= 0).all()          # best first


def test_unscored_gates_are_the_off_coupler_ones():
    device, patch = load_device(DEMO_CHIP), load_patch(DEMO_PATCH)
    vetting = vet_patch(device, patch)
    # Prep's three data-data CNOTs are off-coupler on every round placement.
    assert (vetting.ranking.unscored_gates == 3).all()


def test_worse_region_ranks_below_the_good_one():
    device, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    ranking = vet_patch(device, patch).ranking
    xmax = max(x for x, _ in device.positions.values())

    def in_worse_region(p):
        return any(device.positions[q][0] >= 0.7 * xmax for q in p.physical)

    worse = [i for i, p in enumerate(ranking.placements) if in_worse_region(p)]
    good = [i for i, p in enumerate(ranking.placements) if not in_worse_region(p)]
    assert worse and good
    assert max(ranking.success[worse]) < min(ranking.success[good][:5])


def test_empty_and_uncalibrated():
    device, patch = load_device(DEMO_CHIP), load_patch(DEMO_PATCH)
    empty = rank_placements(device, patch, [])
    assert len(empty.placements) == 0 and empty.log_success.shape == (0,)
    rng = random.Random(1)
    p = Placement(tuple(rng.sample(device.live_qubits, 7)))
    r = rank_placements(device, patch, [p])
    assert math.isfinite(r.log_success[0]) and r.log_success[0] < 0
