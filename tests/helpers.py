"""Small builders shared by the tests and benchmarks (not part of the package)."""
import random
import shutil
from dataclasses import replace
from pathlib import Path

from embedcheck import Circuit, CouplerCalibration, Operation, Patch, QubitCalibration, load_patch

ROOT = Path(__file__).resolve().parent.parent
DEMO_CHIP = ROOT / "devices" / "demo_heavy_hex.yaml"
DEMO_PATCH = ROOT / "samples" / "flagged_weight4.yaml"
FIXED_PATCH = ROOT / "samples" / "flagged_weight4_coupler_prep.yaml"
TEST_DATA = ROOT / "tests" / "data"


def patch_from_edges(edges, name="graph", role="data"):
    """A one-circuit patch whose interaction graph has exactly `edges` (node labels any)."""
    nodes = sorted({n for e in edges for n in e}, key=str)
    names = {n: f"q{i}" for i, n in enumerate(nodes)}
    ops = tuple(Operation("cx", (names[a], names[b]), "2q") for a, b in edges)
    return Patch(name, tuple(names.values()), {q: role for q in names.values()},
                 {"round": Circuit("round", ops)})


def syndrome_detector_patch(tmp_path):
    """The coupler-respecting demo patch with every syndrome bit of every round as its own
    detector and the data parity as the observable (no final comparison)."""
    text = FIXED_PATCH.read_text().split("detectors:")[0]
    lines = ["detectors:"]
    for r in range(2):
        for bit in ("xcheck[0]", "xcheck[1]", "xcheck[2]", "zcheck[0]", "zcheck[1]"):
            lines.append(f'  - {{measurements: ["round[{r}]:{bit}"]}}')
    lines.append('observable: ["readout:m[0]", "readout:m[1]", "readout:m[2]", "readout:m[3]"]')
    (tmp_path / "p.yaml").write_text(text + "\n".join(lines) + "\n")
    shutil.copy(FIXED_PATCH.parent / "flagged_weight4_round.qasm", tmp_path)
    return load_patch(tmp_path / "p.yaml")


def random_calibration(device, seed):
    """`device` with seeded random (invented) calibration figures on every part."""
    rng = random.Random(seed)
    return replace(device, coupler_calibration={
        c: CouplerCalibration(rng.uniform(0.002, 0.03), 300.0) for c in device.couplers},
        qubit_calibration={q: QubitCalibration(
            readout_error=rng.uniform(0.002, 0.03), single_qubit_error=rng.uniform(1e-4, 1e-3),
            t1_us=rng.uniform(60, 200), t2_us=rng.uniform(40, 120),
            single_qubit_duration_ns=36.0, measurement_duration_ns=900.0)
            for q in device.qubits})
