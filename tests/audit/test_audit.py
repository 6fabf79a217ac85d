"""Exact audit against qiskit's transpiler, and the vectorised count against the loop."""
import random

import numpy as np
import pytest

from embedcheck import (
    Placement,
    audit_placement,
    load_device,
    load_patch,
    off_coupler_counts,
    vet_patch,
)
from embedcheck.audit.qiskit_views import transpile_on_placement
from helpers import DEMO_CHIP, DEMO_PATCH, FIXED_PATCH


@pytest.fixture(scope="module")
def demo():
    device, patch = load_device(DEMO_CHIP), load_patch(DEMO_PATCH)
    return device, patch, vet_patch(device, patch)


def _placements_to_check(device, patch, vetting, seed=3):
    rng = random.Random(seed)
    chosen = list(vetting.ranking.placements[:3])
    live = list(device.live_qubits)
    for _ in range(3):                         # random placements, mostly off-coupler
        chosen.append(Placement(tuple(rng.sample(live, patch.num_qubits))))
    return chosen


@pytest.mark.parametrize("patch_file", [DEMO_PATCH, FIXED_PATCH])
def test_verdict_agrees_with_qiskit_transpiler(patch_file):
    # Reference: qiskit's transpiler at optimization_level=0 (no cancellation or
    # resynthesis) with the placement as initial layout adds two-qubit gates exactly
    # when some gate is off-coupler; on swap-free circuits the counts agree.
    device, patch = load_device(DEMO_CHIP), load_patch(patch_file)
    vetting = vet_patch(device, patch)
    for placement in _placements_to_check(device, patch, vetting):
        report = audit_placement(device, patch, placement)
        for c in report.circuits:
            after = transpile_on_placement(device, patch, c.circuit, placement)["two_qubit_gates"]
            if c.swap_free:
                assert after == c.two_qubit_gates, (c.circuit, placement)
            else:
                assert after > c.two_qubit_gates, (c.circuit, placement)


def test_demo_lesson_rounds_fit_prep_does_not(demo):
    device, patch, vetting = demo
    assert vetting.core == ("round", "readout") and vetting.excluded == ("prep",)
    best = vetting.best_audit
    by_name = {c.circuit: c for c in best.circuits}
    assert by_name["round"].swap_free and by_name["readout"].swap_free
    prep = by_name["prep"]
    assert len(prep.off_coupler) == 3
    # Each offending gate points at its own line of the patch file, as written there.
    lines = DEMO_PATCH.read_text().splitlines()
    for gate in prep.off_coupler:
        assert gate.file == str(DEMO_PATCH)
        assert lines[gate.line - 1].strip() == gate.text
        assert gate.text.startswith("cx d[")
        assert not device.is_coupled(*gate.physical_qubits)


def test_vectorised_counts_equal_the_per_placement_audit(demo):
    device, patch, vetting = demo
    rng = random.Random(5)
    placements = list(vetting.ranking.placements)
    placements += [Placement(tuple(rng.sample(device.live_qubits, 7))) for _ in range(30)]
    names = list(patch.circuits)
    fast = off_coupler_counts(device, patch, placements, names)
    slow = np.array([[len(c.off_coupler) for c in audit_placement(device, patch, p).circuits]
                     for p in placements])
    assert (fast == slow).all()


def test_dead_coupler_is_reported_as_dead(demo):
    device, patch, _ = demo
    (a, b), = device.dead_couplers
    where = dict(zip(patch.qubits, range(100, 107), strict=False))
    where["d0"], where["f0"] = a, b                 # put a round gate on the dead coupler
    rest = iter(q for q in device.live_qubits if q not in (a, b))
    physical = tuple(where[q] if where[q] < 100 else next(rest) for q in patch.qubits)
    report = audit_placement(device, patch, Placement(physical))
    reasons = {g.reason for c in report.circuits for g in c.off_coupler
               if set(g.physical_qubits) == {a, b}}
    assert reasons == {"dead coupler"}


def test_router_estimate_is_labelled(demo):
    device, patch, vetting = demo
    report = audit_placement(device, patch, vetting.ranking.placements[0], router_estimate=True)
    prep = next(c for c in report.circuits if c.circuit == "prep")
    assert prep.router_estimate["kind"] == "estimate"
    assert prep.router_estimate["added_two_qubit_gates"] > 0
    assert prep.router_estimate["seed"] == 11
