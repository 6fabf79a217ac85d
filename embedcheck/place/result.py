"""What a placement search returns: the distinct placements and how the search ended.

    >>> StopReason.BUDGET.value, StopReason("limit") is StopReason.LIMIT
    ('budget', True)
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import Enum

from ..model.placement import Placement, PlacementRows
from .reasons import Reason

__all__ = ["SearchResult", "StopReason"]


class StopReason(str, Enum):
    """Why a search stopped. The value is the word the reports print."""

    COMPLETE = "complete"          # every placement was found
    LIMIT = "limit"                # the count limit was reached
    BUDGET = "budget"              # the time (or step) budget ran out

    def __str__(self) -> str:
        return self.value

    def __format__(self, spec: str) -> str:
        return format(self.value, spec)


@dataclass(frozen=True, kw_only=True)
class SearchResult:
    """Distinct swap-free placements for the searched circuits, and how the search ended.

    `stop_reason` says whether every placement was found (`StopReason.COMPLETE`) or the
    count limit or the budget stopped the search. `reasons` explains, in plain words,
    why there is no placement when a cheap necessary condition already rules it out;
    `culprits` holds the same reasons with the patch qubits and pairs each one blames.
    `symmetry_order` is the order of the patch's symmetry group for the searched circuits
    (also when a necessary condition ruled the search out; 1 when it is too big to list).
    """

    circuits: tuple[str, ...]
    placements: Sequence[Placement]          # kept as `PlacementRows` (one int array)
    raw_maps: int
    symmetry_order: int
    stop_reason: StopReason
    reasons: tuple[str, ...]
    elapsed_s: float
    symmetries: tuple[tuple[int, ...], ...] = ()   # permutations of patch qubit indices
    notes: tuple[str, ...] = ()                    # caveats on how the result was counted
    work: int = 0                  # the matcher's work units used (see find_placements)
    timed_out: bool = False        # the clock stopped it (another run may stop elsewhere)
    culprits: tuple[Reason, ...] = ()              # `reasons`, with what each one blames

    def __post_init__(self) -> None:
        if not isinstance(self.placements, PlacementRows):
            object.__setattr__(self, "placements", PlacementRows(self.placements))

    @property
    def complete(self) -> bool:
        return self.stop_reason is StopReason.COMPLETE

    def __repr__(self) -> str:
        return (f"SearchResult({len(self.placements)} placement(s) of "
                f"{', '.join(self.circuits)}; {self.stop_reason.value}; "
                f"{self.elapsed_s:.2f} s)")

    def _repr_html_(self) -> str:
        from ..report.notebook import html_of  # display hook: see DEVELOPERS.md
        return html_of(self)


