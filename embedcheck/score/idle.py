"""The one idle model: what a qubit suffers while it waits, from its T1 and T2.

The Pauli-twirled amplitude and phase damping channel (the Pauli twirling approximation,
Ghosh, Fowler & Geller, Phys. Rev. A 86, 062318 (2012); the closed form is derived here
and the tests check it against qiskit's Kraus operators twirled numerically). After
waiting t:

    p_x = p_y = (1 - exp(-t/T1)) / 4
    p_z       = (1 - exp(-t/T2)) / 2 - (1 - exp(-t/T1)) / 4
    p_idle    = p_x + p_y + p_z = (1 - exp(-t/T1)) / 4 + (1 - exp(-t/T2)) / 2

p_z >= 0 needs T2 <= 2 T1, which the chip loader enforces; for a device built otherwise
p_z is clamped at 0 (a probability) and p_idle is then p_x + p_y. A missing T1 or T2
(None or infinity) means no decay of that kind. The cost model uses `total`, the noisy
stim circuit `px` and `pz`, the sensitivity the T1 and T2 parts of the total.

    >>> channel = idle_channel(1000.0, 100.0, 50.0)          # 1 us with T1 100 us, T2 50 us
    >>> round(float(channel.px), 6), round(float(channel.pz), 6), round(float(channel.total), 6)
    (0.002488, 0.007413, 0.012388)
    >>> float(idle_channel(5000.0, None, None).total)
    0.0
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import TypeGuard

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["IdleChannel", "idle_channel"]

_PLAIN = (int, float, type(None))          # plain Python numbers (not numpy scalars)


def _plain(x: object) -> TypeGuard[float | None]:
    return type(x) in _PLAIN


@dataclass(frozen=True, kw_only=True)
class IdleChannel:
    """The idle channel's parts, elementwise over the arrays given to `idle_channel`."""

    t1_part: np.ndarray       # (1 - exp(-t/T1)) / 4
    t2_part: np.ndarray       # (1 - exp(-t/T2)) / 2

    @cached_property
    def px(self) -> np.ndarray:
        """Probability of X (and of Y): the amplitude damping part."""
        return self.t1_part

    @cached_property
    def pz(self) -> np.ndarray:
        """Probability of Z, clamped at 0."""
        if type(self.t1_part) is float:
            return max(self.t2_part - self.t1_part, 0.0)
        return np.maximum(self.t2_part - self.t1_part, 0.0)

    @cached_property
    def t2_share(self) -> np.ndarray:
        """p_y + p_z: the T2 part of the total, (1 - exp(-t/T2)) / 2 (or p_y where p_z is
        clamped)."""
        if type(self.t1_part) is float:
            return max(self.t2_part, self.t1_part)
        return np.maximum(self.t2_part, self.t1_part)

    @cached_property
    def total(self) -> np.ndarray:
        """p_idle = p_x + p_y + p_z: the probability that waiting spoils the qubit."""
        return self.t1_part + self.t2_share


def idle_channel(t_ns: ArrayLike, t1_us: ArrayLike | None,
                 t2_us: ArrayLike | None) -> IdleChannel:
    """The idle channel after waiting `t_ns` nanoseconds with T1 and T2 in microseconds
    (numpy broadcasting; None or inf: no decay of that kind). Plain numbers take a
    scalar path (the same formula with `math`), as the noisy circuit asks for one idle
    period at a time."""
    if _plain(t_ns) and t_ns is not None and _plain(t1_us) and _plain(t2_us):
        t = t_ns / 1000.0
        d1 = -math.expm1(-t / t1_us) if t1_us else 0.0
        d2 = -math.expm1(-t / t2_us) if t2_us else 0.0
        return IdleChannel(t1_part=d1 / 4, t2_part=d2 / 2)   # type: ignore[arg-type]
    assert t_ns is not None
    t_us = np.asarray(t_ns, dtype=float) / 1000.0
    t1 = np.inf if t1_us is None else np.asarray(t1_us, dtype=float)
    t2 = np.inf if t2_us is None else np.asarray(t2_us, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        decay1 = -np.expm1(-t_us / t1)
        decay2 = -np.expm1(-t_us / t2)
    return IdleChannel(t1_part=decay1 / 4, t2_part=decay2 / 2)
