"""Repair a state preparation that forces swaps: rewrite it onto the placement's couplers
(the methods live beside this module, one each; this one picks the best).

Given a placement and a Clifford preparation (a circuit that, from |0...0>, makes a
stabilizer state), synthesise an equivalent preparation that uses only couplers
among the placement's qubits, borrowing the patch's other qubits (flags, ancillas)
as stepping stones when they start in |0> and returning them to |0>. Methods, the
best kept (fewest two-qubit gates, then two-qubit depth):

- **cat**: when the state is a cat (GHZ) state on some qubits up to single-qubit
  Paulis: the smallest subtree of a spanning tree of the placement's coupling graph
  that holds the cat qubits (a Steiner tree in that tree), rooted where a broadcast
  finishes soonest; each qubit holding the cat value passes it to its children,
  those with the longest remaining broadcast first (optimal broadcasting in a tree,
  Slater, Cockayne & Hedetniemi, SIAM J. Comput. 10, 692 (1981)); helper qubits are
  then returned to |0> by a CNOT from a neighbour that still holds the value; a
  Pauli correction found from the stabilizer signs fixes the rest.
- **css**: when the state has a generating set of pure X and pure Z stabilizers (code
  states such as |0>_L and |+>_L of CSS codes, cat states, Bell pairs): Steiner-tree
  elimination of its X-type generators over the placement's coupling graph (see
  `css_circuit`), Hadamards on the pivots, the CNOTs reversed, a Pauli correction.
- **routed**: any stabilizer state: qiskit's Clifford synthesis of the state's
  tableau, routed onto the placement's coupling graph by qiskit's SABRE router (Li,
  Ding & Xie, ASPLOS 2019) with its final permutation undone by approximate token
  swapping on the same couplers (Miltzow et al., ESA 2016), so every gate is on a
  coupler.

**Proof**: the repaired circuit prepares the same stabilizer state as the original,
up to global phase, checked with qiskit's `StabilizerState.equiv` (tableaux, fine
for hundreds of qubits); every qubit outside the original's support ends in |0>
because the compared states include them. Up to 12 qubits, statevectors too.
Non-Clifford preparations cannot be proven this way and are not rewritten.

    >>> from embedcheck.io.chipfile import load_device
    >>> from embedcheck.io.patchfile import load_patch
    >>> from embedcheck.model.placement import Placement
    >>> chip = load_device("devices/demo_heavy_hex.yaml")
    >>> patch = load_patch("samples/flagged_weight4.yaml")
    >>> best = Placement((27, 18, 23, 41, 26, 24, 25))          # find ranks it first
    >>> fix = repair_preparation(chip, patch, best)
    >>> fix.method, fix.after["off_coupler_gates"], fix.proven
    ('cat', 0, True)
"""
from __future__ import annotations

from collections.abc import Callable
from types import MappingProxyType
from typing import Any

from ..audit.exact import audit_placement
from ..errors import InputError
from ..io.qasm import read_qasm
from ..model.device import Device
from ..model.patch import Circuit, Patch
from ..model.placement import Placement
from ..score.cost import rank_placements
from ..score.simulate import fault_distance
from .cat import NotCat, cat_circuit
from .css import NotCSS, css_circuit
from .proof import prove
from .result import Repair
from .routed import routed_circuit
from .state import (
    Ops,
    placement_edges,
    rewrite_circuit,
    target_state,
    two_qubit_count_depth,
    with_circuit,
)

__all__ = ["Repair", "repair_preparation", "repaired_patch"]


