"""Load a patch: a YAML patch file, a bare OpenQASM or stim file, or qiskit circuits.

YAML circuits are OpenQASM 2 or 3, inline (`qasm: |`) or in a file (`file:`), or a
stim file (`stim:`), paths relative to the patch file. Lines reported for inline
circuits are lines of the YAML file. Roles come from `qubits` (explicit lists), from
`role_registers` (register name -> role), or, when neither is given, are inferred
from the circuits (`embedcheck.model.patch.infer_roles`) and the report says so.

A bare `.qasm` file is a patch with one circuit, `round`, run once; a `.stim` file is
split at its top-level REPEAT block into prep, round and readout (see `stimfile`),
with stim's detectors and observable.
"""
from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any, Mapping

from ..errors import InputError, did_you_mean
from ..model.codes import family_yaml
from ..model.constraints import Constraints, build
from ..model.patch import (
    EXPERIMENT_ORDER,
    ROLES,
    Circuit,
    Detector,
    Operation,
    Patch,
    experiment_order,
    infer_roles,
    natural_sort_key,
)
from .files import read_input
from .limits import check_count, max_experiment_operations, max_operations, max_qubits
from .qasm import read_qasm
from .stimfile import load_stim, read_stim
from .yamlfile import Document, key_name, parse_yaml, read_yaml

__all__ = ["input_root", "load_patch", "patch_from_document", "patch_from_family",
           "patch_from_qiskit", "patch_from_stim", "patch_from_stim_experiment"]


def load_patch(path: str | Path) -> Patch:
    """Read a patch from YAML, OpenQASM (.qasm) or stim (.stim); raise `InputError`."""
    suffix = Path(path).suffix.lower()
    if suffix == ".stim":
        return patch_from_stim_experiment(load_stim(path), name=Path(path).stem, source=str(path))
    if suffix in (".qasm", ".qasm3", ".qasm2"):
        text = read_input(path)
        ops = read_qasm(text, file=str(path))
        return _with_roles(Path(path).stem,
                           {"round": Circuit("round", tuple(ops), text, str(path))},
                           rounds=1, source=str(path))
    return patch_from_document(read_yaml(path, "patch"))


def patch_from_family(family: str, *, distance: int = 3, rounds: int = 2, basis: str = "z",
                      prep: str | None = None) -> Patch:
    """A `Patch` of a built-in code family (`embedcheck.model.codes`), read from its patch
    file text by the ordinary loader, so it is checked like any file.

    >>> patch = patch_from_family("repetition", distance=3, rounds=2)
    >>> patch.num_qubits, len(patch.detectors), patch.observable
    (5, 6, (4,))
    """
    text = family_yaml(family, distance=distance, rounds=rounds, basis=basis, prep=prep)
    from dataclasses import replace
    patch = patch_from_document(parse_yaml(text, f"{family}.yaml", "patch"))
    return replace(patch, source=None)


def patch_from_qiskit(circuits, *, name: str = "patch", rounds: int = 1,
                      roles: Mapping[str, str] | None = None,
                      role_registers: Mapping[str, list] | None = None) -> Patch:
    """A patch from qiskit `QuantumCircuit`s: one (taken as `round`) or a {name: circuit} map.

    Each circuit goes through qiskit's OpenQASM 3 exporter and our reader, so its
    operations are exactly what the exporter writes; register qubit `d[2]` is `d2`.
    """
    from qiskit import QuantumCircuit, qasm3

    if isinstance(circuits, QuantumCircuit):
        circuits = {"round": circuits}
    built = {}
    for cname, qc in circuits.items():
        text = qasm3.dumps(qc)
        built[cname] = Circuit(cname, tuple(read_qasm(text, file=f"<{cname}: QuantumCircuit>")),
                               text, None)
    return _with_roles(name, built, rounds=rounds, roles=roles, role_registers=role_registers)


def patch_from_stim(circuit, *, name: str = "patch") -> Patch:
    """A patch from a `stim.Circuit` (split at its REPEAT block; detectors as stim gives)."""
    return patch_from_stim_experiment(read_stim(circuit), name=name, source=None)


def patch_from_stim_experiment(exp, *, name: str, source: str | None) -> Patch:
    circuits = {k: Circuit(k, v, None, source) for k, v in exp.circuits.items()}
    patch = _with_roles(name, circuits, rounds=exp.rounds, source=source)
    detectors = tuple(Detector(f"D{i}", m, line) for i, (m, line)
                      in enumerate(zip(exp.detectors, exp.detector_lines, strict=False)))
    return _replace(patch, detectors=detectors, observable=exp.observable)


