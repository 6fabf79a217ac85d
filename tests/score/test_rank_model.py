"""The cost model by hand, against qiskit's Kraus channels, over snapshots, and in pictures."""
import math
import random
import struct

import numpy as np
import pytest

from embedcheck import Device, load_device, load_patch, rank_placements, vet_patch
from embedcheck.cli import main
from embedcheck.model.device import CouplerCalibration, QubitCalibration
from embedcheck.model.lattices import heavy_hex, line
from embedcheck.model.patch import Circuit, Operation, Patch
from embedcheck.model.placement import Placement, placement_grid
from embedcheck.place.search import find_placements
from embedcheck.report.picture import draw_placement, draw_score_map
from embedcheck.score.cost import rank_across_snapshots, scores, sensitivity
from embedcheck.score.idle import idle_channel
from embedcheck.score.schedule import schedule_circuit
from helpers import DEMO_CHIP, FIXED_PATCH


def test_worked_example_by_hand():
    # Chip: a line 0-1-2. Patch: a, b; round = h a; cx a b; measure b (run twice);
    # readout = measure a, measure b.
    cal = {0: QubitCalibration(readout_error=0.02, single_qubit_error=0.001, t1_us=100.0,
                               t2_us=50.0, single_qubit_duration_ns=50.0,
                               measurement_duration_ns=1000.0),
           1: QubitCalibration(readout_error=0.05, single_qubit_error=0.002, t1_us=100.0,
                               t2_us=100.0, single_qubit_duration_ns=50.0,
                               measurement_duration_ns=1000.0)}
    dev = Device.from_lattice(line(2), name="pair", qubit_calibration=cal,
                              coupler_calibration={(0, 1): CouplerCalibration(0.01, 300.0)})
    round_ops = (Operation("h", ("a",), "1q"), Operation("cx", ("a", "b"), "2q"),
                 Operation("measure", ("b",), "measure"))
    readout = (Operation("measure", ("a",), "measure"), Operation("measure", ("b",), "measure"))
    patch = Patch("toy", ("a", "b"), {"a": "data", "b": "ancilla"},
                  {"round": Circuit("round", round_ops), "readout": Circuit("readout", readout)},
                  rounds=2)
    (ranked,) = rank_placements(dev, patch, [Placement((0, 1))]).success
    # Per round: h on a (0..50 ns), cx (50..350), measure b (350..1350): the round ends at
    # 1350 ns; a waits 1000 ns from the end of its cx to its next operation (the next
    # round's h, or the readout's measurement), a wait counted in the run it ends in. In
    # the first round b is still in |0> before its cx (no decay); in the second it holds
    # the first round's outcome, so it idles those 50 ns. Readout: both measured at once.
    p_idle_a = (1 - math.exp(-1.0 / 100)) / 4 + (1 - math.exp(-1.0 / 50)) / 2
    p_idle_b = (1 - math.exp(-0.05 / 100)) / 4 + (1 - math.exp(-0.05 / 100)) / 2
    one_round = (1 - 0.001) * (1 - 0.01) * (1 - 0.05) * (1 - p_idle_a)
    by_hand = one_round ** 2 * (1 - p_idle_b) * (1 - 0.02) * (1 - 0.05)
    assert ranked == pytest.approx(by_hand, rel=1e-12)
    s = schedule_circuit(dev, patch, "round", Placement((0, 1)))
    assert s.duration_ns == 1350 and s.idle_ns == {"a": 0.0, "b": 0.0}
    later = schedule_circuit(dev, patch, "round", Placement((0, 1)), again=True)
    assert later.idle_ns == {"a": 1000.0, "b": 50.0}


