"""Chip families: heavy-hex, square grid, hexagonal, line and ring, with drawing positions.

Heavy-hex is the hexagonal (honeycomb) lattice with one extra qubit on every edge
(common practice; the layout of the heavy-hex code paper, Chamberland et al.,
Phys. Rev. X 10, 011022 (2020)). We build the honeycomb as a "brick wall": rows
r = 0..m of 2n+2 vertices, with vertical bonds between rows r and r+1 at the
columns c with c = r (mod 2); the two corner vertices left with a single bond are
removed. That gives m rows of n hexagons, and

    honeycomb vertices  V = (m+1)(2n+2) - 2
    honeycomb edges     E = (m+1)(2n+1) - 2 + m(n+1)
    heavy-hex qubits    V + E = (m+1)(4n+3) + m(n+1) - 4

Qubits are numbered row by row in reading order of their drawing positions.

    >>> hh = heavy_hex(1, 1)            # one heavy hexagon
    >>> len(hh.qubits), len(hh.couplers)
    (12, 12)
    >>> heavy_hex_qubit_count(3, 4)
    87
"""
from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Callable

from ..errors import InputError

__all__ = ["FAMILIES", "Lattice", "Pair", "build_family", "cut", "heavy_hex",
           "heavy_hex_qubit_count", "hexagonal", "line", "pair", "ring", "square_grid"]

Pair = tuple[int, int]


def pair(a: int, b: int) -> Pair:
    """The undirected coupler key for qubits a and b (smaller index first)."""
    return (a, b) if a < b else (b, a)


@dataclass(frozen=True)
class Lattice:
    """Qubits 0..n-1, undirected couplers and a drawing position for each qubit."""

    family: str
    qubits: tuple[int, ...]
    couplers: tuple[Pair, ...]
    positions: Mapping[int, tuple[float, float]]


def heavy_hex_qubit_count(rows: int, columns: int) -> int:
    """Qubits in `heavy_hex(rows, columns)`: (m+1)(4n+3) + m(n+1) - 4."""
    m, n = rows, columns
    return (m + 1) * (4 * n + 3) + m * (n + 1) - 4


_Vertex = tuple[int, int]


def _brick_wall(rows: int, columns: int,
                family: str) -> tuple[dict[_Vertex, tuple[float, float]],
                                      list[tuple[_Vertex, _Vertex]]]:
    """Honeycomb of rows x columns hexagons as a brick wall: vertices, bonds, positions."""
    if rows < 1 or columns < 1:
        raise InputError(f"{family} needs rows >= 1 and columns >= 1")
    m, n = rows, columns
    width = 2 * n + 2
    corners = {(0, width - 1), (m, width - 1) if m % 2 == 1 else (m, 0)}
    vertices = [(r, c) for r in range(m + 1) for c in range(width) if (r, c) not in corners]
    bonds = [((r, c), (r, c + 1)) for r in range(m + 1) for c in range(width - 1)
             if (r, c) not in corners and (r, c + 1) not in corners]
    bonds += [((r, c), (r + 1, c)) for r in range(m) for c in range(width) if c % 2 == r % 2]
    # Drawing position of a honeycomb vertex (r, c): x = 2c, y = 2r.
    points = {v: (2.0 * v[1], 2.0 * v[0]) for v in vertices}
    return points, bonds


def hexagonal(rows: int, columns: int) -> Lattice:
    """The honeycomb lattice itself: rows x columns hexagons, qubits of degree 2 and 3."""
    points, bonds = _brick_wall(rows, columns, "hexagonal")
    return _numbered("hexagonal", points, {}, bonds, subdivide=False)


def line(size: int) -> Lattice:
    """`size` qubits in a row, each coupled to the next."""
    if size < 1:
        raise InputError("line needs size >= 1")
    return Lattice("line", tuple(range(size)), tuple((i, i + 1) for i in range(size - 1)),
                   {i: (float(i), 0.0) for i in range(size)})


