"""Calibration noise for a stim circuit the user wrote, checked term by term against a
detector error model computed by hand from the documented conversions (README "Cost
model": DEPOLARIZE2 p = 5r/4 for average two-qubit gate error r, Nielsen, Phys. Lett. A 303,
249 (2002); readout and reset as bit flips)."""
import pytest
import stim

from embedcheck import (
    CouplerCalibration,
    Device,
    InputError,
    QubitCalibration,
    noisy,
    noisy_tasks,
    square_grid,
)

BELL = stim.Circuit("R 0 1\nH 0\nCX 0 1\nM 0 1\nDETECTOR rec[-1] rec[-2]")


def _chip():
    qubits = {0: QubitCalibration(readout_error=0.02, reset_error=0.004),
              1: QubitCalibration(readout_error=0.01, reset_error=0.003),
              2: QubitCalibration(readout_error=0.03, reset_error=0.005)}
    couplers = {(0, 1): CouplerCalibration(0.008, 300.0), (1, 2): CouplerCalibration(0.016, 300.0)}
    return Device.from_lattice(square_grid(1, 3), name="line3", qubit_calibration=qubits,
                               coupler_calibration=couplers)


def _flip_probability(dem, target):
    """Probability that `target` flips, from every error mechanism that flips it alone."""
    keep = 1.0
    for inst in dem.flattened():
        if inst.type == "error" and [str(t) for t in inst.targets_copy()] == [target]:
            keep *= 1 - 2 * inst.args_copy()[0]
    return (1 - keep) / 2


@pytest.mark.parametrize("where", [[0, 1], [2, 1]])
def test_bell_parity_detector_by_hand(where):
    chip = _chip()
    dem = noisy(BELL, chip, where).detector_error_model()
    a, b = where
    coupler = chip.coupler_calibration[tuple(sorted(where))]
    p2 = coupler.two_qubit_error * 5 / 4                    # DEPOLARIZE2 after the CNOT
    # ZZ parity flips for the 8 of 15 two-qubit Paulis with X or Y on exactly one qubit;
    # each readout flip flips it; a reset flip flips it only on the target (the control's
    # |1> becomes |-> under H, and |00> - |11> keeps the parity).
    flips = [8 * p2 / 15, chip.qubit_calibration[a].readout_error,
             chip.qubit_calibration[b].readout_error, chip.qubit_calibration[b].reset_error]
    keep = 1.0
    for p in flips:
        keep *= 1 - 2 * p
    assert _flip_probability(dem, "D0") == pytest.approx((1 - keep) / 2, rel=1e-9)


def test_the_users_qubit_numbers_are_kept_and_bad_placements_refused():
    circuit = stim.Circuit("R 0 3\nH 0\nCX 0 3\nM 0 3\nDETECTOR rec[-1] rec[-2]")
    out = noisy(circuit, _chip(), {0: 1, 3: 2})
    assert "CX 0 3" in str(out) and "DEPOLARIZE2(0.02) 0 3" in str(out)
    with pytest.raises(InputError, match="no coupler"):
        noisy(BELL, _chip(), [0, 2])                 # 0 and 2 are not coupled
    with pytest.raises(InputError, match="stim qubit 1"):
        noisy(BELL, _chip(), [0])
    with pytest.raises(InputError, match="is not a qubit"):
        noisy(BELL, _chip(), [0, 7])


def test_one_sinter_task_per_placement():
    sinter = pytest.importorskip("sinter")
    tasks = noisy_tasks(BELL, _chip(), [[0, 1], [2, 1]])
    assert [t.json_metadata["placement"] for t in tasks] == [[0, 1], [2, 1]]
    assert tasks[1].circuit == noisy(BELL, _chip(), [2, 1])
    assert all(isinstance(t, sinter.Task) and t.detector_error_model is not None for t in tasks)