def patch_from_document(doc: Document) -> Patch:
    """Build a `Patch` from a validated patch document."""
    data = doc.data
    explicit = _explicit_roles(doc) if "qubits" in data else None
    if explicit is not None and "role_registers" in data:
        raise doc.error(("role_registers",), "give either 'qubits' or 'role_registers', not both")
    for name in data["circuits"]:
        close = did_you_mean(name, [n for n in EXPERIMENT_ORDER if n not in data["circuits"]])
        if close and name not in EXPERIMENT_ORDER:
            raise doc.error(("circuits", name), f"circuit '{name}' is not one of "
                            f"{', '.join(EXPERIMENT_ORDER)}{close}; other names are audited but "
                            "not run in the experiment, so a near miss is refused")
    circuits = {name: _circuit(doc, name, spec) for name, spec in data["circuits"].items()}
    if not any(name in circuits for name in EXPERIMENT_ORDER):
        raise doc.error(("circuits",), "the patch needs at least one of the circuits "
                                       + ", ".join(EXPERIMENT_ORDER))
    used = _used_qubits(circuits)
    if explicit is not None:
        for cname, c in circuits.items():
            for op in c.operations:
                for q in (op.qubits if op.kind != "barrier" else ()):
                    if q not in explicit:
                        raise InputError(f"circuit '{cname}' uses qubit '{q}', which the patch "
                                         f"does not declare under 'qubits'"
                                         f"{did_you_mean(q, explicit)}", file=op.file, line=op.line)
    registers = None
    if "role_registers" in data:
        registers = {}
        for role, names in data["role_registers"].items():
            for i, reg in enumerate(names):
                if not any(_register_of(q) == reg for q in used):
                    raise doc.error(("role_registers", role, i),
                                    f"register '{reg}' is not used by any circuit of the patch")
                registers[reg] = role
    patch = _with_roles(data["name"], circuits, rounds=data.get("rounds", 1), roles=explicit,
                        role_registers=registers, source=doc.file,
                        description=data.get("description", ""), doc=doc)
    record = _Record(patch)
    detectors = tuple(Detector(d.get("name", f"D{i}"),
                               tuple(_resolve(doc, patch, ("detectors", i, "measurements", k), ref,
                                              record)
                                     for k, ref in enumerate(d["measurements"])),
                               doc.line(("detectors", i)))
                      for i, d in enumerate(data.get("detectors", [])))
    observable = tuple(_resolve(doc, patch, ("observable", k), ref, record)
                       for k, ref in enumerate(data.get("observable", [])))
    return _replace(patch, detectors=detectors, observable=observable,
                    constraints=_constraints(doc) if "constraints" in data else None)


def _constraints(doc: Document) -> Constraints:
    spec = doc.data["constraints"]
    for i, text in enumerate(spec.get("require", [])):
        try:
            build([text])
        except InputError as err:
            raise doc.error(("constraints", "require", i), err.message) from None
    return build(spec.get("require", []), exclude_qubits=spec.get("exclude_qubits", ()),
                 exclude_couplers=[tuple(c) for c in spec.get("exclude_couplers", [])],
                 region=spec.get("region"), region_box=spec.get("region_box"),
                 forbid_direction_fixes=spec.get("forbid_direction_fixes", False))


def _explicit_roles(doc: Document) -> dict[str, str]:
    roles: dict[str, str] = {}
    for role in ROLES:
        for i, name in enumerate(doc.data["qubits"].get(role, [])):
            if name in roles:
                raise doc.error(("qubits", role, i),
                                f"qubit '{name}' is declared twice ({roles[name]} and {role})")
            roles[name] = role
    if not roles:
        raise doc.error(("qubits",), "the patch declares no qubits")
    return roles


