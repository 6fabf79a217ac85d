"""The `find` command as one call: vet the patch, then decide what else the report holds.

On top of `vet_patch` (search, audit, rank): the calibration figures that move the best
placement's score most; which logical figure ranks the placements; the ranking over
calibration snapshots; and qiskit's own layout choice.

`figure="auto"` ranks by a logical figure when the patch declares detectors and an
observable that is not itself a detector parity, and every circuit is swap-free:

- fault distance 1 or 2 (some one or two faults flip the observable unseen, decided once
  on a circuit with every possible fault): 'undetected', the post-selection figure;
- fault distance 3 or more: 'estimate', the leading-order decoded logical error
  (`score.estimate`), when stim's model of the circuit is graph-like;
- with Monte Carlo shots and `decode`: 'decoded', the listed placements (chosen by the
  estimate) sampled adaptively and sorted by their sampled decoded logical error.

Otherwise it keeps the fidelity product, and `LogicalNote` says why. The report
(`embedcheck.report.data.find_dict`) formats the result and words the note.

    >>> from embedcheck.io.chipfile import load_device
    >>> from embedcheck.io.patchfile import load_patch
    >>> result = run_find([load_device("devices/demo_heavy_hex.yaml")],
    ...                   load_patch("samples/flagged_weight4_coupler_prep.yaml"))
    >>> result.vetting.all_swap_free, result.logical, result.logical_note
    (True, None, <LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY: 'observable is a detector parity'>)
"""
from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from enum import Enum

import numpy as np

from ..audit.exact import AuditReport, audit_placement
from ..engine import ProcessExecutor, SerialExecutor
from ..errors import InputError
from ..io.limits import SEARCH_LIMIT
from ..model.constraints import Constraints
from ..model.device import Device
from ..model.patch import Patch, observable_is_detector_parity
from ..model.placement import Placement
from ..place.enumeration import Effort
from ..score.cost import Sensitivity, SnapshotRanking, rank_across_snapshots, sensitivity
from ..score.logical import (
    LogicalRanking,
    decoder_model,
    rank_by_logical,
    require_detectors,
    undetected_zero_everywhere,
)
from ..score.noise import noisy_circuit
from .codes import family_for_chip
from .requests import require_sound_detectors
from .sdk import SdkComparison, compare_with_sdk
from .vet import DEFAULT_BUDGET_WORK, Vetting, vet_patch

__all__ = ["FindResult", "LogicalNote", "run_find"]

Progress = Callable[[str, int], None]      # (stage: 'searching' or 'scoring', count)


class LogicalNote(Enum):
    """Why the logical ranking is as it is, or absent (the report words each one)."""

    NO_DETECTORS = "no detectors or no observable declared"
    UNDETECTED_ALL_ZERO = "undetected is zero on every placement"
    OBSERVABLE_IS_DETECTOR_PARITY = "observable is a detector parity"
    NOT_MATCHABLE = "the error model is not graph-like"
    ESTIMATE_INCOMPLETE = "an enumeration budget cut the estimate short"
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
    # The audit of the placement the report leads with: the logical ranking's first when
    # there is one (it may differ from the fidelity product's first), else the vetting's.
    best_audit: AuditReport | None = None
    # When nothing fits for want of couplers (a patch qubit meets 4 or more others on a chip
    # of degree 3 or less): the built-in family made for such chips.
    fitting_family: str | None = None

    @property
    def best(self) -> Placement | None:
        """The placement the report leads with (the logical ranking's first, if any)."""
        if self.logical is not None and self.logical.placements:
            return self.logical.placements[0]
        placements = self.vetting.ranking.placements
        return placements[0] if placements else None

    def __repr__(self) -> str:
        by = self.logical.figure if self.logical is not None else self.vetting.ranking.figure
        return f"FindResult({self.vetting!r}, ranked by {by})"

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