def _kraus_twirled_error(t_us, t1_us, t2_us):
    """1 - p_I of the Pauli twirl of amplitude damping composed with phase damping,
    built as qiskit quantum_info Kraus channels and read off their Pauli transfer matrix."""
    from qiskit.quantum_info import PTM, Kraus

    gamma = 1 - math.exp(-t_us / t1_us)
    amp = Kraus([np.array([[1, 0], [0, math.sqrt(1 - gamma)]]),
                 np.array([[0, math.sqrt(gamma)], [0, 0]])])
    # Pure dephasing so that coherences decay as exp(-t/T2) in all: 1/T_phi = 1/T2 - 1/(2 T1).
    rate = 1 / t2_us - 1 / (2 * t1_us)
    lam = 1 - math.exp(-2 * t_us * rate)
    phase = Kraus([np.array([[1, 0], [0, math.sqrt(1 - lam)]]),
                   np.array([[0, 0], [0, math.sqrt(lam)]])])
    ptm = np.real(PTM(amp.compose(phase)).data)
    p_identity = (1 + ptm[1, 1] + ptm[2, 2] + ptm[3, 3]) / 4
    return 1 - p_identity


@pytest.mark.parametrize("t_us,t1,t2", [(0.5, 100, 80), (2.0, 60, 30), (10.0, 50, 100),
                                        (1.0, 200, 399), (30.0, 40, 10)])
def test_idle_error_matches_twirled_kraus_channel(t_us, t1, t2):
    # Reference: qiskit.quantum_info Kraus operators of amplitude and phase damping,
    # Pauli-twirled numerically through the Pauli transfer matrix.
    assert float(idle_channel(t_us * 1000, t1, t2).total) == pytest.approx(
        _kraus_twirled_error(t_us, t1, t2), rel=1e-9)


def test_no_decoherence_means_no_idle_error():
    assert float(idle_channel(5000.0, np.inf, np.inf).total) == 0.0
    assert float(idle_channel(0.0, 50.0, 40.0).total) == 0.0


def test_vectorised_scores_equal_a_per_placement_reference_on_random_calibrations():
    rng = random.Random(4)
    lat = heavy_hex(2, 3)
    patch = load_patch(FIXED_PATCH)
    for _trial in range(3):
        qcal = {q: QubitCalibration(readout_error=rng.uniform(0, 0.05),
                                    single_qubit_error=rng.uniform(0, 1e-3),
                                    reset_error=rng.uniform(0, 0.01), t1_us=rng.uniform(30, 200),
                                    t2_us=rng.uniform(10, 60),
                                    single_qubit_duration_ns=rng.uniform(20, 60),
                                    measurement_duration_ns=rng.uniform(300, 1500))
                for q in lat.qubits}
        ccal = {c: CouplerCalibration(rng.uniform(0.001, 0.05), rng.uniform(150, 600))
                for c in lat.couplers}
        dev = Device.from_lattice(lat, name="r", qubit_calibration=qcal, coupler_calibration=ccal)
        placements = list(find_placements(dev, patch, limit=None).placements)
        terms, _ = scores(dev, patch, placement_grid(placements, patch.num_qubits))
        total = sum(terms.values())
        for i, placement in enumerate(placements):
            assert total[i] == pytest.approx(_reference_log(dev, patch, placement), rel=1e-10)


def _reference_log(dev, patch, placement):
    """log S one operation at a time, with the per-placement schedule of schedule.py."""
    where = placement.as_dict(patch)
    log = 0.0
    for name, again, times in patch.runs():
        s = schedule_circuit(dev, patch, name, placement, again=again)
        one = 0.0
        for op in patch.circuits[name].operations:
            q = dev.qubit_calibration[where[op.qubits[0]]]
            if op.kind == "2q":
                a, b = sorted(where[x] for x in op.qubits)
                one += math.log1p(-dev.coupler_calibration[(a, b)].two_qubit_error)
            elif op.kind == "measure":
                one += math.log1p(-q.readout_error)
            elif op.kind == "1q":
                one += math.log1p(-q.single_qubit_error)
            elif op.kind == "reset":
                one += math.log1p(-q.reset_error)
        for name_q, t in s.idle_ns.items():
            c = dev.qubit_calibration[where[name_q]]
            one += math.log1p(-float(idle_channel(t, c.t1_us, c.t2_us).total))
        log += times * one
    return log


