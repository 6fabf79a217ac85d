"""Constraints on placements: predicates over chip qubits and couplers, not search special cases.

- per-role bounds on a qubit's calibration (`ancilla: readout_error <= 0.03`): a patch
  qubit of that role may only sit on a chip qubit that meets every bound;
- bounds on couplers (`two_qubit_error <= 0.02`): a patch pair may only use a coupler
  that meets them;
- excluded qubits and couplers, and a region (a list of qubits, or a bounding box of
  drawing positions) to search in;
- `forbid_direction_fixes`: every CNOT must run in its coupler's native direction.

A figure the calibration does not give fails its bound (it cannot be shown to hold).
Dead qubits and couplers are always excluded, constraints or not.

    >>> parse_bound("readout_error <= 0.03")
    Bound(figure='readout_error', op='<=', value=0.03)
    >>> parse_bound("t2_us >= 80").holds(95.0)
    True
"""
from __future__ import annotations

import operator
import re
from collections.abc import Collection, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from ..errors import InputError, did_you_mean
from .device import Device, Pair, pair

__all__ = ["COUPLER_FIGURES", "QUBIT_FIGURES", "Bound", "Constraints", "build", "parse_bound",
           "parse_requirement"]

QUBIT_FIGURES = ("readout_error", "single_qubit_error", "reset_error", "t1_us", "t2_us",
                 "single_qubit_duration_ns", "measurement_duration_ns")
COUPLER_FIGURES = ("two_qubit_error", "duration_ns")
_OPS = {"<=": operator.le, ">=": operator.ge, "<": operator.lt, ">": operator.gt}


@dataclass(frozen=True)
class Bound:
    figure: str
    op: str
    value: float

    def holds(self, value: float | None) -> bool:
        return value is not None and _OPS[self.op](value, self.value)

    def __str__(self) -> str:
        return f"{self.figure} {self.op} {self.value:g}"


@dataclass(frozen=True)
class Constraints:
    """Which chip qubits each role may use and which couplers patch pairs may use."""

    roles: Mapping[str, tuple[Bound, ...]] = field(default_factory=dict)
    couplers: tuple[Bound, ...] = ()
    exclude_qubits: frozenset[int] = frozenset()
    exclude_couplers: frozenset[Pair] = frozenset()
    region: frozenset[int] | None = None
    region_box: tuple[float, float, float, float] | None = None
    forbid_direction_fixes: bool = False

    @property
    def empty(self) -> bool:
        return self == Constraints()

    def qubits(self, device: Device) -> set[int]:
        """Live chip qubits inside the region and not excluded."""
        out = set(device.live_qubits) - set(self.exclude_qubits)
        if self.region is not None:
            out &= set(self.region)
        if self.region_box is not None:
            x0, y0, x1, y1 = self.region_box
            out = {q for q in out if q in device.positions
                   and x0 <= device.positions[q][0] <= x1 and y0 <= device.positions[q][1] <= y1}
        return out

    def allowed_by_role(self, device: Device, roles: Iterable[str]) -> dict[str, set[int]]:
        """For each role, the chip qubits a patch qubit of that role may sit on."""
        base = self.qubits(device)
        out = {}
        for role in roles:
            bounds = self.roles.get(role, ())
            out[role] = {q for q in base if all(
                b.holds(getattr(device.qubit_calibration.get(q), b.figure, None)) for b in bounds)}
        return out

    def couplers_allowed(self, device: Device) -> set[Pair]:
        """Live couplers patch pairs may use."""
        base = self.qubits(device)
        out = set()
        for c in device.live_couplers:
            if c in self.exclude_couplers or c[0] not in base or c[1] not in base:
                continue
            cal = device.coupler_calibration.get(c)
            if all(b.holds(getattr(cal, b.figure, None)) for b in self.couplers):
                out.add(c)
        return out

    def describe(self) -> list[str]:
        lines = [f"{role}: " + ", ".join(map(str, bounds)) for role, bounds in self.roles.items()]
        if self.couplers:
            lines.append("couplers: " + ", ".join(map(str, self.couplers)))
        if self.exclude_qubits:
            lines.append("excluded qubits: " + ", ".join(map(str, sorted(self.exclude_qubits))))
        if self.exclude_couplers:
            lines.append("excluded couplers: " + ", ".join(f"{a}-{b}" for a, b in
                                                            sorted(self.exclude_couplers)))
        if self.region is not None:
            lines.append(f"region: {len(self.region)} listed qubits")
        if self.region_box is not None:
            lines.append("region: x in [{:g}, {:g}], y in [{:g}, {:g}]".format(
                self.region_box[0], self.region_box[2], self.region_box[1], self.region_box[3]))
        if self.forbid_direction_fixes:
            lines.append("every CNOT in its coupler's native direction")
        return lines