def repair_preparation(device: Device, patch: Patch, placement: Placement, *,
                       circuit: str = "prep", seed: int = 11) -> Repair:
    """Rewrite `circuit` of `patch` onto `placement`'s couplers.

    A finding (no rewrite fits this placement, or every rewrite lowers the circuit-level
    fault distance) comes back as a `Repair` with `repaired` False and the reason; a
    circuit that cannot be rewritten at all (not a Clifford preparation from |0>, helpers
    not known to start in |0>) raises `InputError`.
    """
    if circuit not in patch.circuits:
        raise InputError(f"the patch has no circuit '{circuit}'")
    state, support, reset_at_start = target_state(patch, circuit)
    first = patch.experiment()[0][0] if patch.experiment() else circuit
    known_zero = set(patch.qubits) if circuit == first else set(reset_at_start)
    not_ready = sorted(set(support) - known_zero)
    if not_ready:
        raise InputError(f"circuit '{circuit}' is not a preparation from |0>: "
                         f"{', '.join(not_ready)} are not reset at its start and it is not the "
                         "first circuit of the experiment")
    edges = placement_edges(device, patch, placement)
    candidates: dict[str, tuple[int, int] | None] = {}
    results: list[tuple[str, Ops]] = []
    try:
        ops = cat_circuit(patch, state, support, edges, known_zero)
        if ops is not None:
            results.append(("cat", ops))
    except NotCat:
        pass
    try:
        results.append(("css", css_circuit(patch, state, support, edges, known_zero)))
    except NotCSS:
        pass
    if not results or len(support) <= 20:      # the general method is the fallback beyond 20
        routed = routed_circuit(patch, state, edges, seed)
        if routed is not None:
            results.append(("routed", routed))
    coupled = {frozenset(e) for e in edges}
    results = [(m, ops) for m, ops in results          # every method must stay on couplers
               if all(frozenset(qs) in coupled for _, qs in ops if len(qs) == 2)]
    if not results:
        return Repair(circuit=circuit, method="", repaired=False,
                      finding=f"no rewrite of '{circuit}' fits this placement: the couplers "
                              "among the patch's qubits here do not connect the qubits the "
                              "state entangles (try another placement)")
    scored: list[tuple[int, int, str, Ops, tuple[str, ...]]] = []
    bad: list[str] = []
    for method, ops in results:
        used = {q for _, qs in ops if len(qs) == 2 for q in qs}
        helpers = tuple(q for q in patch.qubits if q in used and q not in support)
        bad = [q for q in helpers if q not in known_zero]
        if bad:
            candidates[method] = None
            continue
        two, depth = two_qubit_count_depth(ops)
        candidates[method] = (two, depth)
        scored.append((two, depth, method, ops, helpers))
    if not scored:
        raise InputError(f"a repair of '{circuit}' would borrow {', '.join(bad)} as helper(s), "
                         "but they are not known to start in |0> (not reset at the start of the "
                         "circuit); reset them there first")
    before = _figures(device, patch, circuit, placement)
    check_distance = bool(patch.detectors and patch.observable)
    if check_distance:
        before["fault_distance"] = _safe(fault_distance, patch)
    lowered: list[str] = []
    for candidate in sorted(scored, key=lambda s: (s[0], s[1])):
        _, _, method, ops, helpers = candidate
        rewritten = rewrite_circuit(patch, circuit, ops)
        text = rewritten.qasm or ""
        fixed = with_circuit(patch, circuit, rewritten)
        distance = _safe(fault_distance, fixed) if check_distance else None
        old = before.get("fault_distance")
        if check_distance and distance is not None and old is not None and distance < old:
            lowered.append(f"{method}: {before['fault_distance']} -> {distance}")
            continue                    # a rewrite must not lower the fault distance
        break
    else:
        return Repair(circuit=circuit, method="", repaired=False,
                      finding=f"every rewrite of '{circuit}' lowers the circuit-level fault "
                              f"distance ({'; '.join(lowered)}); keep the original or prepare a "
                              "product state and let the check rounds project it",
                      before=MappingProxyType(before), candidates=MappingProxyType(candidates),
                      rejected=tuple(lowered))
    proven, proof = prove(patch, state, ops)
    after = _figures(device, fixed, circuit, placement)
    if check_distance:
        after["fault_distance"] = distance
    return Repair(circuit=circuit, method=method, qasm=text, operations=tuple(ops),
                  proven=proven, proof=proof, before=MappingProxyType(before),
                  after=MappingProxyType(after), helpers=helpers,
                  candidates=MappingProxyType(candidates), rejected=tuple(lowered), patch=fixed)


def repaired_patch(patch: Patch, repair: Repair, *, file: str | None = None) -> Patch:
    """The patch with the repaired circuit in place of the original (its operations read
    from the rewrite's OpenQASM, naming `file` in their source)."""
    ops = tuple(read_qasm(repair.qasm, file=file))
    return with_circuit(patch, repair.circuit, Circuit(repair.circuit, ops, repair.qasm, file))


def _figures(device: Device, patch: Patch, circuit: str,
             placement: Placement) -> dict[str, Any]:
    audit = next(c for c in audit_placement(device, patch, placement).circuits
                 if c.circuit == circuit)
    ops: Ops = [(op.name, op.qubits) for op in patch.circuits[circuit].operations
                if op.kind == "2q"]
    _, depth = two_qubit_count_depth(ops)
    success = float(rank_placements(device, patch, [placement]).success[0])
    return {"two_qubit_gates": audit.two_qubit_gates, "two_qubit_depth": depth,
            "off_coupler_gates": len(audit.off_coupler), "fidelity_product": success,
            "fidelity_product_note": "off-coupler gates are not scored" if audit.off_coupler
            else ""}


def _safe(fn: Callable[[Patch], int | float | None], patch: Patch) -> int | float | None:
    try:
        return fn(patch)
    except InputError:
        return None
