"""Chip families: heavy-hex and square grid, with positions for drawing.

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

from dataclasses import dataclass

from .device import Pair, pair


@dataclass(frozen=True)
class Lattice:
    """Qubits 0..n-1, undirected couplers and a drawing position for each qubit."""

    family: str
    qubits: tuple[int, ...]
    couplers: tuple[Pair, ...]
    positions: dict[int, tuple[float, float]]


def heavy_hex_qubit_count(rows: int, columns: int) -> int:
    """Qubits in `heavy_hex(rows, columns)`: (m+1)(4n+3) + m(n+1) - 4."""
    m, n = rows, columns
    return (m + 1) * (4 * n + 3) + m * (n + 1) - 4


def heavy_hex(rows: int, columns: int) -> Lattice:
    """A heavy-hex chip of `rows` x `columns` heavy hexagons (both >= 1)."""
    if rows < 1 or columns < 1:
        raise ValueError("heavy-hex needs rows >= 1 and columns >= 1")
    m, n = rows, columns
    width = 2 * n + 2
    corners = {(0, width - 1), (m, width - 1) if m % 2 == 1 else (m, 0)}
    vertices = [(r, c) for r in range(m + 1) for c in range(width) if (r, c) not in corners]
    bonds = [((r, c), (r, c + 1)) for r in range(m + 1) for c in range(width - 1)
             if (r, c) not in corners and (r, c + 1) not in corners]
    bonds += [((r, c), (r + 1, c)) for r in range(m) for c in range(width) if c % 2 == r % 2]
    # Drawing position of a honeycomb vertex (r, c): x = 2c, y = 2r; the qubit on a
    # bond sits at the midpoint.
    points = {v: (2.0 * v[1], 2.0 * v[0]) for v in vertices}
    mids = {}
    for u, v in bonds:
        (xu, yu), (xv, yv) = points[u], points[v]
        mids[(u, v)] = ((xu + xv) / 2, (yu + yv) / 2)
    return _numbered("heavy-hex", points, mids, bonds)


def square_grid(rows: int, columns: int) -> Lattice:
    """A rows x columns square grid with nearest-neighbour couplers."""
    if rows < 1 or columns < 1:
        raise ValueError("square grid needs rows >= 1 and columns >= 1")
    qubits = tuple(range(rows * columns))
    couplers = [(r * columns + c, r * columns + c + 1)
                for r in range(rows) for c in range(columns - 1)]
    couplers += [(r * columns + c, (r + 1) * columns + c)
                 for r in range(rows - 1) for c in range(columns)]
    positions = {r * columns + c: (float(c), float(r)) for r in range(rows) for c in range(columns)}
    return Lattice("square-grid", qubits, tuple(sorted(couplers)), positions)


FAMILIES = {"heavy-hex": heavy_hex, "square-grid": square_grid}


def _numbered(family, points, mids, bonds) -> Lattice:
    """Number vertex and bond qubits in reading order (top row first, left to right)."""
    spots = [("v", v, xy) for v, xy in points.items()] + [("b", b, xy) for b, xy in mids.items()]
    spots.sort(key=lambda s: (s[2][1], s[2][0]))
    number = {(kind, key): i for i, (kind, key, _) in enumerate(spots)}
    couplers = []
    for u, v in bonds:
        mid = number[("b", (u, v))]
        couplers.append(pair(number[("v", u)], mid))
        couplers.append(pair(mid, number[("v", v)]))
    positions = {number[(kind, key)]: xy for kind, key, xy in spots}
    return Lattice(family, tuple(range(len(spots))), tuple(sorted(couplers)), positions)
