"""Small builders shared by the tests and benchmarks (not part of the package)."""
import random
import shutil
import sqlite3
from dataclasses import replace
from pathlib import Path

from embedcheck import Circuit, CouplerCalibration, Operation, Patch, QubitCalibration, load_patch

ROOT = Path(__file__).resolve().parent.parent
DEMO_CHIP = ROOT / "devices" / "demo_heavy_hex.yaml"
DEMO_PATCH = ROOT / "samples" / "flagged_weight4.yaml"
FIXED_PATCH = ROOT / "samples" / "flagged_weight4_coupler_prep.yaml"
TEST_DATA = ROOT / "tests" / "data"
FLEET = ROOT / "devices" / "fleet"
FLEET_SWEEP_TASKS = 12     # tests/sweep: 2 chips x 2 snapshots: 4 rankings + 4 x 2 samplings


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


def uniform_chip(lattice, p, *, idle, tau_ns=100.0, name="uniform"):
    """An invented chip on `lattice` whose every stim noise channel has probability `p`.

    Two-qubit error 4p/5 (DEPOLARIZE2(p)), single-qubit error 2p/3 (DEPOLARIZE1(p)),
    readout and reset flips p (the conversions of `score.noise`, Nielsen 2002). Every
    duration is `tau_ns`. With `idle`, T1 = T2 = -tau / ln(1 - 4p/3), so that a wait of
    one duration is the idle channel px = py = pz = p/3, i.e. DEPOLARIZE1(p) (Ghosh,
    Fowler & Geller 2012): a standard circuit-noise model in which every step a qubit
    waits costs p, as in Fowler, Mariantoni, Martinis & Cleland, Phys. Rev. A 86, 032324
    (2012). Without `idle`, waiting is free (no T1, T2), as in stim's generated circuits
    with no data depolarization.
    """
    import math
    t_us = -tau_ns / math.log(1 - 4 * p / 3) / 1000 if idle else None
    from embedcheck import Device
    return Device.from_lattice(
        lattice, name=name,
        coupler_calibration={c: CouplerCalibration(4 * p / 5, tau_ns) for c in lattice.couplers},
        qubit_calibration={q: QubitCalibration(
            readout_error=p, single_qubit_error=2 * p / 3, reset_error=p, t1_us=t_us,
            t2_us=t_us, single_qubit_duration_ns=tau_ns, measurement_duration_ns=tau_ns)
            for q in lattice.qubits})


def lognormal_calibration(device, seed):
    """`device` with seeded log-normal (invented) calibration figures: two-qubit error
    median 0.01 (log-sigma 0.6), readout 0.02 (0.5), single-qubit 5e-4 (0.5), T1 100 us and
    T2 80 us (0.3, T2 <= 2 T1); coupler durations 260-420 ns, gates 36 ns, readout 900 ns."""
    import numpy as np
    rng = np.random.default_rng(seed)
    couplers = {c: CouplerCalibration(float(min(rng.lognormal(np.log(0.01), 0.6), 0.2)),
                                      float(rng.uniform(260, 420))) for c in device.couplers}
    qubits = {}
    for q in device.qubits:
        t1 = float(rng.lognormal(np.log(100.0), 0.3))
        t2 = float(min(rng.lognormal(np.log(80.0), 0.3), 2 * t1))
        qubits[q] = QubitCalibration(
            readout_error=float(min(rng.lognormal(np.log(0.02), 0.5), 0.3)),
            single_qubit_error=float(min(rng.lognormal(np.log(5e-4), 0.5), 0.01)),
            t1_us=t1, t2_us=t2, single_qubit_duration_ns=36.0, measurement_duration_ns=900.0)
    return replace(device, coupler_calibration=couplers, qubit_calibration=qubits)


def stored_results(database):
    """A sweep database's results and units, without timings: what must be identical
    between runs of the same sweep on any executor."""
    db = sqlite3.connect(database)
    results = db.execute("SELECT * FROM results ORDER BY unit, rank, figure").fetchall()
    units = db.execute("SELECT * FROM units ORDER BY unit").fetchall()
    db.close()
    return results, units


def networkx_maps(host_n, host_edges, k, edges, allowed=None) -> list[tuple[int, ...]]:
    """Every monomorphism of the pattern (k nodes, `edges`) into the host graph, as
    networkx's `GraphMatcher` lists them (the reference the matcher tests hold ours to):
    tuples of host nodes in pattern order. `allowed[j][v]`: pattern node j may use v."""
    import networkx as nx
    from networkx.algorithms.isomorphism import GraphMatcher
    h = nx.Graph()
    h.add_nodes_from(range(host_n))
    h.add_edges_from(host_edges)
    p = nx.Graph()
    p.add_nodes_from(range(k))
    p.add_edges_from(edges)
    if allowed is not None:
        for v in h:
            h.nodes[v]["ok"] = {j for j in range(k) if allowed[j][v]}
        for j in p:
            p.nodes[j]["j"] = j
        matcher = GraphMatcher(h, p, node_match=lambda a, b: b["j"] in a["ok"])
    else:
        matcher = GraphMatcher(h, p)
    return [tuple(inv[j] for j in range(k)) for inv in
            ({j: v for v, j in m.items()} for m in matcher.subgraph_monomorphisms_iter())]
