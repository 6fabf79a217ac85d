"""What a request asks for, checked against the files it names before any work: extra
constraints merged with the patch's own and checked against the chip, a placement given
as patch qubit -> chip qubit pairs, and the patch's declared detectors.

Each refusal is an `InputError` whose `key` names the option or file part at fault, so
the command line prints it as it is.

    >>> from embedcheck.model.constraints import build
    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> chip = Device.from_lattice(line(4), name="line")
    >>> merged = merge_constraints(build(["ancilla: readout_error <= 0.03"]),
    ...                            build(exclude_qubits=[3]), chip)
    >>> merged.describe()
    ['ancilla: readout_error <= 0.03', 'excluded qubits: 3']
    >>> merge_constraints(None, build(exclude_qubits=[9]), chip)
    Traceback (most recent call last):
    ...
    embedcheck.errors.InputError: --exclude-qubits: chip 'line' has no qubit 9
"""
from __future__ import annotations

from dataclasses import replace

from ..errors import InputError, did_you_mean
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement
from ..score.simulate import check_detectors

__all__ = ["check_against_chip", "merge_constraints", "placement_from_pairs",
           "require_sound_detectors"]


def check_against_chip(rules: Constraints, device: Device) -> None:
    """Constraint values that name parts the chip does not have are mistakes, not no-ops."""
    known = set(device.qubits)
    for label, qubits in (("--exclude-qubits", rules.exclude_qubits),
                          ("--region", rules.region or ())):
        missing = sorted(set(qubits) - known)
        if missing:
            raise InputError(f"chip '{device.name}' has no qubit {missing[0]}", key=label)
    for a, b in sorted(rules.exclude_couplers):
        if (a, b) not in set(device.couplers):
            raise InputError(f"{a}-{b} is not a coupler of chip '{device.name}'",
                             key="--exclude-couplers")


def merge_constraints(base: Constraints | None, given: Constraints,
                      device: Device) -> Constraints | None:
    """The patch's constraints (`base`) with the request's (`given`) added, after checking
    the request's against the chip; None when there are none at all."""
    base = base or Constraints()
    check_against_chip(given, device)
    if given.empty:
        return base if not base.empty else None
    roles = {r: tuple(base.roles.get(r, ())) + tuple(given.roles.get(r, ()))
             for r in set(base.roles) | set(given.roles)}
    return replace(base, roles=roles, couplers=base.couplers + given.couplers,
                   exclude_qubits=base.exclude_qubits | given.exclude_qubits,
                   exclude_couplers=base.exclude_couplers | given.exclude_couplers,
                   region=given.region if given.region is not None else base.region,
                   region_box=given.region_box or base.region_box,
                   forbid_direction_fixes=base.forbid_direction_fixes
                   or given.forbid_direction_fixes)


def placement_from_pairs(pairs: list[tuple[str, str]], patch: Patch, device: Device, *,
                         key: str = "--placement") -> Placement:
    """A placement from (patch qubit, chip qubit) text pairs, every one checked: a qubit of
    the patch, a live qubit of the chip, each given once, none shared."""
    where: dict[str, int] = {}
    for name, phys in pairs:
        if name not in patch.index:
            raise InputError(f"'{name}' is not a qubit of patch '{patch.name}'"
                             f"{did_you_mean(name, patch.qubits)}", key=key)
        try:
            q = int(phys)
        except ValueError:
            raise InputError(f"'{phys}' is not a qubit number", key=key) from None
        if q not in set(device.qubits):
            raise InputError(f"chip '{device.name}' has no qubit {q}", key=key)
        if q in device.dead_qubits:
            raise InputError(f"qubit {q} of chip '{device.name}' is dead", key=key)
        if name in where:
            raise InputError(f"'{name}' is placed twice", key=key)
        where[name] = q
    if not where:
        raise InputError("give name=physical_qubit pairs, e.g. d0=53,d1=55", key=key)
    missing = [q for q in patch.qubits if q not in where]
    if missing:
        raise InputError(f"no physical qubit given for {', '.join(missing)}", key=key)
    if len(set(where.values())) != len(where):
        raise InputError("two patch qubits share one physical qubit", key=key)
    return Placement(tuple(where[q] for q in patch.qubits))


def require_sound_detectors(patch: Patch, file: str | None) -> None:
    """Declared detectors must be deterministic without noise (stim); else bad input,
    naming the first bad detector's line."""
    problems = check_detectors(patch)
    if problems:
        detector = problems[0].detector
        raise InputError(problems[0].message + " (a bug in the circuit or the declaration)",
                         file=file, line=detector.line if detector is not None else None)
