"""The cross-check: the exact audit against qiskit's transpiler, which must agree.

qiskit's transpiler at optimization level 0, with the placement as its initial layout,
is an independent judge of swap-freeness: a swap-free circuit keeps its native
two-qubit count, and a circuit with off-coupler gates gains some. A disagreement is a
bug of ours (the command line exits 3), never a finding.

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> from embedcheck.model.placement import Placement
    >>> from embedcheck.io.patchfile import patch_from_qiskit
    >>> from qiskit import QuantumCircuit
    >>> qc = QuantumCircuit(3)
    >>> _ = qc.cx(0, 1), qc.cx(0, 2)
    >>> dev = Device.from_lattice(line(3), name="line")
    >>> patch = patch_from_qiskit(qc)
    >>> cross_check(dev, patch, [Placement((1, 0, 2)), Placement((0, 1, 2))])
    []
"""
from __future__ import annotations

from collections.abc import Sequence

from ..io.qiskit_target import device_target
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from . import qiskit_views
from .exact import audit_placement

__all__ = ["cross_check"]


def cross_check(device: Device, patch: Patch, placements: Sequence[Placement], *,
                seed: int = 11) -> list[str]:
    """Disagreements between the exact audit and qiskit's transpiler (none expected).

    Agreement means: a swap-free circuit keeps its native two-qubit count through
    `transpile(optimization_level=0)` with the placement as initial layout, and a
    circuit with off-coupler gates gains two-qubit gates.
    """
    problems = []
    target = device_target(device)           # built once for every transpilation below
    for placement in placements:
        report = audit_placement(device, patch, placement)
        for c in report.circuits:
            if patch.circuits[c.circuit].qasm is None:
                continue
            after = qiskit_views.transpile_on_placement(
                device, patch, c.circuit, placement, seed=seed, target=target)["two_qubit_gates"]
            if c.swap_free and after != c.two_qubit_gates:
                problems.append(f"{patch.name} on {device.name}, circuit {c.circuit}: our audit "
                                f"finds it swap-free with {c.two_qubit_gates} two-qubit gates, "
                                f"qiskit's transpiler gives {after}")
            elif not c.swap_free and after <= c.two_qubit_gates:
                problems.append(f"{patch.name} on {device.name}, circuit {c.circuit}: our audit "
                                f"finds {len(c.off_coupler)} off-coupler gates, qiskit's "
                                f"transpiler adds none")
    return problems