def _two_region_snapshots():
    """A chip with two regions; A is a hair better on day 1 and much worse on day 2."""
    lat = line(8)
    patch = Patch("pair", ("a", "b"), {"a": "data", "b": "ancilla"},
                  {"round": Circuit("round", (Operation("cx", ("a", "b"), "2q"),))})
    def day(err_a, err_b, stamp):
        ccal = {c: CouplerCalibration(0.2) for c in lat.couplers}
        ccal[(1, 2)] = CouplerCalibration(err_a)         # region A
        ccal[(5, 6)] = CouplerCalibration(err_b)         # region B
        return Device.from_lattice(lat, name="two-regions", coupler_calibration=ccal,
                                   calibration_timestamp=stamp)
    return [day(0.0099, 0.0100, "2026-11-29T06:00:00Z"),
            day(0.0900, 0.0100, "2026-11-30T06:00:00Z")], patch


def test_robust_ranking_prefers_the_region_that_stays_good():
    snapshots, patch = _two_region_snapshots()
    placements = list(find_placements(snapshots[0], patch, limit=None).placements)
    day1 = rank_placements(snapshots[0], patch, placements)
    assert set(day1.placements[0].physical) == {1, 2}            # A wins day 1 by a hair
    robust = rank_across_snapshots(snapshots, patch, placements, by="worst", top_k=1)
    assert set(robust.placements[0].physical) == {5, 6}          # B is the robust choice
    mean = rank_across_snapshots(snapshots, patch, placements, by="mean")
    assert set(mean.placements[0].physical) == {5, 6}
    # (1,2) and (2,1) are distinct placements (a and b have different roles): B is 3rd on day 1.
    assert robust.winner_ranks[0] == 3 and robust.winner_ranks[1] <= 2 and robust.stability == 0.5


def test_robust_ranking_in_the_report(tmp_path, capsys):
    text = """embedcheck_chip: 1
name: two-regions
family: {kind: line, size: 8}
snapshots:
  - timestamp: '2026-11-30T06:00:00Z'
    defaults: {two_qubit_error: 0.2}
    couplers: [{coupler: [1, 2], two_qubit_error: 0.0099}, {coupler: [5, 6], two_qubit_error: 0.01}]
  - timestamp: '2026-11-29T06:00:00Z'
    defaults: {two_qubit_error: 0.2}
    couplers: [{coupler: [1, 2], two_qubit_error: 0.09}, {coupler: [5, 6], two_qubit_error: 0.01}]
"""
    (tmp_path / "chip.yaml").write_text(text)
    (tmp_path / "pair.qasm").write_text('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[2];\n'
                                        'creg c[1];\ncx q[0], q[1];\nmeasure q[1] -> c[0];\n'
                                        'reset q[1];\ncx q[0], q[1];\n')
    assert main(["find", str(tmp_path / "chip.yaml"), str(tmp_path / "pair.qasm"),
                 "--format", "json"]) == 0
    import json
    data = json.loads(capsys.readouterr().out)
    # The newest snapshot (listed first) has A ahead by a hair; the older one has A bad.
    top = data["snapshots"]["top"][0]["qubits"]
    assert set(top.values()) == {5, 6}
    assert set(data["placements"][0]["qubits"].values()) == {1, 2}   # newest alone: A
    assert data["snapshots"]["newest_winner_rank"] > 1
    assert main(["find", str(tmp_path / "chip.yaml"), str(tmp_path / "pair.qasm")]) == 0
    out = capsys.readouterr().out
    assert "Across 2 calibration snapshots, ranked by the worst" in out
    assert "The robust choice differs from the newest snapshot's best" in out