def _with_roles(name, circuits, *, rounds, roles=None, role_registers=None, source=None,
                description="", doc=None) -> Patch:
    inferred = roles is None and role_registers is None
    if roles is None:
        used = _used_qubits(circuits)
        if role_registers is not None:
            roles = {}
            for q in used:
                reg = _register_of(q)
                if reg not in role_registers:
                    where = dict(file=doc.file, line=doc.line(("role_registers",))) if doc else {}
                    raise InputError(f"qubit '{q}' (register '{reg}') has no role: add its "
                                     "register to 'role_registers'", **where)
                roles[q] = role_registers[reg]
        else:
            roles = infer_roles(circuits, rounds)
        roles = {q: roles[q] for q in sorted(roles, key=natural_sort_key)}
    if not roles and (doc is not None or source is not None):
        where = dict(file=doc.file, line=doc.line(("circuits",))) if doc is not None \
            else dict(file=source)
        raise InputError("no circuit of the patch acts on a qubit: nothing to place", **where)
    circuits = {n: _trim_barriers(c, roles) for n, c in circuits.items()}
    _check_size(roles, circuits, rounds, source, doc)
    return Patch(name=name, qubits=tuple(roles), roles=roles, circuits=circuits, rounds=rounds,
                 description=description, source=source, roles_inferred=inferred)


def _check_size(roles, circuits, rounds, source, doc) -> None:
    """A patch's qubits, and the operations of its whole experiment (every run of the
    round), stay within the limits (`embedcheck.io.limits`)."""
    where = dict(file=doc.file, line=doc.line(("rounds",)), key="rounds") if doc is not None \
        else dict(file=source)
    check_count(len(roles), max_qubits(), what="patch qubits", setting="EMBEDCHECK_MAX_QUBITS",
                **where)
    total = sum(len(circuits[name].operations) * times
                for name, times in experiment_order(circuits, rounds))
    check_count(total, max_experiment_operations(), what="operations in the experiment "
                f"(prep, {rounds:,} x round, readout)", setting="EMBEDCHECK_MAX_OPERATIONS",
                **where)


def _trim_barriers(circuit: Circuit, qubits) -> Circuit:
    """Barriers keep only patch qubits (a barrier over a whole register may name others)."""
    ops = []
    for op in circuit.operations:
        if op.kind == "barrier":
            kept = tuple(q for q in op.qubits if q in qubits)
            if not kept:
                continue
            if kept != op.qubits:
                op = Operation(op.name, kept, op.kind, op.line, op.text, op.file, op.written,
                               op.conditional, op.clbit)
        ops.append(op)
    return Circuit(circuit.name, tuple(ops), circuit.qasm, circuit.file)


def _replace(patch: Patch, **changes: Any) -> Patch:
    fields: dict[str, Any] = dict(
        name=patch.name, qubits=patch.qubits, roles=dict(patch.roles),
        circuits=dict(patch.circuits), rounds=patch.rounds, description=patch.description,
        source=patch.source, detectors=patch.detectors, observable=patch.observable,
        roles_inferred=patch.roles_inferred, constraints=patch.constraints)
    fields.update(changes)
    return Patch(**fields)


def _used_qubits(circuits) -> list[str]:
    """Qubits some non-barrier operation acts on."""
    seen: dict[str, None] = {}
    for c in circuits.values():
        for op in c.operations:
            if op.kind != "barrier":
                seen.update(dict.fromkeys(op.qubits))
    return sorted(seen, key=natural_sort_key)


def _register_of(qubit: str) -> str:
    """'d12' -> 'd' (register names ending in a digit cannot be told apart this way)."""
    return re.sub(r"\d+$", "", qubit) or qubit


def _circuit(doc: Document, name: str, spec: dict) -> Circuit:
    path = ("circuits", name)
    given = [k for k in ("qasm", "file", "stim") if k in spec]
    if len(given) != 1:
        raise doc.error(path, "give exactly one of 'qasm' (inline text), 'file' (OpenQASM) or "
                              "'stim' (a stim file)")
    if "qasm" in spec:
        text, file = spec["qasm"], doc.file
        block = path + ("qasm", "<text>") in doc.lines
        first = doc.lines.get(path + ("qasm", "<text>"), doc.line(path + ("qasm",)))
        parsed = read_qasm(text, file=file, first_line=first or 1)
        if not block:
            # A quoted or plain scalar folds its lines: only the key's line is known.
            from dataclasses import replace
            parsed = [replace(op, line=first) for op in parsed]
        return Circuit(name, tuple(parsed), text, file)
    key = given[0]
    target = _circuit_file(doc, path + (key,), spec[key])
    try:
        text = read_input(target, what="circuit file")
    except InputError as err:             # point at the patch file's line, not only the path
        raise doc.error(path + (key,), f"circuit file '{spec[key]}': {err.message}") from None
    if key == "stim":
        exp = read_stim(text, file=str(target))
        order = experiment_order(exp.circuits, exp.rounds)
        check_count(sum(len(exp.circuits[part]) * times for part, times in order),
                    max_operations(), what="operations once its REPEAT block is unrolled",
                    setting="EMBEDCHECK_MAX_OPERATIONS", file=doc.file,
                    line=doc.line(path + (key,)), key=key_name(path + (key,)))
        ops: list[Operation] = []
        for part, times in order:
            ops += list(exp.circuits[part]) * times
        return Circuit(name, tuple(ops), None, str(target))
    return Circuit(name, tuple(read_qasm(text, file=str(target))), text, str(target))


