"""A qiskit layout stage that picks embedcheck's best swap-free placement.

Installed with embedcheck under the entry-point group `qiskit.transpiler.layout` as
`swap_free`, so a qiskit user gets our placement without leaving `transpile`:

    transpile(circuit, target=target, layout_method="swap_free", routing_method="none")

The stage reads the circuit as a patch (roles inferred, the whole circuit is one round),
the `Target` as a chip (couplers, directions, errors, durations, T1/T2), searches every
placement that puts each two-qubit gate on a coupler, ranks them by the fidelity product
(README, "Cost model") and sets the best as the layout. When no placement is swap-free it
raises `TranspilerError` with our one-line reason instead of falling back to routing: a
routed layout is exactly what the user asked to avoid. An `initial_layout` given to
`transpile` wins, as in qiskit's own layout stages.

    >>> from qiskit import QuantumCircuit, transpile
    >>> from qiskit.transpiler import CouplingMap, Target
    >>> target = Target.from_configuration(["cx", "sx", "x", "rz", "measure"],
    ...                                    coupling_map=CouplingMap.from_line(5))
    >>> qc = QuantumCircuit(3); _ = qc.cx(0, 1); _ = qc.cx(1, 2)
    >>> out = transpile(qc, target=target, layout_method="swap_free", routing_method="none")
    >>> sorted(out.layout.initial_virtual_layout(filter_ancillas=True).get_physical_bits())
    [0, 1, 2]
"""
from __future__ import annotations

from qiskit.passmanager.flow_controllers import ConditionalController
from qiskit.transpiler import AnalysisPass, Layout, PassManager, TranspilerError
from qiskit.transpiler.passes import SetLayout
from qiskit.transpiler.passmanager_config import PassManagerConfig
from qiskit.transpiler.preset_passmanagers import common
from qiskit.transpiler.preset_passmanagers.plugin import PassManagerStagePlugin

__all__ = ["SwapFreeLayout", "SwapFreeLayoutPlugin", "choose_layout"]

PLUGIN_NAME = "swap_free"


def choose_layout(circuit, target, *, budget_s: float = 60.0, limit: int = 100_000):
    """The best swap-free placement of `circuit` on `target`: (physical qubit per circuit
    qubit, in the circuit's qubit order; the `Vetting`). Raises `TranspilerError` with our
    one-line reason when no placement is swap-free."""
    from ..errors import InputError
    from ..io.patchfile import patch_from_qiskit
    from ..io.qasm import declared_qubits
    from ..io.qiskit_target import device_from_target
    from ..pipeline.vet import vet_patch
    try:
        patch = patch_from_qiskit(circuit, name=circuit.name or "circuit")
        device = device_from_target(target, name="target")
    except (InputError, ValueError) as err:
        raise TranspilerError(f"embedcheck: {err}") from None
    vetting = vet_patch(device, patch, budget_s=budget_s, limit=limit)
    if not vetting.all_swap_free:
        why = "; ".join(r for fit in vetting.fits for r in fit.reasons) or (
            "the search ran out of time before a placement was found"
            if not vetting.complete else "no placement puts every two-qubit gate on a coupler")
        raise TranspilerError(f"embedcheck: no swap-free layout on this target: {why}")
    best = vetting.ranking.placements[0].as_dict(patch)
    from qiskit import qasm3
    names = declared_qubits(qasm3.dumps(circuit))
    return [best[name] if name in best else None for name in names], vetting


class SwapFreeLayout(AnalysisPass):
    """Set `property_set["layout"]` to embedcheck's best swap-free placement."""

    def __init__(self, target, *, budget_s: float = 60.0):
        super().__init__()
        self.target = target
        self.budget_s = budget_s

    def run(self, dag):
        from qiskit.converters import dag_to_circuit
        circuit = dag_to_circuit(dag)
        physical, _ = choose_layout(circuit, self.target, budget_s=self.budget_s)
        taken = {p for p in physical if p is not None}
        free = iter(q for q in range(self.target.num_qubits) if q not in taken)
        mapping = {}
        for qubit, where in zip(dag.qubits, physical, strict=True):
            mapping[qubit] = where if where is not None else next(free)
        self.property_set["layout"] = Layout(mapping)


class SwapFreeLayoutPlugin(PassManagerStagePlugin):
    """qiskit layout-stage plugin `swap_free` (see the module docstring)."""

    def pass_manager(self, pass_manager_config: PassManagerConfig,
                     optimization_level=None) -> PassManager:
        target = pass_manager_config.target
        if target is None:
            raise TranspilerError("embedcheck: layout_method='swap_free' needs a Target "
                                  "(transpile(..., target=...)) for couplers and calibration")

        def no_layout_yet(property_set):
            return not property_set["layout"]

        stage = PassManager([SetLayout(pass_manager_config.initial_layout)])
        stage.append(ConditionalController(SwapFreeLayout(target), condition=no_layout_yet))
        stage += common.generate_embed_passmanager(target)
        return stage
