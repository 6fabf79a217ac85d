"""A placement: the physical qubit of each patch qubit. Also its checks, its numpy grid
form, and the vectorised count of two-qubit gates that miss a live coupler.

Placements come from the search, and from users (the API and `--placement`), so every
stage that takes them checks them first (`check_placements`: one distinct chip qubit per
patch qubit). Many placements at once are an int array of shape (placements, patch
qubits), which the scoring indexes without a per-placement loop. The search and the
ranking keep them as `PlacementRows`: that array (4 bytes per patch qubit per placement,
where a `Placement` object costs about a kilobyte), read as a sequence of `Placement`s
made on demand, so a limit of millions stays within a few hundred MB.

    >>> rows = PlacementRows([[0, 1, 2], [1, 0, 2]])
    >>> len(rows), rows[1], rows.index(Placement((1, 0, 2)))
    (2, Placement(1, 0, 2), 1)

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

from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any, overload

import numpy as np

from ..errors import InputError
from .device import Device
from .patch import Patch

__all__ = ["Placement", "PlacementRows", "check_placements", "off_coupler_counts",
           "placement_grid"]


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


class PlacementRows(Sequence[Placement]):
    """Many placements as one read-only integer array (row i: the physical qubit of each
    patch qubit), a sequence of `Placement`s made on demand. Slicing gives rows again;
    `array` is the array itself (int32 unless a qubit number needs int64). With
    `copy=False` an array of the right type is taken over, not copied."""

    __slots__ = ("_rows",)

    def __init__(self, rows: Any, num_qubits: int | None = None, *, copy: bool = True) -> None:
        if isinstance(rows, PlacementRows):
            array = rows.array
        elif isinstance(rows, np.ndarray):
            array = rows
        else:
            listed = [p.physical if isinstance(p, Placement) else tuple(p) for p in rows]
            width = len(listed[0]) if listed else (num_qubits or 0)
            array = np.array(listed, dtype=np.int64).reshape(len(listed), width)
        if array.ndim != 2:
            array = array.reshape(len(array), -1 if len(array) else (num_qubits or 0))
        small = not array.size or (array.min() >= -2**31 and array.max() < 2**31)
        # copy=False: the caller hands the array over (it is made read-only here).
        dtype = np.int32 if small else np.int64
        array = np.array(array, dtype=dtype) if copy else np.asarray(array, dtype=dtype)
        array.flags.writeable = False
        self._rows = array

    @property
    def array(self) -> np.ndarray:
        return self._rows

    @property
    def num_qubits(self) -> int:
        return int(self._rows.shape[1])

    def __len__(self) -> int:
        return len(self._rows)

    @overload
    def __getitem__(self, index: int) -> Placement: ...
    @overload
    def __getitem__(self, index: slice) -> PlacementRows: ...

    def __getitem__(self, index: int | slice) -> Placement | PlacementRows:
        if isinstance(index, slice):                   # a view of the same rows
            return PlacementRows(self._rows[index], copy=False)
        return Placement(tuple(self._rows[index].tolist()))

    def __iter__(self) -> Iterator[Placement]:
        for start in range(0, len(self._rows), 4096):          # tolist per piece: fast
            for row in self._rows[start:start + 4096].tolist():
                yield Placement(tuple(row))

    def __contains__(self, item: object) -> bool:
        return isinstance(item, Placement) and self._find(item) >= 0

    def index(self, item: Any, start: int = 0, stop: int | None = None) -> int:
        at = self._find(item, start, stop) if isinstance(item, Placement) else -1
        if at < 0:
            raise ValueError(f"{item!r} is not among these placements")
        return at

    def _find(self, item: Placement, start: int = 0, stop: int | None = None) -> int:
        if len(item.physical) != self.num_qubits:
            return -1
        part = self._rows[start:stop]
        hits = np.flatnonzero((part == np.array(item.physical)).all(axis=1))
        return int(hits[0]) + start if len(hits) else -1

    def __eq__(self, other: object) -> bool:
        if isinstance(other, PlacementRows):
            return self._rows.shape == other._rows.shape and bool(
                (self._rows == other._rows).all())
        if isinstance(other, Sequence):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other,
                                                                          strict=True))
        return NotImplemented

    def __hash__(self) -> int:
        return hash((self._rows.shape, self._rows.tobytes()))

    def __repr__(self) -> str:
        return f"PlacementRows({len(self)} placement(s) of {self.num_qubits} qubit(s))"

    def __reduce__(self) -> tuple[Any, ...]:
        return (PlacementRows, (np.array(self._rows),))


def placement_grid(placements: Sequence[Placement], num_qubits: int) -> np.ndarray:
    """Placements as an int array of shape (placements, patch qubits), for vectorised scoring."""
    if isinstance(placements, PlacementRows):
        if len(placements) and placements.num_qubits != num_qubits:
            raise InputError(f"a placement gives {placements.num_qubits} physical qubits for a "
                             f"patch of {num_qubits}")
        return placements.array.astype(np.int64).reshape(len(placements), num_qubits)
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