def test_sensitivity_derivatives_match_finite_differences():
    dev, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    best = vet_patch(dev, patch).ranking.placements[0]
    base = rank_placements(dev, patch, [best]).log_success[0]
    rows = sensitivity(dev, patch, best, top=12)
    assert rows and rows == sorted(rows, key=lambda r: r.log_contribution)
    from dataclasses import replace
    for row in rows:
        h = 1e-7 * max(1.0, row.value)
        if row.item.startswith("coupler"):
            c = tuple(int(x) for x in row.item.split()[1].split("-"))
            cal = dict(dev.coupler_calibration)
            cal[c] = replace(cal[c], **{row.figure: row.value + h})
            moved = replace(dev, coupler_calibration=cal)
        else:
            q = int(row.item.split()[1])
            cal = dict(dev.qubit_calibration)
            cal[q] = replace(cal[q], **{row.figure: row.value + h})
            moved = replace(dev, qubit_calibration=cal)
        slope = (rank_placements(moved, patch, [best]).log_success[0] - base) / h
        assert slope == pytest.approx(row.derivative, rel=1e-3, abs=1e-9), row


def _png_size(path):
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", head[16:24])


def test_pictures_show_the_placement(tmp_path):
    dev, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    vetting = vet_patch(dev, patch)
    out = tmp_path / "best.png"
    fig = draw_placement(dev, out, patch=patch, placement=vetting.ranking.placements[0])
    width, height = _png_size(out)
    assert out.stat().st_size > 10_000 and 500 < width < 3000 and 200 < height < 3000
    ax = fig.axes[0]
    drawn = {c.get_gid(): len(c.get_offsets()) for c in ax.collections if c.get_gid()}
    assert drawn["data"] == 4 and drawn["flag"] == 2 and drawn["ancilla"] == 1
    assert drawn["free"] == dev.num_qubits - 7
    assert {"data", "flag", "ancilla", "free qubit", "dead coupler"} <= {
        t.get_text() for t in ax.get_legend().get_texts()}
    numbers = [t for t in ax.texts if t.get_gid() == "qubit numbers"]
    assert sorted(int(t.get_text()) for t in numbers) == sorted(dev.qubits)
    best = vetting.ranking.placements[0].as_dict(patch)
    at = {int(t.get_text()): t.xy for t in numbers}
    assert at[best["a0"]] == tuple(dev.positions[best["a0"]])    # number sits on its qubit
    svg = tmp_path / "best.svg"
    draw_placement(dev, svg, patch=patch, placement=vetting.ranking.placements[0])
    assert svg.read_text().lstrip().startswith("<?xml")
    heat = tmp_path / "map.png"
    fig = draw_score_map(dev, patch, vetting.ranking.placements, vetting.ranking.success, heat)
    scored = next(c for c in fig.axes[0].collections if c.get_gid() == "scored")
    used = {q for p in vetting.ranking.placements for q in p.physical}
    assert len(scored.get_offsets()) == len(used)
    assert max(scored.get_array()) == pytest.approx(vetting.ranking.success[0])


def test_draw_command_and_find_options(tmp_path, capsys):
    assert main(["draw", str(DEMO_CHIP), str(FIXED_PATCH), "--pick", "2",
                 "-o", str(tmp_path / "p.png")]) == 0
    assert main(["draw", str(DEMO_CHIP), "-o", str(tmp_path / "chip.svg")]) == 0
    assert main(["draw", str(DEMO_CHIP), "-o", str(tmp_path / "chip.jpg")]) == 2
    assert main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--draw", str(tmp_path / "f.png"),
                 "--score-map", str(tmp_path / "m.svg"), "--compare-sdk"]) == 0
    out = capsys.readouterr().out
    assert (tmp_path / "f.png").stat().st_size > 0 and (tmp_path / "m.svg").stat().st_size > 0
    assert "qiskit's VF2Layout picks" in out and "under our fidelity_product" in out


