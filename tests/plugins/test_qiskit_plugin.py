"""The qiskit layout-stage plugin: reached through `transpile(..., layout_method=...)` by its
installed entry point, it picks `find`'s best placement and never falls back to routing.

Reference: qiskit's own plugin manager (`list_stage_plugins`) must list it, and qiskit's
transpiler with `routing_method="none"` must accept the layout (it refuses any circuit
whose two-qubit gates do not sit on couplers)."""
import pytest
from qiskit import QuantumCircuit, qasm3, transpile
from qiskit.transpiler import TranspilerError
from qiskit.transpiler.preset_passmanagers.plugin import list_stage_plugins

from embedcheck import device_target, load_device, load_patch, vet_patch
from embedcheck.io.qasm import declared_qubits
from helpers import DEMO_CHIP, ROOT


def test_plugin_is_installed_under_the_layout_entry_point():
    assert "swap_free" in list_stage_plugins("layout")


def test_transpile_with_our_layout_gives_finds_best_placement():
    device = load_device(DEMO_CHIP)
    target = device_target(device)
    round_text = (ROOT / "samples" / "flagged_weight4_round.qasm").read_text()
    circuit = qasm3.loads(round_text) if "OPENQASM 3" in round_text else \
        QuantumCircuit.from_qasm_str(round_text)
    out = transpile(circuit, target=target, layout_method="swap_free", routing_method="none",
                    optimization_level=1, seed_transpiler=3)
    layout = out.layout.initial_virtual_layout(filter_ancillas=True)
    chosen = [layout[q] for q in circuit.qubits]
    # find's best for the same circuit read as a patch (the bare OpenQASM file).
    patch = load_patch(ROOT / "samples" / "flagged_weight4_round.qasm")
    best = vet_patch(device, patch).ranking.placements[0].as_dict(patch)
    assert chosen == [best[name] for name in declared_qubits(round_text)]
    # Every two-qubit gate of the output sits on a coupler of the chip.
    couplers = {tuple(sorted(c)) for c in device.couplers}
    for inst in out.data:
        if inst.operation.num_qubits == 2:
            pair = tuple(sorted(out.find_bit(q).index for q in inst.qubits))
            assert pair in couplers


def test_no_swap_free_layout_is_an_error_with_our_reason_never_routing():
    device = load_device(DEMO_CHIP)
    star = QuantumCircuit(5)
    for leaf in range(1, 5):
        star.cx(0, leaf)                       # degree 4: no heavy-hex qubit has 4 couplers
    with pytest.raises(TranspilerError, match="embedcheck: no swap-free layout"):
        transpile(star, target=device_target(device), layout_method="swap_free",
                  routing_method="none")


def test_given_initial_layout_wins():
    device = load_device(DEMO_CHIP)
    qc = QuantumCircuit(2)
    qc.cx(0, 1)
    a, b = device.couplers[5]
    out = transpile(qc, target=device_target(device), layout_method="swap_free",
                    initial_layout=[a, b], routing_method="none")
    layout = out.layout.initial_virtual_layout(filter_ancillas=True)
    assert [layout[q] for q in qc.qubits] == [a, b]
