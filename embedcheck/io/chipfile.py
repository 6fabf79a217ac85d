"""Load a chip file (YAML, schema `chip.schema.json`) into a `Device`, or all its snapshots.

The schema checks shapes, types and ranges; this module checks what a schema cannot:
couplers and calibration entries that name missing qubits, duplicates, self-loops,
timestamps that do not parse, and T2 > 2*T1 (impossible: T2 <= 2 T1 for amplitude
and phase damping, Nielsen & Chuang, Quantum Computation and Quantum Information,
sec. 8.3; the idle-noise formulas go negative beyond it).

A chip file holds one `calibration`, or a list of `snapshots` (each a calibration with
its own timestamp and dead parts); a folder of chip files is a list of snapshots too,
and then every file must describe the same qubits and couplers.
"""
from __future__ import annotations

import datetime as dt
from pathlib import Path

from ..errors import InputError
from ..model.device import CouplerCalibration, Device, QubitCalibration, pair
from ..model.lattices import FAMILIES, Lattice, build_family, cut
from .files import note_input
from .limits import SNAPSHOT_FACTOR, check_count, family_qubits, max_qubits
from .yamlfile import Document, read_yaml

__all__ = ["device_from_document", "devices_from_document", "load_device", "load_snapshots"]

_QUBIT_KEYS = ("readout_error", "single_qubit_error", "reset_error", "t1_us", "t2_us",
               "single_qubit_duration_ns", "measurement_duration_ns")


def load_device(path: str | Path) -> Device:
    """Read a chip file; with several snapshots, the newest. Raises `InputError`."""
    snapshots = load_snapshots(path)
    return snapshots[-1]


def load_snapshots(path: str | Path) -> tuple[Device, ...]:
    """Every calibration snapshot of a chip file or a folder of chip files, oldest first."""
    path = Path(path)
    if path.is_dir():
        note_input(path)
        files = sorted(p for p in path.iterdir() if p.suffix in (".yaml", ".yml"))
        if not files:
            raise InputError("the folder holds no .yaml chip files", file=str(path))
        devices = []
        for f in files:
            devices += devices_from_document(read_yaml(f, "chip"))
            check_count(sum(d.num_qubits for d in devices), SNAPSHOT_FACTOR * max_qubits(),
                        what="qubit calibrations (snapshots x qubits) in the folder",
                        setting="EMBEDCHECK_MAX_QUBITS", file=str(f))
        _same_graph(devices)
        for d in devices:
            if len(devices) > 1 and d.calibration_timestamp is None:
                raise InputError("every snapshot in a folder needs a calibration 'timestamp' to "
                                 "be told apart", file=d.source)
    else:
        devices = devices_from_document(read_yaml(path, "chip"))
    return tuple(sorted(devices, key=lambda d: _when(d.calibration_timestamp)))


def device_from_document(doc: Document) -> Device:
    """The newest snapshot described by a validated chip document."""
    return max(devices_from_document(doc), key=lambda d: _when(d.calibration_timestamp))


def devices_from_document(doc: Document) -> list[Device]:
    """One `Device` per calibration snapshot of a validated chip document."""
    data = doc.data
    qubits, couplers, positions = _graph(doc)
    known = set(qubits)
    for i, item in enumerate(data.get("positions", [])):
        if item["qubit"] not in known:
            raise doc.error(("positions", i), f"qubit {item['qubit']} is not a qubit of this chip")
        positions[item["qubit"]] = (float(item["x"]), float(item["y"]))
    directed = _directions(doc, known, couplers)
    base_dead = _dead(doc, (), known, couplers)
    if "calibration" in data and "snapshots" in data:
        raise doc.error(("snapshots",), "give either 'calibration' or 'snapshots', not both")
    paths: list[tuple[str | int, ...]]
    if "snapshots" in data:
        paths = [("snapshots", i) for i in range(len(data["snapshots"]))]
        check_count(len(paths) * len(qubits), SNAPSHOT_FACTOR * max_qubits(),
                    what="qubit calibrations (snapshots x qubits)",
                    setting="EMBEDCHECK_MAX_QUBITS", file=doc.file,
                    line=doc.line(("snapshots",)), key="snapshots")
    else:
        paths = [("calibration",)]
    devices = []
    for path in paths:
        cal = _get(data, path) or {}
        dead_q, dead_c = _dead(doc, path, known, couplers)
        qubit_cal, coupler_cal = _calibration(doc, path, known, couplers)
        stamp = cal.get("timestamp")
        if stamp is not None:
            _check_timestamp(doc, path + ("timestamp",), stamp)
        devices.append(Device(
            name=data["name"], qubits=tuple(qubits), couplers=couplers, positions=positions,
            qubit_calibration=qubit_cal, coupler_calibration=coupler_cal,
            dead_qubits=frozenset(base_dead[0] | dead_q),
            dead_couplers=frozenset(base_dead[1] | dead_c), directed=directed,
            native_two_qubit_gate=data.get("native_two_qubit_gate", "cx"),
            description=data.get("description", ""), calibration_timestamp=stamp,
            source=doc.file, placeholder_calibration=_is_placeholder(cal)))
    if len(paths) > 1:
        stamps = [d.calibration_timestamp for d in devices]
        for i, stamp in enumerate(stamps):
            if stamp is None:
                raise doc.error(paths[i], "every snapshot needs a 'timestamp' to be told apart")
            if stamps.index(stamp) != i:
                raise doc.error(paths[i] + ("timestamp",), f"two snapshots share timestamp {stamp}")
    return devices


