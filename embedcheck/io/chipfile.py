"""Load a chip file (YAML, schema `chip.schema.json`) into a `Device`.

The schema checks shapes, types and ranges; this module checks what a schema cannot:
couplers and calibration entries that name missing qubits, duplicates, self-loops,
T2 > 2*T1 (physically impossible: T2 <= 2 T1 for amplitude and phase damping,
Nielsen & Chuang, Quantum Computation and Quantum Information, sec. 8.3).
"""
from __future__ import annotations

from pathlib import Path

from ..device import CouplerCalibration, Device, QubitCalibration, pair
from ..lattices import FAMILIES
from .errors import InputError
from .yamlfile import Document, read_yaml

_QUBIT_KEYS = ("readout_error", "single_qubit_error", "t1_us", "t2_us")


def load_device(path: str | Path) -> Device:
    """Read a chip file; raise `InputError` (file, line, key) on any problem."""
    return device_from_document(read_yaml(path, "chip"))


def device_from_document(doc: Document) -> Device:
    """Build a `Device` from a validated chip document."""
    data = doc.data
    qubits, couplers, positions = _graph(doc)
    known = set(qubits)
    seen: set = set()
    for i, (a, b) in enumerate(couplers):
        _check_pair(doc, ("couplers", i), (a, b), known)
        if pair(a, b) in seen:
            raise doc.error(("couplers", i), f"duplicate coupler [{a}, {b}]")
        seen.add(pair(a, b))
    couplers = tuple(sorted(seen))
    dead_qubits = set()
    for i, q in enumerate(data.get("dead_qubits", [])):
        if q not in known:
            raise doc.error(("dead_qubits", i), f"dead qubit {q} is not a qubit of this chip")
        dead_qubits.add(q)
    dead_couplers = set()
    for i, (a, b) in enumerate(data.get("dead_couplers", [])):
        _check_pair(doc, ("dead_couplers", i), (a, b), known)
        if pair(a, b) not in seen:
            raise doc.error(("dead_couplers", i), f"dead coupler [{a}, {b}] is not a coupler")
        dead_couplers.add(pair(a, b))
    for i, item in enumerate(data.get("positions", [])):
        if item["qubit"] not in known:
            raise doc.error(("positions", i), f"qubit {item['qubit']} is not a qubit of this chip")
        positions[item["qubit"]] = (float(item["x"]), float(item["y"]))
    qubit_cal, coupler_cal = _calibration(doc, known, seen)
    cal = data.get("calibration", {})
    return Device(
        name=data["name"], qubits=tuple(qubits), couplers=couplers, positions=positions,
        qubit_calibration=qubit_cal, coupler_calibration=coupler_cal,
        dead_qubits=frozenset(dead_qubits), dead_couplers=frozenset(dead_couplers),
        native_two_qubit_gate=data.get("native_two_qubit_gate", "cx"),
        description=data.get("description", ""), calibration_timestamp=cal.get("timestamp"),
        source=doc.file)


def _graph(doc: Document):
    data = doc.data
    if "family" in data:
        if "qubits" in data or "couplers" in data:
            raise doc.error(("family",), "give either 'family' or 'qubits' and 'couplers', not both")
        fam = data["family"]
        lattice = FAMILIES[fam["kind"]](fam["rows"], fam["columns"])
        return list(lattice.qubits), list(lattice.couplers), dict(lattice.positions)
    if "qubits" not in data:
        raise doc.error((), "missing required key 'qubits' (or give a 'family')")
    qubits = data["qubits"]
    qubits = list(range(qubits)) if isinstance(qubits, int) else qubits
    if len(set(qubits)) != len(qubits):
        dup = next(q for q in qubits if qubits.count(q) > 1)
        raise doc.error(("qubits",), f"qubit {dup} is listed twice")
    return qubits, [tuple(c) for c in data.get("couplers", [])], {}


def _check_pair(doc, path, ab, known):
    a, b = ab
    for q in (a, b):
        if q not in known:
            raise doc.error(path, f"coupler [{a}, {b}] names qubit {q}, which this chip does not have")
    if a == b:
        raise doc.error(path, f"coupler [{a}, {b}] joins a qubit to itself")


def _calibration(doc: Document, known: set, couplers: set):
    cal = doc.data.get("calibration", {})
    defaults = cal.get("defaults", {})
    per_qubit = {q: {k: defaults.get(k) for k in _QUBIT_KEYS} for q in known}
    for i, item in enumerate(cal.get("qubits", [])):
        q = item["qubit"]
        if q not in known:
            raise doc.error(("calibration", "qubits", i, "qubit"),
                            f"qubit {q} is not a qubit of this chip")
        per_qubit[q].update({k: v for k, v in item.items() if k != "qubit"})
        _check_t2(doc, ("calibration", "qubits", i), q, per_qubit[q])
    per_coupler = {c: {"two_qubit_error": defaults.get("two_qubit_error"),
                       "duration_ns": defaults.get("two_qubit_duration_ns")} for c in couplers}
    seen = set()
    for i, item in enumerate(cal.get("couplers", [])):
        a, b = item["coupler"]
        path = ("calibration", "couplers", i, "coupler")
        _check_pair(doc, path, (a, b), known)
        if pair(a, b) not in couplers:
            raise doc.error(path, f"[{a}, {b}] is not a coupler of this chip")
        if pair(a, b) in seen:
            raise doc.error(path, f"coupler [{a}, {b}] has two calibration entries")
        seen.add(pair(a, b))
        per_coupler[pair(a, b)].update({k: v for k, v in item.items() if k != "coupler"})
    return ({q: QubitCalibration(**v) for q, v in per_qubit.items()},
            {c: CouplerCalibration(**v) for c, v in per_coupler.items()})


def _check_t2(doc, path, q, values):
    t1, t2 = values.get("t1_us"), values.get("t2_us")
    if t1 is not None and t2 is not None and t2 > 2 * t1:
        raise doc.error(path + ("t2_us",),
                        f"qubit {q}: t2_us {t2} exceeds 2 * t1_us = {2 * t1} (impossible)")
