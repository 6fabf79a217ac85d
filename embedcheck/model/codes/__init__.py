"""Built-in code families: each writes a patch file (YAML with inline OpenQASM 2, roles,
detectors and the logical observable) that the ordinary loader reads.

    >>> from embedcheck.codes import build_patch
    >>> patch = build_patch("repetition", distance=3, rounds=2)
    >>> patch.num_qubits, len(patch.detectors), patch.observable
    (5, 6, (4,))
"""
from __future__ import annotations

from .families import FAMILIES, build_patch, family_yaml

__all__ = ["FAMILIES", "build_patch", "family_yaml"]