def _get(data, path):
    """The value at a key path, or None where a key is absent (calibration is optional)."""
    for key in path:
        if not isinstance(data, (dict, list)) or (isinstance(data, dict) and key not in data):
            return None
        data = data[key]
    return data


def _graph(doc: Document):
    data = doc.data
    if "family" in data:
        if "qubits" in data or "couplers" in data:
            raise doc.error(("family",),
                            "give either 'family' or 'qubits' and 'couplers', not both")
        fam = data["family"]
        _, params = FAMILIES[fam["kind"]]
        for p in params:
            if p not in fam:
                raise doc.error(("family",), f"family '{fam['kind']}' needs '{p}'")
        for extra in set(fam) - set(params) - {"kind"}:
            raise doc.error(("family", extra), f"family '{fam['kind']}' takes "
                            f"{' and '.join(params)}, not '{extra}'")
        size = {p: fam[p] for p in params}
        check_count(family_qubits(fam["kind"], **size), max_qubits(), what=f"qubits in a "
                    f"{fam['kind']} family of this size", setting="EMBEDCHECK_MAX_QUBITS",
                    file=doc.file, line=doc.line(("family",)), key="family")
        try:
            lattice = build_family(fam["kind"], **size)
        except InputError as exc:
            raise doc.error(("family",), exc.message) from None
        qubits, couplers, positions = list(lattice.qubits), list(lattice.couplers), \
            dict(lattice.positions)
    elif "qubits" in data:
        qubits = data["qubits"]
        check_count(qubits if isinstance(qubits, int) else len(qubits), max_qubits(),
                    what="qubits", setting="EMBEDCHECK_MAX_QUBITS", file=doc.file,
                    line=doc.line(("qubits",)), key="qubits")
        qubits = list(range(qubits)) if isinstance(qubits, int) else qubits
        if len(set(qubits)) != len(qubits):
            seen_q: set = set()
            dup = None
            for q in qubits:
                if q in seen_q:
                    dup = q
                    break
                seen_q.add(q)
            raise doc.error(("qubits",), f"qubit {dup} is listed twice")
        couplers, positions = [tuple(c) for c in data.get("couplers", [])], {}
    else:
        raise doc.error((), "missing required key 'qubits' (or give a 'family')")
    known = set(qubits)
    seen: set = set()
    for i, (a, b) in enumerate(couplers):
        _check_pair(doc, ("couplers", i), (a, b), known)
        if pair(a, b) in seen:
            raise doc.error(("couplers", i), f"duplicate coupler [{a}, {b}]")
        seen.add(pair(a, b))
    removed_q = set()
    for i, q in enumerate(data.get("remove_qubits", [])):
        if q not in known:
            raise doc.error(("remove_qubits", i), f"qubit {q} is not a qubit of this chip")
        removed_q.add(q)
    removed_c = []
    for i, (a, b) in enumerate(data.get("remove_couplers", [])):
        if pair(a, b) not in seen:
            raise doc.error(("remove_couplers", i), f"[{a}, {b}] is not a coupler of this chip")
        removed_c.append((a, b))
    lattice = cut(Lattice("chip", tuple(qubits), tuple(sorted(seen)), positions),
                  remove_qubits=removed_q, remove_couplers=removed_c)
    return list(lattice.qubits), lattice.couplers, dict(lattice.positions)


def _directions(doc, known, couplers) -> dict:
    directed: dict[tuple[int, int], tuple[int, int]] = {}
    present = set(couplers)
    for i, (a, b) in enumerate(doc.data.get("directed_couplers", [])):
        path = ("directed_couplers", i)
        _check_pair(doc, path, (a, b), known)
        key = pair(a, b)
        if key not in present:
            raise doc.error(path, f"[{a}, {b}] is not a coupler of this chip")
        if key in directed:
            if directed[key] == (a, b):
                raise doc.error(path, f"directed coupler [{a}, {b}] is listed twice")
            raise doc.error(path, f"coupler [{a}, {b}] is listed in both directions; leave it "
                                  "out of 'directed_couplers' if its gate runs both ways")
        directed[key] = (a, b)
    return directed