def input_root(patch_file: str | Path) -> Path:
    """The folder a patch file's `file:` and `stim:` paths must stay inside: the patch
    file's own folder, or EMBEDCHECK_INPUT_ROOT when set (for shared circuit folders)."""
    given = os.environ.get("EMBEDCHECK_INPUT_ROOT")
    return Path(given).resolve() if given else Path(patch_file).resolve().parent


def _circuit_file(doc: Document, where, name) -> Path:
    """The path a `file:`/`stim:` entry names, confined to `input_root` (a patch file from
    a pull request must not make CI read, and echo, files elsewhere on the machine)."""
    if not isinstance(name, str) or not name.strip():
        raise doc.error(where, "give the circuit file's path relative to the patch file")
    target = Path(doc.file).parent / name
    root = input_root(doc.file)
    real = target.resolve()
    if real != root and root not in real.parents:
        raise doc.error(where, f"circuit file '{name}' lies outside {root}: keep circuit files "
                               "in the patch file's folder (or set EMBEDCHECK_INPUT_ROOT)")
    return target


_REF = re.compile(r"^(?P<circuit>[A-Za-z_][A-Za-z0-9_-]*)(\[(?P<rep>[0-9]+)\])?"
                  r"(:(?P<bit>.+)|#(?P<k>[0-9]+))$")


class _Record:
    """Where each circuit's measurements sit in the experiment's record, computed once per
    patch (the record itself has rounds x measurements entries, too many to search for
    every reference of a big code)."""

    def __init__(self, patch: Patch):
        self.times = dict(patch.experiment())
        self.start: dict[str, int] = {}          # first index of the circuit's first run
        self.count: dict[str, int] = {}          # measurements in one run
        self.bits: dict[str, dict] = {}          # circuit -> classical bit -> positions in a run
        at = 0
        for name, times in patch.experiment():
            measures = patch.circuits[name].measurements
            self.start[name], self.count[name] = at, len(measures)
            bits: dict = {}
            for k, op in enumerate(measures):
                if op.clbit:
                    bits.setdefault(op.clbit, []).append(k)
            self.bits[name] = bits
            at += len(measures) * times


def _resolve(doc: Document, patch: Patch, path, ref: str, record: _Record) -> int:
    """A measurement reference -> its index in the experiment's measurement record."""
    m = _REF.match(ref)
    if m is None:
        raise doc.error(path, "not a measurement reference: write circuit[repetition]:bit or "
                              "circuit[repetition]#k")
    circuit, rep = m.group("circuit"), int(m.group("rep") or 0)
    times = record.times
    if circuit not in patch.circuits:
        raise doc.error(path, f"'{ref}': the patch has no circuit '{circuit}'"
                              f"{did_you_mean(circuit, patch.circuits)}")
    if circuit not in times:
        raise doc.error(path, f"'{ref}': circuit '{circuit}' is not run in the experiment")
    if rep >= times[circuit]:
        raise doc.error(path, f"'{ref}': circuit '{circuit}' runs {times[circuit]} time(s); "
                              f"repetitions count from 0")
    first = record.start[circuit] + rep * record.count[circuit]
    if m.group("k") is not None:
        k = int(m.group("k"))
        if k >= record.count[circuit]:
            raise doc.error(path, f"'{ref}': circuit '{circuit}' has only "
                                  f"{record.count[circuit]} measurement(s)")
        return first + k
    bit = m.group("bit")
    hits = record.bits[circuit].get(bit, [])
    if not hits:
        raise doc.error(path, f"'{ref}': no measurement of circuit '{circuit}' writes bit '{bit}'"
                              f"{did_you_mean(bit, list(record.bits[circuit]))}")
    if len(hits) > 1:
        raise doc.error(path, f"'{ref}': {len(hits)} measurements write bit '{bit}'; refer to one "
                              f"as '{circuit}[{rep}]#k'")
    return first + hits[0]
