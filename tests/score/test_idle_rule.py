"""The idle rule: no idle error on a qubit sitting in |0>, in the noisy circuit, the fidelity
product and the sensitivities alike; qiskit's damping channels are the reference for why."""
import math

import numpy as np
import pytest
import stim

from embedcheck import Device, Placement, rank_placements
from embedcheck.io.patchfile import patch_from_stim
from embedcheck.model.device import CouplerCalibration, QubitCalibration
from embedcheck.model.lattices import line
from embedcheck.score.cost import sensitivity
from embedcheck.score.idle import idle_channel
from embedcheck.score.noise import noisy_circuit

T1, T2 = 50.0, 40.0


def _damping(t_us):
    """Amplitude damping then phase damping for t_us as qiskit.quantum_info Kraus channels,
    operators written out (Nielsen & Chuang, section 8.3.5-8.3.6; from memory), with the
    pure dephasing rate 1/T2 - 1/(2 T1) so coherences decay as exp(-t/T2)."""
    from qiskit.quantum_info import Kraus

    gamma = 1 - math.exp(-t_us / T1)
    amplitude = Kraus([np.array([[1, 0], [0, math.sqrt(1 - gamma)]]),
                       np.array([[0, math.sqrt(gamma)], [0, 0]])])
    lam = 1 - math.exp(-2 * t_us * (1 / T2 - 1 / (2 * T1)))
    phase = Kraus([np.array([[1, 0], [0, math.sqrt(1 - lam)]]),
                   np.array([[0, 0], [0, math.sqrt(lam)]])])
    return amplitude.compose(phase)


def test_damping_leaves_zero_alone_but_not_one_or_plus():
    # Why a qubit in |0> gets no idle channel: amplitude and phase damping fix |0><0|
    # exactly, while the Pauli-twirled channel would flip it with probability p_x + p_y.
    from qiskit.quantum_info import DensityMatrix

    channel = _damping(2.0)
    zero = DensityMatrix.from_label("0")
    assert np.allclose(zero.evolve(channel).data, zero.data, atol=1e-15)
    twirled = idle_channel(2000.0, T1, T2)
    assert 2 * float(twirled.px) > 0.01                      # what the twirl would wrongly do
    one = DensityMatrix.from_label("1").evolve(channel)      # |1> decays: a measured qubit
    assert one.data[0, 0].real == pytest.approx(1 - math.exp(-2.0 / T1))
    plus = DensityMatrix.from_label("+").evolve(channel)     # |+> dephases: an X-basis reset
    assert abs(plus.data[0, 1]) == pytest.approx(0.5 * math.exp(-2.0 / T2))


def _pair():
    cal = {q: QubitCalibration(t1_us=T1, t2_us=T2, single_qubit_duration_ns=100.0,
                               measurement_duration_ns=1000.0) for q in (0, 1)}
    return Device.from_lattice(line(2), name="pair", qubit_calibration=cal,
                               coupler_calibration={(0, 1): CouplerCalibration(0.0, 300.0)})


# q1 is reset (0-1000 ns) and waits in |0> while q0 runs two X gates (1000-1200) before
# their CX (1200-1500); q1 is measured (1500-2500), waits 400 ns while q0 runs 14 X gates
# (1500-2900), meets q0 in a second CX and is measured again. Only T1 and T2 are noisy.
_EXPERIMENT = ("R 0 1\nX 0 0\nCX 0 1\nM 1\n" + "X 0\n" * 14 + "CX 0 1\nM 1 0\n"
               "DETECTOR rec[-3]\nDETECTOR rec[-3] rec[-2]\nOBSERVABLE_INCLUDE(0) rec[-1]\n")


def test_a_qubit_reset_and_left_waiting_has_no_idle_term_in_the_error_model():
    device, patch = _pair(), patch_from_stim(stim.Circuit(_EXPERIMENT))
    placement = Placement((0, 1))
    dem = noisy_circuit(device, patch, placement).detector_error_model()
    errors = [inst for inst in dem.flattened() if inst.type == "error"]
    # By hand: the 200 ns q1 waits in |0> after its reset would flip D0 (X or Y before
    # its first measurement); it is not there. The 400 ns it waits after being measured
    # flip its second measurement, D1, with p_x + p_y = (1 - exp(-0.4/T1)) / 2.
    assert len(errors) == 1
    assert str(errors[0].targets_copy()[0]) == "D1"
    assert errors[0].args_copy()[0] == pytest.approx((1 - math.exp(-0.4 / T1)) / 2, rel=1e-9)


def test_the_fidelity_product_and_the_sensitivities_count_the_same_wait():
    device, patch = _pair(), patch_from_stim(stim.Circuit(_EXPERIMENT))
    placement = Placement((0, 1))
    ranking = rank_placements(device, patch, [placement])
    p_idle = float(idle_channel(400.0, T1, T2).total)         # q1's 400 ns, nothing else
    assert ranking.terms["idle"][0] == pytest.approx(math.log1p(-p_idle), rel=1e-12)
    idle_items = {s.item for s in sensitivity(device, patch, placement, top=20)
                  if s.figure in ("t1_us", "t2_us")}
    assert idle_items == {"qubit 1"}
