"""A built-in code family, written and checked: the patch file text, the patch, its
detectors' noiseless check and its circuit-level fault distance (or, when the exhaustive
search is too big, stim's graphlike upper bound).

    >>> code = build_code("repetition", distance=3, rounds=2)
    >>> code.patch.num_qubits, code.problems, code.fault_distance, code.fault_distance_at_most
    (5, (), 3, None)
"""
from __future__ import annotations

from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass

from ..errors import InputError
from ..io.limits import max_file_bytes
from ..io.patchfile import patch_from_family
from ..model.codes import family_yaml
from ..model.device import Device
from ..model.patch import Patch
from ..score.simulate import (
    DetectorProblem,
    check_detectors,
    fault_distance,
    fault_distance_at_most,
)

__all__ = ["BuiltCode", "build_code", "family_for_chip"]

# The built-in family made for chips whose qubits have at most 3 couplers (heavy-hex).
LOW_DEGREE_FAMILY = "heavy-hex-chipfit"


def family_for_chip(device: Device, patch: Patch) -> str | None:
    """The built-in family to suggest when `patch` cannot fit `device` for want of couplers:
    some patch qubit meets 4 or more others (the surface code's do) but no live chip qubit
    has more than 3 couplers (a heavy-hex chip); else None.

    >>> from embedcheck.model.device import Device
    >>> line = Device(name="line", qubits=(0, 1, 2), couplers=((0, 1), (1, 2)))
    >>> family_for_chip(line, patch_from_family("surface", distance=3, rounds=1))
    'heavy-hex-chipfit'
    >>> family_for_chip(line, patch_from_family("repetition", distance=3, rounds=1)) is None
    True
    """
    chip: Counter[int] = Counter()
    for a, b in device.live_couplers:
        chip[a] += 1
        chip[b] += 1
    if max(chip.values(), default=0) > 3:
        return None
    partners: Counter[int] = Counter()
    for a, b in patch.interaction_counts():
        partners[a] += 1
        partners[b] += 1
    return LOW_DEGREE_FAMILY if max(partners.values(), default=0) >= 4 else None


@dataclass(frozen=True, kw_only=True)
class BuiltCode:
    """A family instance: its patch file text and patch, and how it checks out."""

    text: str
    patch: Patch
    problems: tuple[DetectorProblem, ...]       # our own family failing is a bug of ours
    fault_distance: int | float | None          # math.inf: no fault flips it unseen
    fault_distance_at_most: int | float | None  # when the exhaustive search is skipped


def build_code(family: str, *, distance: int = 3, rounds: int = 2, basis: str = "z",
               prep: str | None = None,
               progress: Callable[[str], None] | None = None) -> BuiltCode:
    """Write, load and check one instance of a built-in code family.

    `progress(stage)` is told each stage as it starts (a distance-7 surface code spends
    minutes in stim's fault-distance search, which reports nothing while it runs)."""
    say = progress or (lambda stage: None)
    _check_size(family, distance=distance, rounds=rounds, basis=basis, prep=prep)
    say("writing the patch")
    text = family_yaml(family, distance=distance, rounds=rounds, basis=basis, prep=prep)
    patch = patch_from_family(family, distance=distance, rounds=rounds, basis=basis, prep=prep)
    say(f"checking {len(patch.detectors)} detectors without noise")
    problems = tuple(check_detectors(patch))
    if problems:
        return BuiltCode(text=text, patch=patch, problems=problems, fault_distance=None,
                         fault_distance_at_most=None)
    say(f"fault distance: stim's exhaustive search over {len(patch.detectors)} detectors "
        "(the longest step)")
    found = fault_distance(patch)
    bound = None
    if found is None and patch.observable:         # too big for the exhaustive search
        say("fault distance: a bound from stim's shortest graphlike error")
        bound = fault_distance_at_most(patch)
    return BuiltCode(text=text, patch=patch, problems=(), fault_distance=found,
                     fault_distance_at_most=bound)


def _check_size(family: str, *, distance: int, rounds: int, basis: str,
                prep: str | None) -> None:
    """The patch file grows linearly with the rounds: from one and two rounds, project its
    size and refuse before writing it when it would pass the input file limit (the file
    must be readable as an input again)."""
    if rounds <= 2:
        return
    one, two = (len(family_yaml(family, distance=distance, rounds=r, basis=basis,
                                prep=prep).encode()) for r in (1, 2))
    size = one + (rounds - 1) * (two - one)
    limit = max_file_bytes()
    if size > limit:
        raise InputError(f"the patch file would be about {size / 1048576:.0f} MB, above the "
                         f"input file limit of {limit / 1048576:g} MB (use fewer rounds, or set "
                         "EMBEDCHECK_MAX_FILE_MB to raise the limit)")