def ring(size: int) -> Lattice:
    """`size` qubits on a cycle (size >= 3)."""
    if size < 3:
        raise InputError("ring needs size >= 3")
    angle = 2 * math.pi / size
    positions = {i: (round(size / 2 * math.cos(i * angle), 6),
                     round(size / 2 * math.sin(i * angle), 6))
                 for i in range(size)}
    couplers = tuple(sorted(pair(i, (i + 1) % size) for i in range(size)))
    return Lattice("ring", tuple(range(size)), couplers, positions)


def heavy_hex(rows: int, columns: int) -> Lattice:
    """A heavy-hex chip of `rows` x `columns` heavy hexagons (both >= 1)."""
    points, bonds = _brick_wall(rows, columns, "heavy-hex")
    # The qubit on a bond sits at its midpoint.
    mids: dict[tuple[_Vertex, _Vertex], tuple[float, float]] = {}
    for u, v in bonds:
        (xu, yu), (xv, yv) = points[u], points[v]
        mids[(u, v)] = ((xu + xv) / 2, (yu + yv) / 2)
    return _numbered("heavy-hex", points, mids, bonds, subdivide=True)


def square_grid(rows: int, columns: int) -> Lattice:
    """A rows x columns square grid with nearest-neighbour couplers."""
    if rows < 1 or columns < 1:
        raise InputError("square grid needs rows >= 1 and columns >= 1")
    qubits = tuple(range(rows * columns))
    couplers = [(r * columns + c, r * columns + c + 1)
                for r in range(rows) for c in range(columns - 1)]
    couplers += [(r * columns + c, (r + 1) * columns + c)
                 for r in range(rows - 1) for c in range(columns)]
    positions = {r * columns + c: (float(c), float(r)) for r in range(rows) for c in range(columns)}
    return Lattice("square-grid", qubits, tuple(sorted(couplers)), positions)


# family name -> (builder, its size parameters)
FAMILIES: dict[str, tuple[Callable[..., Lattice], tuple[str, ...]]] = {
            "heavy-hex": (heavy_hex, ("rows", "columns")),
            "square-grid": (square_grid, ("rows", "columns")),
            "hexagonal": (hexagonal, ("rows", "columns")),
            "line": (line, ("size",)),
            "ring": (ring, ("size",))}


def build_family(kind: str, **size: int) -> Lattice:
    """The lattice of family `kind` with its size parameters, e.g. build_family("line", size=5)."""
    builder, params = FAMILIES[kind]
    return builder(*(size[p] for p in params))


def cut(lattice: Lattice, *, remove_qubits: Iterable[int] = (),
        remove_couplers: Iterable[tuple[int, int]] = ()) -> Lattice:
    """The lattice without some qubits (and their couplers) and some couplers; numbers kept."""
    gone = set(remove_qubits)
    gone_c = {pair(*c) for c in remove_couplers}
    couplers = tuple(c for c in lattice.couplers
                     if c not in gone_c and c[0] not in gone and c[1] not in gone)
    return Lattice(lattice.family, tuple(q for q in lattice.qubits if q not in gone), couplers,
                   {q: xy for q, xy in lattice.positions.items() if q not in gone})


def _numbered(family: str, points: Mapping[_Vertex, tuple[float, float]],
              mids: Mapping[tuple[_Vertex, _Vertex], tuple[float, float]],
              bonds: list[tuple[_Vertex, _Vertex]], subdivide: bool) -> Lattice:
    """Number vertex and bond qubits in reading order (top row first, left to right)."""
    spots = [("v", v, xy) for v, xy in points.items()] + [("b", b, xy) for b, xy in mids.items()]
    spots.sort(key=lambda s: (s[2][1], s[2][0]))
    number = {(kind, key): i for i, (kind, key, _) in enumerate(spots)}
    couplers = []
    for u, v in bonds:
        if not subdivide:
            couplers.append(pair(number[("v", u)], number[("v", v)]))
            continue
        mid = number[("b", (u, v))]
        couplers.append(pair(number[("v", u)], mid))
        couplers.append(pair(mid, number[("v", v)]))
    positions = {number[(kind, key)]: xy for kind, key, xy in spots}
    return Lattice(family, tuple(range(len(spots))), tuple(sorted(couplers)), positions)
