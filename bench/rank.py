"""Scoring speed: our full cost model against a bare numpy gather-and-sum, same run.

    python bench/rank.py [placements]

Synthetic: a 57-qubit patch (a ring of 57 qubits, every other one an ancilla measured
and reset each round, 3 rounds, then a readout) and 10^5 random placements on a
2159-qubit heavy-hex chip with random (invented) calibration. The baseline gathers
the two-qubit errors of the interacting pairs and the readout errors of the measured
qubits and sums their logs; ours adds single-qubit, reset and idle terms (the idle
term runs an as-soon-as-possible schedule over the circuit's operations, vectorised
over placements). Prints seconds and the ratio.
"""
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from embedcheck import Device, heavy_hex  # noqa: E402
from embedcheck.model.device import CouplerCalibration, QubitCalibration  # noqa: E402
from embedcheck.model.patch import Circuit, Operation, Patch  # noqa: E402
from embedcheck.score.cost import experiment_counts, scores  # noqa: E402


def synthetic_patch(n=57):
    names = [f"q{i}" for i in range(n)]
    roles = {q: ("ancilla" if i % 2 else "data") for i, q in enumerate(names)}
    ops = [Operation("h", (q,), "1q") for q in names[1::2]]
    ops += [Operation("cx", (names[i], names[(i + 1) % n]), "2q") for i in range(n)]
    ops += [Operation("h", (q,), "1q") for q in names[1::2]]
    for q in names[1::2]:
        ops += [Operation("measure", (q,), "measure"), Operation("reset", (q,), "reset")]
    readout = tuple(Operation("measure", (q,), "measure") for q in names[::2])
    return Patch("ring57", tuple(names), roles, {"round": Circuit("round", tuple(ops)),
                                                  "readout": Circuit("readout", readout)},
                 rounds=3)


def main():
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    rng = np.random.default_rng(5)
    lat = heavy_hex(20, 20)
    dev = Device.from_lattice(
        lat, name="bench",
        coupler_calibration={c: CouplerCalibration(float(rng.uniform(0.004, 0.03)),
                                                   float(rng.uniform(200, 500)))
                             for c in lat.couplers},
        qubit_calibration={q: QubitCalibration(
            readout_error=float(rng.uniform(0.005, 0.04)), single_qubit_error=2e-4,
            reset_error=1e-3, t1_us=float(rng.uniform(60, 200)), t2_us=float(rng.uniform(30, 100)),
            single_qubit_duration_ns=35.0, measurement_duration_ns=800.0) for q in lat.qubits})
    patch = synthetic_patch()
    n = len(lat.qubits)
    grid = np.argsort(rng.random((count, n)), axis=1)[:, :patch.num_qubits].astype(np.int64)
    arrays = dev.calibration_arrays
    pairs, measures, _, _ = experiment_counts(patch)
    ab = np.array(list(pairs), dtype=np.int64)
    weight = np.array(list(pairs.values()), dtype=float)
    two = np.zeros((n, n))                     # the baseline's dense error matrix
    for k, key in enumerate(arrays.coupler_keys):
        a, b = divmod(int(key), arrays.size)
        two[a, b] = two[b, a] = arrays.coupler_error[k]

    def bare():
        e = two[grid[:, ab[:, 0]], grid[:, ab[:, 1]]]
        return (np.log1p(-e) * weight).sum(axis=1) + \
            (np.log1p(-arrays.readout_error[grid]) * measures).sum(axis=1)

    def ours():
        terms, _ = scores(dev, patch, grid, arrays)
        return sum(terms.values())

    def best(fn, repeat=3):
        times = []
        for _ in range(repeat):
            t = time.perf_counter()
            fn()
            times.append(time.perf_counter() - t)
        return min(times)

    base_t, ours_t = best(bare), best(ours)
    import tracemalloc
    tracemalloc.start()
    ours()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"rank {count} placements of a {patch.num_qubits}-qubit patch "
          f"({sum(len(c.operations) for c in patch.circuits.values())} operations): "
          f"bare gather-and-sum {base_t:.3f} s, full cost model {ours_t:.3f} s, "
          f"ratio {ours_t / base_t:.2f}; peak traced memory {peak / 2**20:.0f} MiB")


if __name__ == "__main__":
    main()