def _dead(doc, path, known, couplers):
    data = _get(doc.data, path) or {}
    dead_q, dead_c = set(), set()
    for i, q in enumerate(data.get("dead_qubits", [])):
        if q not in known:
            raise doc.error(path + ("dead_qubits", i),
                            f"dead qubit {q} is not a qubit of this chip")
        dead_q.add(q)
    for i, (a, b) in enumerate(data.get("dead_couplers", [])):
        _check_pair(doc, path + ("dead_couplers", i), (a, b), known)
        if pair(a, b) not in set(couplers):
            raise doc.error(path + ("dead_couplers", i),
                            f"dead coupler [{a}, {b}] is not a coupler")
        dead_c.add(pair(a, b))
    return dead_q, dead_c


def _check_pair(doc, path, ab, known):
    a, b = ab
    for q in (a, b):
        if q not in known:
            raise doc.error(path,
                            f"coupler [{a}, {b}] names qubit {q}, which this chip does not have")
    if a == b:
        raise doc.error(path, f"coupler [{a}, {b}] joins a qubit to itself")


def _calibration(doc: Document, path, known: set, couplers):
    cal = _get(doc.data, path) or {}
    defaults = cal.get("defaults", {})
    _check_t2(doc, path + ("defaults",), None, defaults)
    per_qubit = {q: {k: defaults.get(k) for k in _QUBIT_KEYS} for q in known}
    seen_q = set()
    for i, item in enumerate(cal.get("qubits", [])):
        q = item["qubit"]
        if q not in known:
            raise doc.error(path + ("qubits", i, "qubit"), f"qubit {q} is not a qubit of this chip")
        if q in seen_q:
            raise doc.error(path + ("qubits", i, "qubit"), f"qubit {q} has two calibration entries")
        seen_q.add(q)
        per_qubit[q].update({k: v for k, v in item.items() if k != "qubit"})
        _check_t2(doc, path + ("qubits", i), q, per_qubit[q])
    present = set(couplers)
    per_coupler = {c: {"two_qubit_error": defaults.get("two_qubit_error"),
                       "duration_ns": defaults.get("two_qubit_duration_ns")} for c in present}
    seen = set()
    for i, item in enumerate(cal.get("couplers", [])):
        a, b = item["coupler"]
        where = path + ("couplers", i, "coupler")
        _check_pair(doc, where, (a, b), known)
        if pair(a, b) not in present:
            raise doc.error(where, f"[{a}, {b}] is not a coupler of this chip")
        if pair(a, b) in seen:
            raise doc.error(where, f"coupler [{a}, {b}] has two calibration entries")
        seen.add(pair(a, b))
        per_coupler[pair(a, b)].update({k: v for k, v in item.items() if k != "coupler"})
    return ({q: QubitCalibration(**v) for q, v in per_qubit.items()},
            {c: CouplerCalibration(**v) for c, v in per_coupler.items()})


def _check_t2(doc, path, q, values):
    t1, t2 = values.get("t1_us"), values.get("t2_us")
    if t1 is not None and t2 is not None and t2 > 2 * t1:
        who = f"qubit {q}: " if q is not None else "default "
        raise doc.error(path + ("t2_us",),
                        f"{who}t2_us {t2} exceeds 2 * t1_us = {2 * t1} (impossible)")


def _is_placeholder(cal) -> bool:
    """True when the calibration's `note` starts with PLACEHOLDER, the mark `embedcheck
    generate` writes ('note: PLACEHOLDER calibration, not a measurement')."""
    return str(cal.get("note", "")).lstrip().startswith("PLACEHOLDER")


def _check_timestamp(doc, path, stamp):
    try:
        _parse_time(stamp)
    except ValueError:
        raise doc.error(path, "the timestamp does not parse: use ISO 8601, "
                              "e.g. 2026-11-30T06:00:00Z") from None


def _parse_time(stamp: str) -> dt.datetime:
    when = dt.datetime.fromisoformat(stamp.replace("Z", "+00:00"))
    return when if when.tzinfo else when.replace(tzinfo=dt.timezone.utc)


def _when(stamp):
    return _parse_time(stamp) if stamp else dt.datetime.min.replace(tzinfo=dt.timezone.utc)


def _same_graph(devices):
    first = devices[0]
    for other in devices[1:]:
        if set(other.qubits) != set(first.qubits):
            q = sorted(set(other.qubits) ^ set(first.qubits))[0]
            raise InputError(f"snapshot's qubits differ from {first.source}: qubit {q} is in one "
                             "and not the other", file=other.source)
        if set(other.couplers) != set(first.couplers):
            c = sorted(set(other.couplers) ^ set(first.couplers))[0]
            raise InputError(f"snapshot's couplers differ from {first.source}: coupler "
                             f"[{c[0]}, {c[1]}] is in one and not the other", file=other.source)
        if dict(other.directed) != dict(first.directed) or \
                other.native_two_qubit_gate != first.native_two_qubit_gate:
            raise InputError(f"snapshot's native gate or directions differ from {first.source}",
                             file=other.source)
