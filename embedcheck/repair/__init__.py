"""Repair stage: rewrite a preparation that forces swaps onto a placement's couplers, with
a proof (one module per method: cat, css, routed, product)."""
from __future__ import annotations

from .product import project_preparation
from .result import Repair
from .rewrite import repair_preparation, repaired_patch

__all__ = ["Repair", "project_preparation", "repair_preparation", "repaired_patch"]
