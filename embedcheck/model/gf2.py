"""Linear algebra over GF(2) on numpy bit arrays (uint8 0/1): Gauss-Jordan elimination,
rank and solving `a x = b`. Used for stabilizer tableaux (repair) and detector parities
(is the observable a parity of the detectors?).

    >>> import numpy as np
    >>> m = np.array([[1, 1, 0], [0, 1, 1], [1, 0, 1]], dtype=np.uint8)
    >>> rank(m)                              # the third row is the sum of the first two
    2
    >>> solve(m[:2], np.array([1, 0], dtype=np.uint8)).tolist()
    [1, 0, 0]
"""
from __future__ import annotations

import numpy as np

__all__ = ["rank", "row_reduce", "solve"]


def row_reduce(m: np.ndarray) -> tuple[np.ndarray, list[int]]:
    """Gauss-Jordan elimination over GF(2): (reduced copy, pivot columns)."""
    m = m.copy() % 2
    pivots: list[int] = []
    r = 0
    rows, cols = m.shape
    for c in range(cols):
        pivot = next((i for i in range(r, rows) if m[i, c]), None)
        if pivot is None:
            continue
        m[[r, pivot]] = m[[pivot, r]]
        for i in range(rows):
            if i != r and m[i, c]:
                m[i] ^= m[r]
        pivots.append(c)
        r += 1
    return m, pivots


def rank(m: np.ndarray) -> int:
    """The rank of `m` over GF(2)."""
    return len(row_reduce(m)[1])


def solve(a: np.ndarray, b: np.ndarray) -> np.ndarray | None:
    """x with a x = b over GF(2), or None."""
    cols = a.shape[1]
    m, pivots = row_reduce(np.hstack([a, b.reshape(-1, 1)]).astype(np.uint8))
    if cols in pivots:                  # a pivot in the right-hand side: no solution
        return None
    x = np.zeros(cols, dtype=np.uint8)
    for i, c in enumerate(pivots):
        x[c] = m[i, -1]
    return x
