"""The `find` command as one call: vet the patch, then decide what else the report holds.

On top of `vet_patch` (search, audit, rank): the calibration figures that move the best
placement's score most; which logical figure ranks the placements (`figure="auto"`
takes 'undetected' when the patch declares detectors and an observable and every
circuit is swap-free, unless that figure is 0 on every placement, which is decided once
on a circuit with every possible fault); the ranking over calibration snapshots; and
qiskit's own layout choice. The report (`embedcheck.report.data.find_dict`) formats
the result and says why a logical figure was not used (`LogicalNote`).

    >>> from embedcheck.io.chipfile import load_device
    >>> from embedcheck.io.patchfile import load_patch
    >>> result = run_find([load_device("devices/demo_heavy_hex.yaml")],
    ...                   load_patch("samples/flagged_weight4_coupler_prep.yaml"))
    >>> result.vetting.all_swap_free, result.logical, result.logical_note
    (True, None, <LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY: 'observable is a detector parity'>)
"""
from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from enum import Enum

import numpy as np

from ..errors import InputError
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch, observable_is_detector_parity
from ..place.enumeration import Effort
from ..score.cost import Sensitivity, SnapshotRanking, rank_across_snapshots, sensitivity
from ..score.logical import (
    LogicalRanking,
    rank_by_logical,
    require_detectors,
    undetected_zero_everywhere,
)
from .requests import require_sound_detectors
from .sdk import SdkComparison, compare_with_sdk
from .vet import DEFAULT_BUDGET_WORK, Vetting, vet_patch

__all__ = ["FindResult", "LogicalNote", "run_find"]

Progress = Callable[[str, int], None]      # (stage: 'searching' or 'scoring', count)


class LogicalNote(Enum):
    """Why the logical ranking is as it is, or absent (the report words each one)."""

    SAMPLED_BY_KEPT = "undetected is zero: ranked by kept, sampled"
    UNDETECTED_ALL_ZERO = "undetected is zero on every placement"
    OBSERVABLE_IS_DETECTOR_PARITY = "observable is a detector parity"
    UNDETECTED_ZERO_TO_SECOND_ORDER = "undetected is zero to second order"
    NOTHING_TO_SAMPLE = "nothing to sample"


@dataclass(frozen=True, kw_only=True)
class FindResult:
    """Everything the find report shows: the vetting and the figures decided around it."""

    vetting: Vetting
    top: int                                    # placements to list
    sensitivity: tuple[Sensitivity, ...] = ()   # of the best placement
    logical: LogicalRanking | None = None
    logical_note: LogicalNote | None = None
    sampled: bool = False                       # Monte Carlo shots were asked for
    decoded: bool = False                       # the sampled shots were decoded
    snapshots: SnapshotRanking | None = None
    sdk: SdkComparison | None = None

    def __repr__(self) -> str:
        by = self.logical.figure if self.logical is not None else self.vetting.ranking.figure
        return f"FindResult({self.vetting!r}, ranked by {by})"

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def run_find(snapshots: Sequence[Device], patch: Patch, *, limit: int | None = 100_000,
             budget_s: float | None = 60.0, constraints: Constraints | None = None,
             processes: int = 1, top: int | None = 10, figure: str = "auto",
             monte_carlo: int = 0, decode: bool = False, over_snapshots: str = "worst",
             compare_sdk: bool = False, progress: Progress | None = None,
             budget_work: int | None = DEFAULT_BUDGET_WORK,
             on_effort: Callable[[Effort], None] | None = None) -> FindResult:
    """Vet `patch` on the newest of `snapshots` and work out the rest of the find report.

    `top` is how many placements to list (None: all); `figure` what ranks them ('auto',
    'undetected', 'kept' or 'fidelity_product'); `monte_carlo` shots sample the listed
    placements, `decode` decodes them; several snapshots are also ranked over
    (`over_snapshots`: 'worst', 'mean' or 'q<fraction>'). `budget_work` bounds the
    searches in work units (identical runs stop at the same place; `budget_s` is the
    clock's cap on top); when the placements are too many to list, the best `top` (at
    least 10) by the fidelity product are searched best first (`Vetting.best`).
    """
    device = snapshots[-1]
    vetting = vet_patch(device, patch, limit=limit, budget_s=budget_s,
                        progress=(lambda n: progress("searching", n)) if progress else None,
                        constraints=constraints, processes=processes,
                        budget_work=budget_work, on_effort=on_effort,
                        best_first=max(top or 0, 10))
    placements = vetting.ranking.placements
    shown = top if top is not None else max(1, len(placements))
    sensitive = tuple(sensitivity(device, patch, placements[0], top=5)) if placements else ()
    logical, zero = _logical_ranking(device, patch, vetting, figure=figure,
                                     monte_carlo=monte_carlo, decode=decode, top=top,
                                     processes=processes, progress=progress)
    note = None
    if logical is not None:
        if zero:
            note = LogicalNote.SAMPLED_BY_KEPT
        elif logical.figure == "undetected" and not np.any(logical.undetected):
            note = LogicalNote.UNDETECTED_ALL_ZERO
    elif patch.detectors and patch.observable and vetting.all_swap_free:
        if observable_is_detector_parity(patch):
            note = LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY
        elif zero:
            note = LogicalNote.UNDETECTED_ZERO_TO_SECOND_ORDER
    if monte_carlo and logical is None and note is None:
        note = LogicalNote.NOTHING_TO_SAMPLE
    if logical is None and figure in ("undetected", "kept"):
        raise InputError("no placement makes every circuit swap-free, so there is no noisy "
                         "circuit to score; use fidelity_product", key=f"--figure {figure}")
    robust = None
    if len(snapshots) > 1 and placements:
        robust = rank_across_snapshots(snapshots, patch, placements, by=over_snapshots)
    sdk = compare_with_sdk(device, patch, vetting) if compare_sdk else None
    return FindResult(vetting=vetting, top=shown, sensitivity=sensitive, logical=logical,
                      logical_note=note, sampled=bool(monte_carlo), decoded=decode,
                      snapshots=robust, sdk=sdk)


def _logical_ranking(device: Device, patch: Patch, vetting: Vetting, *, figure: str,
                     monte_carlo: int, decode: bool, top: int | None, processes: int,
                     progress: Progress | None) -> tuple[LogicalRanking | None, bool]:
    """(ranking by a logical figure when asked, or by 'auto' when it applies, else None;
    whether 'undetected' is 0 on every placement, so 'auto' could not use it)."""
    swap_free = [p for p, off in zip(vetting.ranking.placements, vetting.ranking.unscored_gates,
                                     strict=True)
                 if off == 0] if vetting.all_swap_free else []
    zero = False
    if figure == "fidelity_product":
        return None, zero
    if figure == "auto":
        if not swap_free or not patch.detectors or not patch.observable:
            return None, zero
        if observable_is_detector_parity(patch):   # no fault flips it unseen: every score is 0
            return None, zero
        zero = undetected_zero_everywhere(patch)   # every fault at once: 0 there, 0 anywhere
        if zero and not monte_carlo:
            return None, zero
        figure = "kept" if zero else "undetected"   # kept: sampled below, ranked by what is kept
    if not swap_free:
        return None, zero
    require_detectors(patch)
    require_sound_detectors(patch, patch.source)
    out = rank_by_logical(device, patch, swap_free, figure=figure,
                          monte_carlo_shots=monte_carlo or 0,
                          top=top if top is not None else len(swap_free), decode=decode,
                          processes=processes,
                          progress=(lambda n: progress("scoring", n)) if progress else None)
    return out, zero