def test_sdk_choice_is_swap_free_and_ranked():
    # Reference: qiskit's VF2Layout pass on the chip's Target.
    from embedcheck import audit_placement
    from embedcheck.audit.qiskit_views import sdk_layout
    dev, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    placement, status = sdk_layout(dev, patch)
    assert status == "found" and audit_placement(dev, patch, placement).swap_free
    from embedcheck.io.patchfile import load_patch as lp
    naive, status = sdk_layout(dev, lp(FIXED_PATCH.parent / "flagged_weight4.yaml"))
    assert naive is None and "no layout" in status


def _timed(ops_by_circuit, rounds=1, qubits=("d", "a")):
    """A two-qubit patch on a two-qubit line: 1q gates 100 ns, measure/reset 1000 ns, cx 300."""
    cal = {q: QubitCalibration(t1_us=50.0, t2_us=40.0, single_qubit_duration_ns=100.0,
                               measurement_duration_ns=1000.0) for q in (0, 1)}
    dev = Device.from_lattice(line(2), name="pair", qubit_calibration=cal,
                              coupler_calibration={(0, 1): CouplerCalibration(0.01, 300.0)})
    patch = Patch("toy", qubits, {"d": "data", "a": "ancilla"},
                  {name: Circuit(name, ops) for name, ops in ops_by_circuit.items()},
                  rounds=rounds)
    return dev, patch, Placement((0, 1))


def test_waits_span_circuits_and_belong_to_the_run_they_end_in():
    # prep touches d; the round resets a, then cx d, a and measures a; readout measures d.
    prep = (Operation("h", ("d",), "1q"),)
    round_ops = (Operation("reset", ("a",), "reset", written="reset"),
                 Operation("cx", ("d", "a"), "2q"), Operation("measure", ("a",), "measure"))
    readout = (Operation("measure", ("d",), "measure"),)
    dev, patch, where = _timed({"prep": prep, "round": round_ops, "readout": readout}, rounds=3)
    assert patch.runs() == [("prep", False, 1), ("round", False, 1), ("round", True, 2),
                            ("readout", False, 1)]
    idle = {(name, again): dict(schedule_circuit(dev, patch, name, where, again=again).idle_ns)
            for name, again, _ in patch.runs()}
    assert idle[("prep", False)] == {"d": 0.0, "a": 0.0}
    # d: from the end of its h (100 ns) to its cx at 1000 ns (after a's reset): 1000 ns
    # reach into the round (0 of prep's 100 ns are left after the h); a was reset: free.
    assert idle[("round", False)] == {"d": 1000.0, "a": 0.0}
    # Later rounds: d waits out a's measurement (1000 ns) and the next reset (1000 ns).
    assert idle[("round", True)] == {"d": 2000.0, "a": 0.0}
    # Readout: d waits through the last round's measurement of a; a is never used again.
    assert idle[("readout", False)] == {"d": 1000.0, "a": 0.0}


def test_a_qubit_reset_and_left_waiting_has_no_idle_time():
    # a is reset at 0 (until 1000) and waits in |0> until its cx at 1300 (d is measured
    # until then): not counted. d waits at the barrier for a's measurement (1600 to 2700)
    # and is then reset: the reset erases that wait, so it does not count either.
    ops = (Operation("reset", ("a",), "reset", written="reset"), Operation("h", ("d",), "1q"),
           Operation("h", ("d",), "1q"), Operation("h", ("d",), "1q"),
           Operation("measure", ("d",), "measure"), Operation("cx", ("a", "d"), "2q"),
           Operation("h", ("a",), "1q"), Operation("measure", ("a",), "measure"),
           Operation("barrier", ("a", "d"), "barrier"),
           Operation("reset", ("d",), "reset", written="reset"))
    dev, patch, where = _timed({"round": ops})
    s = schedule_circuit(dev, patch, "round", where)
    assert s.duration_ns == 3700 and s.idle_ns == {"d": 0.0, "a": 0.0}
    # The same wait after an X-basis reset (|+> dephases) counts.
    xops = (Operation("reset", ("a",), "reset", written="rx"),) + ops[1:]
    dev, xpatch, where = _timed({"round": xops})
    assert dict(schedule_circuit(dev, xpatch, "round", where).idle_ns) == {"d": 0.0, "a": 300.0}


