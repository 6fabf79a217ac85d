"""Load a patch file (YAML, schema `patch.schema.json`) into a `Patch`.

Circuits are OpenQASM 2 or 3, inline (`qasm: |`) or in a file (`file:`, relative to
the patch file). Lines reported for inline circuits are lines of the YAML file.
Every qubit a circuit uses must be declared under `qubits` with a role.
"""
from __future__ import annotations

from pathlib import Path

from ..patch import EXPERIMENT_ORDER, ROLES, Circuit, Patch
from .errors import InputError, did_you_mean
from .qasm import read_qasm
from .yamlfile import Document, read_yaml


def load_patch(path: str | Path) -> Patch:
    """Read a patch file; raise `InputError` (file, line, key) on any problem."""
    return patch_from_document(read_yaml(path, "patch"))


def patch_from_document(doc: Document) -> Patch:
    """Build a `Patch` from a validated patch document."""
    data = doc.data
    roles: dict[str, str] = {}
    for role in ROLES:
        for i, name in enumerate(data["qubits"].get(role, [])):
            if name in roles:
                raise doc.error(("qubits", role, i),
                                f"qubit '{name}' is declared twice ({roles[name]} and {role})")
            roles[name] = role
    if not roles:
        raise doc.error(("qubits",), "the patch declares no qubits")
    circuits = {}
    for name in data["circuits"]:
        close = did_you_mean(name, [n for n in EXPERIMENT_ORDER if n not in data["circuits"]])
        if close and name not in EXPERIMENT_ORDER:
            raise doc.error(("circuits", name), f"circuit '{name}' is not one of "
                            f"{', '.join(EXPERIMENT_ORDER)}{close}; other names are audited but "
                            "not run in the experiment, so a near miss is refused")
    for name, spec in data["circuits"].items():
        circuits[name] = _circuit(doc, name, spec, roles)
    if not any(name in circuits for name in EXPERIMENT_ORDER):
        raise doc.error(("circuits",), "the patch needs at least one of the circuits "
                                       + ", ".join(EXPERIMENT_ORDER))
    return Patch(name=data["name"], qubits=tuple(roles), roles=roles, circuits=circuits,
                 rounds=data.get("rounds", 1), description=data.get("description", ""),
                 source=doc.file)


def _circuit(doc: Document, name: str, spec: dict, roles: dict) -> Circuit:
    path = ("circuits", name)
    if ("qasm" in spec) == ("file" in spec):
        raise doc.error(path, "give exactly one of 'qasm' (inline text) or 'file'")
    if "qasm" in spec:
        text, file = spec["qasm"], doc.file
        first = doc.lines.get(path + ("qasm", "<text>"), doc.line(path + ("qasm",)))
    else:
        target = Path(doc.file).parent / spec["file"]
        try:
            text = target.read_text(encoding="utf-8")
        except OSError:
            raise doc.error(path + ("file",), f"circuit file '{spec['file']}' not found "
                                              f"(looked for {target})") from None
        file, first = str(target), 1
    ops = read_qasm(text, file=file, first_line=first)
    for op in ops:
        for q in op.qubits:
            if q not in roles:
                raise InputError(f"circuit '{name}' uses qubit '{q}', which the patch does not "
                                 f"declare under 'qubits'", file=op.file, line=op.line)
    return Circuit(name, tuple(ops), qasm=text, file=file)
