"""Repair method `product`: the option the field uses for fault tolerance. The preparation
becomes a product state (|0...0>, or |+...+> when that is what the round can project) and
the check rounds project it. This is measurement-based, so instead of a tableau
comparison it is verified by noiseless simulation (stim's tableau simulator, many random
runs): after one round every generator of the intended state is deterministic and a
Pauli-frame correction makes each +1.

    >>> from embedcheck.io.patchfile import patch_from_family
    >>> fix = project_preparation(patch_from_family("flagged", prep="naive"))
    >>> fix.repaired, fix.basis, fix.dropped_detectors
    (True, 'z', ('xs0_r0',))
"""
from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np

from ..audit.qiskit_views import qiskit_circuit
from ..errors import InputError
from ..io.qasm import read_qasm
from ..model import gf2
from ..model.patch import Circuit, Detector, Patch
from ..score.noise import stim_experiment
from ..score.simulate import check_detectors
from .result import Repair
from .state import Ops, target_state, to_qasm, with_circuit

__all__ = ["project_preparation"]


def project_preparation(patch: Patch, *, circuit: str = "prep", runs: int = 16,
                        seed: int = 5) -> Repair:
    """Replace `circuit` by a product state and verify the next round projects it.

    For each of `runs` noiseless simulations (stim's tableau simulator, random outcomes),
    after the product state and one check round every generator of the target state is
    deterministic (+1 or -1), and a Pauli on the target qubits (the frame correction the
    outcomes imply) makes all of them +1. Detectors the product state makes random in the
    first round are dropped from the returned patch (and named). A check round that does
    not project either product state is a finding (`repaired` False), not an error.
    """
    import stim

    if "round" not in patch.circuits:
        raise InputError("the product-state option needs a check round to project the state")
    state, support, _ = target_state(patch, circuit)
    target = _support_generators(patch, circuit, support)
    for basis in ("z", "x"):
        ops: Ops = [("h", (q,)) for q in support] if basis == "x" else []
        text = to_qasm(patch, ops)
        trial = with_circuit(patch, circuit, Circuit(circuit, tuple(read_qasm(text)), text, None))
        one_round = _replace_rounds(trial, 1)
        program = stim_experiment(_without_readout(one_round), detectors=False)
        corrections: list[str] = []
        ok = True
        for k in range(runs):
            sim = stim.TableauSimulator(seed=seed + k)
            sim.do_circuit(program)
            values = [sim.peek_observable_expectation(g) for g in target]
            if any(v == 0 for v in values):
                ok = False
                break
            fix = _frame_correction(target, values, [patch.index[q] for q in support],
                                    patch.num_qubits)
            if fix is None:
                ok = False
                break
            sim.do_pauli_string(fix)
            if any(sim.peek_observable_expectation(g) != 1 for g in target):
                ok = False
                break
            corrections.append(_describe(fix, patch))
        if not ok:
            continue
        kept: list[Detector] = []
        dropped: list[Detector] = []
        for det in trial.detectors:
            alone = replace(trial, detectors=(det,), observable=())
            (dropped if check_detectors(alone) else kept).append(det)
        fixed = _with_detectors(trial, tuple(kept))
        problems = check_detectors(fixed)
        if problems:
            raise InputError(f"the product-state preparation leaves {problems[0]}")
        proof = (f"verified on {runs} noiseless runs (stim tableau simulator): after one check "
                 f"round every generator of the target state is deterministic and the frame "
                 f"correction makes it +1")
        return Repair(circuit=circuit, method="product", qasm=text, operations=tuple(ops),
                      proven=True, proof=proof, basis=basis, runs=runs,
                      corrections=tuple(sorted(set(corrections))),
                      dropped_detectors=tuple(d.name for d in dropped), patch=fixed)
    return Repair(circuit=circuit, method="product", repaired=False,
                  finding=f"the check round does not project a product state onto the state "
                          f"'{circuit}' prepares (tried |0...0> and |+...+>); keep a unitary "
                          "repair")


def _support_generators(patch: Patch, circuit: str, support: tuple[str, ...]) -> list[Any]:
    """stim PauliStrings (over all patch qubits) generating the target state on its support."""
    import stim
    from qiskit import QuantumCircuit
    from qiskit.quantum_info import StabilizerState

    qc, names = qiskit_circuit(patch, circuit)
    local = {q: i for i, q in enumerate(support)}
    small = QuantumCircuit(len(support))
    for ins in qc.data:
        if ins.operation.name in ("barrier", "reset"):
            continue
        small.append(ins.operation, [local[names[qc.find_bit(q).index]] for q in ins.qubits])
    out = []
    for label in StabilizerState(small).clifford.to_labels(mode="S"):
        sign, body = label[0], label[1:][::-1]          # qiskit labels run from the last qubit
        chars = ["_"] * patch.num_qubits
        for i, ch in enumerate(body):
            chars[patch.index[support[i]]] = ch if ch != "I" else "_"
        out.append(stim.PauliString(sign + "".join(chars)))
    return out


def _frame_correction(target: list[Any], values: list[float], qubits: list[int],
                      n: int) -> Any:
    """A Pauli on `qubits` anticommuting exactly with the generators whose value is -1."""
    import stim
    rows = []
    for g in target:
        xs, zs = g.to_numpy()
        rows.append(np.concatenate([zs[qubits], xs[qubits]]).astype(np.uint8))
    b = np.array([v < 0 for v in values], dtype=np.uint8)
    solution = gf2.solve(np.array(rows), b)
    if solution is None:
        return None
    m = len(qubits)
    chars = ["_"] * n
    for k, q in enumerate(qubits):
        x, z = solution[k], solution[m + k]
        chars[q] = "Y" if x and z else "X" if x else "Z" if z else "_"
    return stim.PauliString("".join(chars))


def _describe(pauli: Any, patch: Patch) -> str:
    parts = [f"{c} on {patch.qubits[i]}" for i, c in enumerate(str(pauli)[1:]) if c != "_"]
    return ", ".join(parts) or "none"


def _replace_rounds(patch: Patch, rounds: int) -> Patch:
    return replace(patch, rounds=rounds, detectors=(), observable=())


def _without_readout(patch: Patch) -> Patch:
    return replace(patch, circuits={k: v for k, v in patch.circuits.items() if k != "readout"})


def _with_detectors(patch: Patch, detectors: tuple[Detector, ...]) -> Patch:
    return replace(patch, detectors=detectors)
