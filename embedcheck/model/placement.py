"""A placement: the physical qubit of each patch qubit. Also its checks, its numpy grid
form, and the vectorised count of two-qubit gates that miss a live coupler.

Placements come from the search, and from users (the API and `--placement`), so every
stage that takes them checks them first (`check_placements`: one distinct chip qubit per
patch qubit). Many placements at once are an int array of shape (placements, patch
qubits), which the scoring indexes without a per-placement loop.

    >>> from embedcheck.model.device import Device
    >>> from embedcheck.model.lattices import line
    >>> from embedcheck.model.patch import Circuit, Operation, Patch
    >>> ops = (Operation("cx", ("a", "b"), "2q"), Operation("cx", ("a", "c"), "2q"))
    >>> patch = Patch("t", ("a", "b", "c"), dict.fromkeys("abc", "data"),
    ...               {"round": Circuit("round", ops)})
    >>> dev = Device.from_lattice(line(3), name="line")
    >>> placements = [Placement((0, 1, 2)), Placement((1, 0, 2))]
    >>> off_coupler_counts(dev, patch, placements, ["round"]).tolist()
    [[1], [0]]
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .device import Device
from .patch import Patch

__all__ = ["Placement", "check_placements", "off_coupler_counts", "placement_grid"]


@dataclass(frozen=True)
class Placement:
    """Physical qubit for each patch qubit, in the patch's qubit order."""

    physical: tuple[int, ...]

    def as_dict(self, patch: Patch) -> dict[str, int]:
        return dict(zip(patch.qubits, self.physical, strict=False))

    def __repr__(self) -> str:
        return f"Placement{tuple(self.physical)!r}"

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def placement_grid(placements: Sequence[Placement], num_qubits: int) -> np.ndarray:
    """Placements as an int array of shape (placements, patch qubits), for vectorised scoring."""
    rows = [p.physical for p in placements]
    if any(len(r) != num_qubits for r in rows):
        bad = next(r for r in rows if len(r) != num_qubits)
        raise InputError(f"a placement gives {len(bad)} physical qubits for a patch of "
                         f"{num_qubits}")
    return np.array(rows, dtype=np.int64).reshape(len(placements), num_qubits)


def check_placements(device: Device, patch: Patch, placements: Sequence[Placement]) -> np.ndarray:
    """The placements' grid (see `placement_grid`), after refusing (InputError) any that
    is not one distinct chip qubit per patch qubit: the API takes placements from users,
    not only from the search."""
    grid = placement_grid(placements, patch.num_qubits)
    if not grid.size:
        return grid
    inside = np.isin(grid, np.array(sorted(device.qubits), dtype=np.int64))
    if not inside.all():
        row, col = map(int, np.argwhere(~inside)[0])
        raise InputError(f"placement {row + 1}: {patch.qubits[col]}={grid[row, col]} is not a "
                         f"qubit of chip '{device.name}'")
    ordered = np.sort(grid, axis=1)
    repeated = (ordered[:, 1:] == ordered[:, :-1]).any(axis=1)
    if repeated.any():
        row = int(np.argmax(repeated))
        raise InputError(f"placement {row + 1} puts two patch qubits on one chip qubit: "
                         f"{placements[row].as_dict(patch)}")
    return grid


def off_coupler_counts(device: Device, patch: Patch, placements: Sequence[Placement],
                       circuits: Sequence[str]) -> np.ndarray:
    """Off-coupler two-qubit gates, shape (placements, circuits), without a per-placement
    loop: the vectorised form of the exact audit's count (`embedcheck.audit`)."""
    cal = device.calibration_arrays
    ones = np.ones(len(cal.coupler_keys))
    grid = placement_grid(placements, patch.num_qubits)
    out = np.zeros((len(placements), len(circuits)), dtype=np.int64)
    for j, name in enumerate(circuits):
        counts = patch.interaction_counts([name])
        if not counts or not len(placements):
            continue
        pairs = np.array(list(counts), dtype=np.int64)
        weight = np.array(list(counts.values()), dtype=np.int64)
        on = ~np.isnan(cal.coupler(grid[:, pairs[:, 0]], grid[:, pairs[:, 1]], ones))
        out[:, j] = (~on * weight).sum(axis=1)
    return out