def run_find(snapshots: Sequence[Device], patch: Patch, *, limit: int | None = SEARCH_LIMIT,
             budget_s: float | None = 60.0, constraints: Constraints | None = None,
             processes: int = 1, top: int | None = 10, figure: str = "auto",
             monte_carlo: int = 0, decode: bool = False, over_snapshots: str = "worst",
             compare_sdk: bool = False, progress: Progress | None = None,
             budget_work: int | None = DEFAULT_BUDGET_WORK,
             on_effort: Callable[[Effort], None] | None = None) -> FindResult:
    """Vet `patch` on the newest of `snapshots` and work out the rest of the find report.

    `top` is how many placements to list (None: all); `figure` what ranks them ('auto',
    'estimate', 'undetected', 'kept' or 'fidelity_product'); `monte_carlo` shots sample
    the listed placements, `decode` decodes them (with 'auto': ranks them by the sampled
    decoded logical error, on `processes` worker processes); several snapshots are also
    ranked over (`over_snapshots`: 'worst', 'mean' or 'q<fraction>'). `budget_work` bounds
    the searches in work units (identical runs stop at the same place); `budget_s` is the
    clock's cap on the whole run: the search and the scoring of what it finds share it, and
    the logical figures and the ranking over several snapshots are computed (best
    placements first) only while it lasts, at least for the `top` listed
    (`LogicalRanking.unscored` and `SnapshotRanking.unscored` count the rest). When the
    placements are too many to list, the best `top` (at least 10) by the fidelity product
    are searched best first (`Vetting.best`).
    """
    device = snapshots[-1]
    deadline = None if budget_s is None else time.monotonic() + budget_s   # for every stage
    vetting = vet_patch(device, patch, limit=limit, budget_s=budget_s,
                        progress=(lambda n: progress("searching", n)) if progress else None,
                        constraints=constraints, processes=processes,
                        budget_work=budget_work, on_effort=on_effort,
                        best_first=max(top or 0, 10))
    placements = vetting.ranking.placements
    shown = top if top is not None else max(1, len(placements))
    logical, note = _logical_ranking(device, patch, vetting, figure=figure,
                                     monte_carlo=monte_carlo, decode=decode, top=top,
                                     processes=processes, progress=progress,
                                     deadline=deadline)
    if monte_carlo and logical is None and note is None:
        note = LogicalNote.NOTHING_TO_SAMPLE
    if logical is None and figure in ("estimate", "undetected", "kept"):
        raise InputError("no placement makes every circuit swap-free, so there is no noisy "
                         "circuit to score; use fidelity_product", key=f"--figure {figure}")
    robust = None
    if len(snapshots) > 1 and placements:
        robust = rank_across_snapshots(snapshots, patch, placements, by=over_snapshots,
                                       deadline=deadline)
    sdk = compare_with_sdk(device, patch, vetting) if compare_sdk else None
    leader = logical.placements[0] if logical is not None and logical.placements else \
        (placements[0] if placements else None)
    audit = vetting.best_audit
    if leader is not None and placements and leader != placements[0]:
        audit = audit_placement(device, patch, leader)
    sensitive = tuple(sensitivity(device, patch, leader, top=5)) if leader is not None else ()
    return FindResult(vetting=vetting, top=shown, sensitivity=sensitive, logical=logical,
                      logical_note=note, sampled=bool(monte_carlo), decoded=decode,
                      snapshots=robust, sdk=sdk, best_audit=audit,
                      fitting_family=None if placements else family_for_chip(device, patch))


def _logical_ranking(device: Device, patch: Patch, vetting: Vetting, *, figure: str,
                     monte_carlo: int, decode: bool, top: int | None, processes: int,
                     progress: Progress | None, deadline: float | None = None
                     ) -> tuple[LogicalRanking | None, LogicalNote | None]:
    """The ranking by a logical figure when asked, or by 'auto' when one applies (see the
    module docstring), else None; and the note on why."""
    if figure == "fidelity_product":
        return None, None
    if not patch.detectors or not patch.observable:
        if figure != "auto" or monte_carlo:
            require_detectors(patch)                # one line: what to declare
        return None, LogicalNote.NO_DETECTORS
    swap_free: Sequence[Placement] = []
    if vetting.all_swap_free:     # the ranking lists them first (fewest off-coupler gates
        ranked = vetting.ranking  # first): a slice of the stored rows, no copy
        swap_free = ranked.placements[:int(np.count_nonzero(ranked.unscored_gates == 0))]
    if not swap_free:
        return None, None
    note_after: LogicalNote | None = None
    if figure == "auto":
        if observable_is_detector_parity(patch):   # no fault flips it unseen: every score is 0
            return None, LogicalNote.OBSERVABLE_IS_DETECTOR_PARITY
        if monte_carlo and decode:
            figure = "decoded"
        elif undetected_zero_everywhere(patch):    # every fault at once: 0 there, 0 anywhere
            try:
                decoder_model(noisy_circuit(device, patch, swap_free[0]))
                figure = "estimate"
            except InputError:
                if not monte_carlo:
                    return None, LogicalNote.NOT_MATCHABLE
                figure = "kept"            # asked to sample: undecoded shots still say
                note_after = LogicalNote.NOT_MATCHABLE   # how often detectors stay quiet
        else:
            figure = "undetected"
    require_sound_detectors(patch, patch.source)
    with (ProcessExecutor(processes) if processes > 1 else SerialExecutor()) as executor:
        out = rank_by_logical(device, patch, swap_free, figure=figure,
                              monte_carlo_shots=monte_carlo or 0,
                              top=top if top is not None else len(swap_free), decode=decode,
                              processes=processes, executor=executor, progress=progress,
                              deadline=deadline)
    note = note_after
    if out.figure == "undetected" and out.undetected is not None and not np.any(out.undetected):
        note = LogicalNote.UNDETECTED_ALL_ZERO
    elif out.estimate is not None and not out.estimate_complete:
        note = LogicalNote.ESTIMATE_INCOMPLETE
    return out, note
