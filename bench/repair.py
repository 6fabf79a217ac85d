"""Repair of a 100-qubit cat state on a heavy-hex region, against a baseline in the same run.

    python bench/repair.py

Baseline: qiskit building the StabilizerState of the naive preparation (a chain of 99
CNOTs), which any proof must do at least once. Prints the repair time (cat method,
Steiner fan-out, proof by tableau) as a ratio of that, and the two-qubit depth of the
repaired circuit against the region's radius from its best root.
"""
import sys
import time
from pathlib import Path

import networkx as nx
from qiskit import QuantumCircuit
from qiskit.quantum_info import StabilizerState

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from embedcheck import (  # noqa: E402
    Device,
    Placement,  # noqa: E402
    heavy_hex,
    repair_preparation,  # noqa: E402
)
from embedcheck.io.patchfile import patch_from_qiskit  # noqa: E402
from embedcheck.model.device import pair  # noqa: E402


def main():
    lat = heavy_hex(5, 5)
    g = nx.Graph(list(lat.couplers))
    centre = min(g, key=lambda v: nx.eccentricity(g, v))
    sub = nx.convert_node_labels_to_integers(g.subgraph(list(nx.bfs_tree(g, centre))[:100]))
    qc = QuantumCircuit(100)
    qc.h(0)
    for i in range(99):
        qc.cx(i, i + 1)
    t = time.perf_counter()
    StabilizerState(qc)
    base = time.perf_counter() - t
    patch = patch_from_qiskit({"prep": qc}, name="cat100")
    device = Device(name="region", qubits=tuple(range(100)),
                    couplers=tuple(sorted(pair(a, b) for a, b in sub.edges)))
    placement = Placement(tuple(int(q[1:]) for q in patch.qubits))
    t = time.perf_counter()
    fix = repair_preparation(device, patch, placement)
    ours = time.perf_counter() - t
    print(f"100-qubit cat on a heavy-hex region: repair {ours:.2f} s, baseline StabilizerState "
          f"{base:.3f} s, ratio {ours / base:.0f}; proven {fix.proven}; two-qubit gates "
          f"{fix.after['two_qubit_gates']}, depth {fix.after['two_qubit_depth']} vs region radius "
          f"{nx.radius(sub)} (ratio {fix.after['two_qubit_depth'] / nx.radius(sub):.2f})")


if __name__ == "__main__":
    main()
