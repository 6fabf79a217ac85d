"""Repair method `routed`: any stabilizer state, by qiskit's Clifford synthesis of the
state's tableau, routed onto the placement's coupling graph by qiskit's SABRE router (Li,
Ding & Xie, ASPLOS 2019), with its final permutation undone by approximate token
swapping on the same couplers (Miltzow et al., ESA 2016), so every gate is on a coupler.
Correct, but often with many more gates than `cat` or `css`.

    >>> from qiskit.quantum_info import StabilizerState
    >>> from qiskit import QuantumCircuit
    >>> from embedcheck.io.patchfile import patch_from_qiskit
    >>> qc = QuantumCircuit(3)
    >>> _ = qc.h(0), qc.cx(0, 2), qc.id(1)
    >>> patch = patch_from_qiskit({"prep": qc})
    >>> ops = routed_circuit(patch, StabilizerState(qc), [("q0", "q1"), ("q1", "q2")], 11)
    >>> all(set(qs) in ({"q0", "q1"}, {"q1", "q2"}) for _, qs in ops if len(qs) == 2)
    True
"""
from __future__ import annotations

from typing import Any

from ..model.patch import Patch
from .state import Ops

__all__ = ["routed_circuit"]


def routed_circuit(patch: Patch, state: Any, edges: list[tuple[str, str]],
                   seed: int) -> Ops | None:
    """qiskit's Clifford synthesis, routed onto the coupled pairs, final permutation undone
    (None when qiskit cannot route it there)."""
    import rustworkx as rx
    from qiskit import transpile
    from qiskit.transpiler import CouplingMap
    from qiskit.transpiler.passes.routing.algorithms import ApproximateTokenSwapper

    n = patch.num_qubits
    index = patch.index
    pairs = [(index[a], index[b]) for a, b in edges]
    graph = rx.PyGraph()
    graph.add_nodes_from(range(n))
    graph.add_edges_from_no_data(pairs)
    cmap = CouplingMap([e for a, b in pairs for e in ((a, b), (b, a))])
    for q in range(n):
        if q not in cmap.physical_qubits:
            cmap.add_physical_qubit(q)
    circ = state.clifford.to_circuit()
    from qiskit.transpiler.exceptions import TranspilerError
    try:
        out = transpile(circ, coupling_map=cmap, basis_gates=["cx", "h", "s", "sdg", "x", "y",
                                                              "z", "sx", "sxdg"],
                        initial_layout=list(range(n)), optimization_level=1,
                        seed_transpiler=seed, layout_method="trivial")
    except TranspilerError:
        return None                     # e.g. the couplers here fall apart into pieces
    final = out.layout.final_index_layout() if out.layout is not None else list(range(n))
    ops: Ops = []
    for ins in out.data:
        qubits = tuple(patch.qubits[out.find_bit(q).index] for q in ins.qubits)
        name = ins.operation.name
        if name == "barrier":
            continue
        ops.append((name, qubits))
    # A full mapping: with a partial one the swapper may move the other tokens too.
    mapping = {final[v]: v for v in range(n)}
    if any(final[v] != v for v in range(n)):
        swaps = ApproximateTokenSwapper(graph, seed=seed).map(mapping)
        for a, b in swaps:
            qa, qb = patch.qubits[a], patch.qubits[b]
            ops += [("cx", (qa, qb)), ("cx", (qb, qa)), ("cx", (qa, qb))]
    return ops