def parse_bound(text: str, figures: Collection[str] = QUBIT_FIGURES + COUPLER_FIGURES) -> Bound:
    """'readout_error <= 0.03' -> Bound; raises InputError with a hint when it is not one."""
    m = re.fullmatch(r"\s*([A-Za-z_0-9]+)\s*(<=|>=|<|>)\s*([-+0-9.eE]+)\s*", text)
    if not m:
        raise InputError(f"'{text}' is not a bound: write e.g. 'readout_error <= 0.03'")
    name, op, value = m.groups()
    if name not in figures:
        raise InputError(f"'{name}' is not a calibration figure{did_you_mean(name, figures)} "
                         f"(one of {', '.join(figures)})")
    try:
        number = float(value)
    except ValueError:
        raise InputError(f"'{value}' in '{text}' is not a number") from None
    if name.endswith("_error") and not 0 <= number <= 1:
        raise InputError(f"'{text.strip()}': an error bound must lie in [0, 1]")
    if not name.endswith("_error") and number < 0:
        raise InputError(f"'{text.strip()}': a time bound cannot be negative")
    return Bound(name, op, number)


def parse_requirement(text: str) -> tuple[str, Bound]:
    """'ancilla: readout_error <= 0.03' or 'coupler: two_qubit_error <= 0.02' -> (who, Bound)."""
    who, sep, rest = text.partition(":")
    who = who.strip()
    if not sep:
        raise InputError(f"'{text}' should look like 'ancilla: readout_error <= 0.03'")
    roles = ("data", "flag", "ancilla", "coupler")
    if who not in roles:
        raise InputError(f"'{who}' should be one of {', '.join(roles)}{did_you_mean(who, roles)}")
    figures = COUPLER_FIGURES if who == "coupler" else QUBIT_FIGURES
    return who, parse_bound(rest, figures)


def build(requirements: str | Iterable[str] = (), *, exclude_qubits: Iterable[int] = (),
          exclude_couplers: Iterable[Any] = (), region: Iterable[int] | None = None,
          region_box: Any = None, forbid_direction_fixes: bool = False) -> Constraints:
    """Constraints from requirement strings and lists (what the command line and files give)."""
    if isinstance(requirements, str):
        requirements = [requirements]
    for label, value in (("exclude_qubits", exclude_qubits), ("region", region)):
        if isinstance(value, str) or (value is not None and not all(
                isinstance(q, int) and not isinstance(q, bool) for q in value)):
            raise InputError(f"{label} must be a list of qubit numbers, not {value!r}")
    for c in exclude_couplers:
        if isinstance(c, str) or len(tuple(c)) != 2:
            raise InputError(f"exclude_couplers must be pairs of qubit numbers, not {c!r}")
    if region_box is not None:
        box = tuple(region_box)
        if len(box) != 4 or not all(isinstance(x, (int, float)) for x in box) \
                or box[0] > box[2] or box[1] > box[3]:
            raise InputError(f"region_box must be (x0, y0, x1, y1) with x0 <= x1 and y0 <= y1, "
                             f"not {region_box!r}")
    roles: dict[str, list[Bound]] = {}
    couplers: list[Bound] = []
    for text in requirements:
        who, bound = parse_requirement(text)
        (couplers if who == "coupler" else roles.setdefault(who, [])).append(bound)
    return Constraints(roles={k: tuple(v) for k, v in roles.items()}, couplers=tuple(couplers),
                       exclude_qubits=frozenset(exclude_qubits),
                       exclude_couplers=frozenset(pair(*c) for c in exclude_couplers),
                       region=None if region is None else frozenset(region),
                       region_box=None if region_box is None else tuple(region_box),
                       forbid_direction_fixes=forbid_direction_fixes)
