"""What a repair returns, whatever the method: the rewrite with its proof, or a finding
(no rewrite fits this placement, every rewrite lowers the fault distance, the check
rounds do not project a product state), which is an answer, not an error.

    >>> Repair(circuit="prep", method="", repaired=False, finding="no rewrite fits").repaired
    False
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from ..model.patch import Patch

__all__ = ["Repair"]


def _empty() -> Mapping[str, Any]:
    return MappingProxyType({})


@dataclass(frozen=True, kw_only=True)
class Repair:
    """A rewritten preparation on one placement (or, with `repaired` False, why there is
    none), with its proof and before/after figures.

    `method` is 'cat', 'css' or 'routed' (a unitary rewrite, proven by tableau) or
    'product' (a product state the check rounds project, verified by simulation: `basis`,
    `runs`, the frame `corrections` seen and the first-round detectors dropped).
    `patch` is the patch with the rewrite in place.
    """

    circuit: str
    method: str
    repaired: bool = True
    finding: str = ""                 # why nothing was rewritten, when `repaired` is False
    qasm: str = ""                    # OpenQASM 2 over the patch's own register names
    operations: tuple[tuple[str, tuple[str, ...]], ...] = ()   # (gate, patch qubits) in order
    proven: bool = False
    proof: str = ""
    before: Mapping[str, Any] = field(default_factory=_empty)
    after: Mapping[str, Any] = field(default_factory=_empty)
    helpers: tuple[str, ...] = ()     # patch qubits borrowed and returned to |0>
    candidates: Mapping[str, tuple[int, int] | None] = field(default_factory=_empty)
    rejected: tuple[str, ...] = ()    # cheaper rewrites dropped: they lower the fault distance
    basis: str | None = None          # product: 'z' (|0...0>) or 'x' (|+...+>)
    runs: int = 0                     # product: noiseless runs that verified it
    corrections: tuple[str, ...] = ()          # product: frame corrections seen
    dropped_detectors: tuple[str, ...] = ()    # product: first-round detectors made random
    patch: Patch | None = None
