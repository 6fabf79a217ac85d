"""The proof that a rewrite prepares the same state: qiskit's `StabilizerState.equiv` on
tableaux (fine for hundreds of qubits), and statevectors too up to 12 qubits. Every qubit
outside the original's support ends in |0> because the compared states include them.

    >>> from qiskit import QuantumCircuit
    >>> from qiskit.quantum_info import StabilizerState
    >>> from embedcheck.io.patchfile import patch_from_qiskit
    >>> qc = QuantumCircuit(2)
    >>> _ = qc.h(0), qc.cx(0, 1)
    >>> patch = patch_from_qiskit({"prep": qc})
    >>> proven, how = prove(patch, StabilizerState(qc), [("h", ("q1",)), ("cx", ("q1", "q0"))])
    >>> proven, how.split("; ")[1]
    (True, 'statevectors equal up to global phase')
"""
from __future__ import annotations

from typing import Any

from ..model.patch import Patch
from .state import Ops, ops_circuit

__all__ = ["prove"]


def prove(patch: Patch, state: Any, ops: Ops) -> tuple[bool, str]:
    from qiskit.quantum_info import StabilizerState, Statevector
    made = ops_circuit(patch, ops)
    if not StabilizerState(made).equiv(state):
        return False, "the stabilizer tableaux differ"
    proof = "same stabilizer state up to global phase (qiskit StabilizerState.equiv)"
    if patch.num_qubits <= 12:
        target = Statevector(state.clifford.to_circuit())
        if not Statevector(made).equiv(target):
            return False, "the statevectors differ"
        proof += "; statevectors equal up to global phase"
    return True, proof
