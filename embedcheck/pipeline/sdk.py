"""qiskit's own choice: the layout qiskit's VF2Layout pass picks for the whole experiment,
and where it ranks under our cost model (`find --compare-sdk`).

    >>> from embedcheck.io.chipfile import load_device
    >>> from embedcheck.io.patchfile import load_patch
    >>> from embedcheck.pipeline.vet import vet_patch
    >>> chip = load_device("devices/demo_heavy_hex.yaml")
    >>> patch = load_patch("samples/flagged_weight4.yaml")
    >>> compare_with_sdk(chip, patch, vet_patch(chip, patch)).found    # the naive prep routes
    False
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..audit.qiskit_views import sdk_layout
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement, placement_grid
from ..score.cost import scores
from .vet import Vetting

__all__ = ["SdkComparison", "compare_with_sdk"]


@dataclass(frozen=True, kw_only=True)
class SdkComparison:
    """qiskit's layout (None when it found none, `status` says why) and its rank among ours."""

    found: bool
    status: str
    placement: Placement | None = None
    success: float = 0.0
    our_rank: int = 0
    of: int = 0
    figure: str = ""


def compare_with_sdk(device: Device, patch: Patch, vetting: Vetting) -> SdkComparison:
    """qiskit's VF2Layout choice and where it ranks under our model."""
    placement, status = sdk_layout(device, patch)
    if placement is None:
        return SdkComparison(found=False, status=status)
    terms, off = scores(device, patch, placement_grid([placement], patch.num_qubits))
    log_s = float(sum(t[0] for t in terms.values()))
    ranking = vetting.ranking
    better = int(np.sum((ranking.unscored_gates < off[0]) |
                        ((ranking.unscored_gates == off[0]) &
                         (ranking.log_success > log_s + 1e-12))))
    return SdkComparison(found=True, status=status, placement=placement,
                         success=float(np.exp(log_s)), our_rank=better + 1,
                         of=len(ranking.placements), figure=ranking.figure)