def test_a_qubit_reset_at_the_end_of_a_round_is_back_in_zero():
    # h d; cx d, a; measure a; reset a: a starts every round in |0>, as in the first.
    ops = (Operation("h", ("d",), "1q"), Operation("cx", ("d", "a"), "2q"),
           Operation("measure", ("a",), "measure"),
           Operation("reset", ("a",), "reset", written="reset"))
    dev, patch, where = _timed({"round": ops}, rounds=3)
    first = schedule_circuit(dev, patch, "round", where)
    later = schedule_circuit(dev, patch, "round", where, again=True)
    # d: cx ends at 400, the round at 2400, next h at 0: 2000 ns, from the second round on.
    assert first.idle_ns == {"d": 0.0, "a": 0.0} and later.idle_ns == {"d": 2000.0, "a": 0.0}


def _bar_text(fig):
    """The colour bar's tick labels, offset text and label, as drawn."""
    fig.canvas.draw()
    bar = fig.axes[-1]
    return ([t.get_text() for t in bar.get_yticklabels()],
            bar.yaxis.get_offset_text().get_text(), bar.get_ylabel())


def test_a_colour_bar_on_uniform_data_reads_the_value(tmp_path):
    # Before: a chip whose couplers all have the same error read '1e-10+1e-2' on the bar.
    from embedcheck.model.lattices import square_grid
    lattice = square_grid(3, 3)
    dev = Device.from_lattice(lattice, name="uniform", coupler_calibration={
        c: CouplerCalibration(0.01, 300.0) for c in lattice.couplers})
    ticks, offset, label = _bar_text(draw_placement(dev, tmp_path / "u.png"))
    assert ticks == ["0.01"] and offset == "" and "0.01 on every one" in label
    patch = load_patch(FIXED_PATCH)
    chip = load_device(DEMO_CHIP)
    placements = vet_patch(chip, patch).ranking.placements[:3]
    fig = draw_score_map(chip, patch, placements, [0.42] * len(placements), tmp_path / "m.png")
    ticks, offset, label = _bar_text(fig)
    assert ticks == ["0.42"] and offset == "" and "0.42 on every one" in label
    varied = random_calibration_device(lattice)                  # varied data: no offset
    ticks, offset, _ = _bar_text(draw_placement(varied, tmp_path / "v.png"))
    assert offset == "" and len(ticks) > 1 and not any("+" in t for t in ticks)


def random_calibration_device(lattice):
    rng = random.Random(5)
    return Device.from_lattice(lattice, name="varied", coupler_calibration={
        c: CouplerCalibration(rng.uniform(0.010, 0.0101), 300.0) for c in lattice.couplers})


def test_pictures_of_big_chips_carry_small_numbers_or_say_why(tmp_path):
    # Before: above 200 qubits the qubits had no numbers and nothing said so.
    import embedcheck.report.picture as picture
    from embedcheck.model.lattices import square_grid
    dev = Device.from_lattice(square_grid(16, 16), name="g16")          # 256 qubits
    fig = draw_placement(dev, tmp_path / "g16.png")
    numbers = [t for t in fig.axes[0].texts if t.get_gid() == "qubit numbers"]
    assert sorted(int(t.get_text()) for t in numbers) == sorted(dev.qubits)
    assert all(picture.SMALLEST_NUMBER_PT <= t.get_fontsize() <= 5.5 for t in numbers)
    # Far too many to number: the picture says why they are left out.
    original = picture.NUMBERED_UP_TO
    try:
        picture.NUMBERED_UP_TO = 200
        fig = draw_placement(dev, tmp_path / "g16b.png")
    finally:
        picture.NUMBERED_UP_TO = original
    texts = {t.get_gid(): t.get_text() for t in fig.axes[0].texts}
    assert "qubit numbers" not in texts
    assert "qubit numbers left out (256 qubits, above 200)" in texts["qubit numbers note"]
