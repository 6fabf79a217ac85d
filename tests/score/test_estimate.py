"""The decoded-logical estimate against pymatching (its graph, its decisions, its failures on
every single and pair of faults) and stim's generated surface code."""
import numpy as np
import pymatching
import pytest
import stim

from embedcheck.score.estimate import (
    decoded_logical_estimate,
    decoder_edges,
    match_few_events,
)


def _surface(d, p, rounds=3):
    return stim.Circuit.generated("surface_code:rotated_memory_z", distance=d, rounds=rounds,
                                  after_clifford_depolarization=p,
                                  before_round_data_depolarization=p,
                                  before_measure_flip_probability=p, after_reset_flip_probability=p)


def _mechanisms(dem):
    """(probability, detectors, flips the observable) of every error line of `dem`."""
    out = []
    for inst in dem.flattened():
        if inst.type == "error":
            dets, obs = set(), 0
            for t in inst.targets_copy():
                if t.is_relative_detector_id():
                    dets ^= {t.val}
                elif t.is_logical_observable_id():
                    obs ^= 1
            out.append((inst.args_copy()[0], frozenset(dets), obs))
    return out


def test_noiseless_model_gives_zero():
    e = decoded_logical_estimate(_surface(3, 0.0).detector_error_model(decompose_errors=True))
    assert e.value == 0.0 and e.mechanisms == 0 and e.complete


def test_deterministic_and_the_cache_changes_nothing():
    dem = _surface(3, 0.004).detector_error_model(decompose_errors=True)
    a = decoded_logical_estimate(dem, cache=False)
    b = decoded_logical_estimate(dem)
    c = decoded_logical_estimate(dem)
    assert a.value == b.value == c.value > 0 and c.cached and not a.cached


def test_refuses_undecomposed_hyperedges_plainly():
    dem = stim.DetectorErrorModel("error(0.01) D0 D1 D2\nerror(0.01) D0 L0")
    with pytest.raises(ValueError, match="decompose_errors=True"):
        decoded_logical_estimate(dem)


def test_a_cut_enumeration_says_so():
    dem = _surface(3, 0.001).detector_error_model(decompose_errors=True)
    assert not decoded_logical_estimate(dem, max_sets=50, cache=False).complete
    assert decoded_logical_estimate(dem).complete


def test_parallel_components_merge_as_pymatching_does():
    # Same detectors, different observables: pymatching keeps the first one's observables
    # and merges the probabilities as independent (checked here, not taken from its docs).
    dem = stim.DetectorErrorModel("error(0.1) D0 D1\nerror(0.2) D0 D1 L0\nerror(0.05) D1 L0\n"
                                  "error(0.3) D1\nerror(0.1) D0")
    theirs = {(u, 2 if v is None else v): a
              for u, v, a in pymatching.Matching.from_detector_error_model(dem).edges()}
    ours = decoder_edges(dem)
    assert set(ours) == set(theirs)
    for key, (p, obs) in ours.items():
        assert p == pytest.approx(theirs[key]["error_probability"])
        assert obs == sum(1 << f for f in theirs[key]["fault_ids"])


def test_exact_matching_agrees_with_pymatching_on_random_weights():
    # stim's surface code with seeded random, non-uniform probabilities; every single
    # mechanism's syndrome and 3000 random pairs, decoded both ways.
    rng = np.random.default_rng(5)
    text = str(_surface(3, 0.003).detector_error_model(decompose_errors=True))
    dem = stim.DetectorErrorModel("\n".join(
        f"error({rng.uniform(1e-4, 0.03):.6f}){ln[ln.index(')') + 1:]}"
        if ln.startswith("error(") else ln for ln in text.splitlines()))
    theirs = {(u, dem.num_detectors if v is None else v): a
              for u, v, a in pymatching.Matching.from_detector_error_model(dem).edges()}
    assert {k: pytest.approx(v[0]) for k, v in decoder_edges(dem).items()} == \
        {k: a["error_probability"] for k, a in theirs.items()}
    mechs = _mechanisms(dem)
    pairs = rng.choice(len(mechs), size=(3000, 2))
    syndromes = [mechs[i][1] for i in range(len(mechs))] + \
        [mechs[i][1] ^ mechs[j][1] for i, j in pairs if i != j]
    matching = pymatching.Matching.from_detector_error_model(dem)
    by_size: dict = {}
    for s in syndromes:
        if 0 < len(s) <= 8:
            by_size.setdefault(len(s), []).append(sorted(s))
    checked = 0
    for events in by_size.values():
        dense = np.zeros((len(events), dem.num_detectors), dtype=np.uint8)
        for row, ev in enumerate(events):
            dense[row, ev] = 1
        assert (match_few_events(dem, events) == matching.decode_batch(dense)[:, 0]).all()
        checked += len(events)
    assert checked > 2500


def test_close_to_the_exact_leading_order_at_low_noise():
    # Exact leading order: every single mechanism and every pair, decoded by pymatching
    # on its full syndrome. The estimate counts a pair once per edge set it lies on, so it
    # is meant to be within about 25% above (measured 13% on this circuit).
    dem = _surface(3, 0.0005).detector_error_model(decompose_errors=True)
    matching = pymatching.Matching.from_detector_error_model(dem)
    mechs = _mechanisms(dem)
    m = len(mechs)
    incidence = np.zeros((m, dem.num_detectors), dtype=np.uint8)
    for k, (_, dets, _) in enumerate(mechs):
        incidence[k, list(dets)] = 1
    p = np.array([x[0] for x in mechs])
    flips = np.array([x[2] for x in mechs], dtype=np.uint8)
    i, j = np.triu_indices(m, k=1)
    syn = np.concatenate([incidence, incidence[i] ^ incidence[j]])
    truth = np.concatenate([flips, flips[i] ^ flips[j]])
    prob = np.concatenate([p, p[i] * p[j]])
    exact = prob[matching.decode_batch(syn)[:, 0] != truth].sum()
    e = decoded_logical_estimate(dem)
    assert 0.95 < e.value / exact < 1.25, (e.value, exact)


def test_distance_five_reaches_three_faults_and_scales_as_p_cubed():
    # Leading order ~ p^ceil(d/2): from p to p/2 the value falls by about 2^3 at d = 5.
    a = decoded_logical_estimate(_surface(5, 0.002).detector_error_model(decompose_errors=True))
    b = decoded_logical_estimate(_surface(5, 0.001).detector_error_model(decompose_errors=True))
    assert (a.order, a.distance, a.circuit_distance, a.complete) == (3, 5, 5, True)
    assert b.cached and 6 < a.value / b.value < 9
