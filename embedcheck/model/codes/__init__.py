"""Built-in code families: each writes a patch file (YAML with inline OpenQASM 2, roles,
detectors and the logical observable) that the ordinary loader reads
(`embedcheck.io.patchfile.patch_from_family`, or `embedcheck.patch_from_family`).

    >>> from embedcheck.model.codes import family_yaml
    >>> "embedcheck_patch: 1" in family_yaml("repetition", distance=3, rounds=2).splitlines()
    True
"""
from __future__ import annotations

from .families import FAMILIES, family_yaml, heavy_hex_layout, surface_layout

__all__ = ["FAMILIES", "family_yaml", "heavy_hex_layout", "surface_layout"]
