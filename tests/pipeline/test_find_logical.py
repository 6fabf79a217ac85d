"""What `find` ranks by for error-correcting codes: the decoded estimate, the sampled decoded
logical error with --decode (not 'kept'), zeros without noise, and what to declare."""
import shutil
from dataclasses import replace

import numpy as np
import pytest

from embedcheck import Device, InputError, load_device, load_patch, square_grid
from embedcheck.io.patchfile import patch_from_family
from embedcheck.model.device import CouplerCalibration, QubitCalibration
from embedcheck.pipeline.find import LogicalNote, run_find
from embedcheck.report.data import find_dict
from embedcheck.report.html import render_html
from embedcheck.score.cost import sensitivity
from embedcheck.score.logical import fast_scores
from helpers import DEMO_CHIP, FIXED_PATCH, lognormal_calibration


def test_decode_ranks_by_the_sampled_decoded_error_not_by_kept():
    patch = patch_from_family("surface", distance=3, rounds=3)
    device = lognormal_calibration(Device.from_lattice(square_grid(7, 7), name="grid"), seed=1)
    result = run_find([device], patch, top=6, monte_carlo=4000, decode=True)
    logical = result.logical
    assert logical is not None and logical.figure == "decoded"
    listed = logical.placements[:6]
    rates = [s.rate for s in logical.decoded]
    assert len(rates) == 6 and rates == sorted(rates)
    # On these placements 'kept' orders differently, so sorting by it would fail above.
    kept = [f.kept for f in fast_scores(device, patch, listed)]
    assert kept != sorted(kept, reverse=True)
    # The listed ones were chosen by the estimate: the six lowest of all 18 placements.
    assert logical.estimate is not None and len(logical.estimate) == 18
    assert max(logical.estimate[:6]) <= min(logical.estimate[6:])
    # The report leads with the decoded first: its audit, its sensitivities, its picture
    # and page follow it, not the fidelity product's first (a new user's trial found the
    # audit and the sensitivities still on the fidelity product's first).
    assert result.best == listed[0] != result.vetting.ranking.placements[0]
    assert result.best_audit is not None and result.best_audit.placement == listed[0]
    assert result.sensitivity and result.sensitivity != tuple(
        sensitivity(device, patch, result.vetting.ranking.placements[0], top=5))
    payload = find_dict(result)
    assert payload["best_audit"]["placement"] == listed[0].as_dict(patch)
    page = render_html(payload, pictures={})
    assert "Ranking by decoded (what this report leads with)" in page


def test_noiseless_calibration_gives_estimate_zero_and_sampled_zero():
    lat = square_grid(5, 5)
    quiet = Device.from_lattice(lat, name="quiet",
                                coupler_calibration={c: CouplerCalibration(0.0, 300.0)
                                                     for c in lat.couplers},
                                qubit_calibration={q: QubitCalibration(readout_error=0.0)
                                                   for q in lat.qubits})
    patch = patch_from_family("surface", distance=3, rounds=2)
    estimated = run_find([quiet], patch).logical
    assert estimated is not None and estimated.figure == "estimate"
    assert estimated.estimate is not None and not np.any(estimated.estimate)
    sampled = run_find([quiet], patch, monte_carlo=2000, decode=True).logical
    assert sampled is not None and sampled.figure == "decoded"
    assert sampled.decoded and all(s.errors == 0 and s.shots == 2000 for s in sampled.decoded)


def test_a_patch_without_detectors_is_told_what_to_declare(tmp_path):
    (tmp_path / "p.yaml").write_text(FIXED_PATCH.read_text().split("# Detectors")[0])
    shutil.copy(FIXED_PATCH.parent / "flagged_weight4_round.qasm", tmp_path)
    patch = load_patch(tmp_path / "p.yaml")
    device = load_device(DEMO_CHIP)
    quiet = run_find([device], patch, limit=20)
    assert quiet.logical is None and quiet.logical_note is LogicalNote.NO_DETECTORS
    for options in ({"monte_carlo": 100, "decode": True}, {"figure": "estimate"}):
        with pytest.raises(InputError) as err:
            run_find([device], patch, limit=20, **options)
        message = str(err.value)
        assert "\n" not in message and "add 'detectors:'" in message and "'observable:'" in message


def test_auto_keeps_the_fidelity_product_when_the_model_cannot_be_matched(monkeypatch):
    # A distance-3 code whose model stim cannot make graph-like: said, not crashed.
    import embedcheck.pipeline.find as find

    def refuse(circuit):
        raise InputError("this patch's error model cannot be matched")
    monkeypatch.setattr(find, "decoder_model", refuse)
    patch = patch_from_family("surface", distance=3, rounds=2)
    device = replace(lognormal_calibration(Device.from_lattice(square_grid(5, 5), name="g"), 2))
    result = run_find([device], patch)
    assert result.logical is None and result.logical_note is LogicalNote.NOT_MATCHABLE
    # Shots asked for are still sampled (undecoded: how often no detector fires), not
    # dropped while the note said the listed placements were sampled (it did).
    sampled = run_find([device], patch, monte_carlo=400, top=3)
    assert sampled.logical is not None and sampled.logical.figure == "kept"
    assert sampled.logical_note is LogicalNote.NOT_MATCHABLE
    listed = min(3, len(sampled.logical.placements))
    assert listed and [mc.shots if mc else 0 for mc in sampled.logical.monte_carlo[:listed]] \
        == [400] * listed
