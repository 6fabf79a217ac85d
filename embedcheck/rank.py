"""Rank placements by the estimated success probability of the whole experiment.

Cost model (independent errors; each error event spoils the shot; common practice,
the "product of fidelities" estimate):

    S = prod_{2q gates g} (1 - e2[coupler(g)])
      * prod_{measurements m} (1 - r[qubit(m)])          (mid-circuit ones included)
      * prod_{1q gates g} (1 - e1[qubit(g)])              (where given)

over prep, `rounds` check rounds and readout. We report log S and its three terms,
so a user sees why one region wins. Missing calibration figures count as 0. Gates
that land off-coupler have no coupler error to use; they are left out of S and
counted in `unscored_gates`, and placements are ordered by fewest unscored gates
first, then by S (a placement that needs routing never outranks one that does not).

Everything is numpy over an index array of all placements at once (shape
placements x patch qubits): no Python loop per placement.

    >>> import numpy as np
    >>> from embedcheck.device import Device, CouplerCalibration
    >>> from embedcheck.lattices import square_grid
    >>> from embedcheck.patch import Patch, Circuit, Operation
    >>> dev = Device.from_lattice(square_grid(1, 3), name="line",
    ...     coupler_calibration={(0, 1): CouplerCalibration(0.01), (1, 2): CouplerCalibration(0.02)})
    >>> patch = Patch("t", ("a", "b"), dict.fromkeys("ab", "data"),
    ...               {"round": Circuit("round", (Operation("cx", ("a", "b"), "2q"),))})
    >>> r = rank_placements(dev, patch, [Placement((1, 2)), Placement((0, 1))])
    >>> [p.physical for p in r.placements], np.round(r.success, 3).tolist()
    ([(0, 1), (1, 2)], [0.99, 0.98])
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .device import Device
from .patch import Patch
from .search import Placement, placement_grid

FIGURE = "fidelity_product"
CAUTION = ("Scores are model estimates from the calibration you supplied, which drifts; "
           "confirm on hardware with the provider's own validation before relying on them.")


@dataclass(frozen=True)
class Ranking:
    """Placements sorted best first, with the score and its terms (natural logs)."""

    figure: str
    placements: tuple[Placement, ...]
    log_success: np.ndarray
    terms: dict                 # term name -> log contribution array, same order
    unscored_gates: np.ndarray  # off-coupler gates per placement, not in the score

    @property
    def success(self) -> np.ndarray:
        return np.exp(self.log_success)


def experiment_counts(patch: Patch):
    """Per-experiment counts: 2q gates per patch pair, measurements and 1q gates per qubit."""
    n = patch.num_qubits
    measures = np.zeros(n)
    singles = np.zeros(n)
    for name, times in patch.experiment():
        for op in patch.circuits[name].operations:
            if op.kind == "measure":
                measures[patch.index[op.qubits[0]]] += times
            elif op.kind == "1q":
                singles[patch.index[op.qubits[0]]] += times
    pairs = patch.interaction_counts([n for n, _ in patch.experiment()], weighted=True)
    return pairs, measures, singles


def rank_placements(device: Device, patch: Patch, placements: Sequence[Placement]) -> Ranking:
    """Score every placement with the cost model above and sort best first."""
    pairs, measures, singles = experiment_counts(patch)
    two, readout, single = device.error_arrays()
    grid = placement_grid(placements, patch.num_qubits)
    if pairs and len(placements):
        ab = np.array(list(pairs), dtype=np.int64)
        weight = np.array(list(pairs.values()), dtype=float)
        err = two[grid[:, ab[:, 0]], grid[:, ab[:, 1]]]          # (placements, pairs)
        off = np.isnan(err)
        with np.errstate(divide="ignore", invalid="ignore"):
            log_two = (np.log1p(-np.where(off, 0.0, err)) * weight).sum(axis=1)
        unscored = (off * weight).sum(axis=1).astype(np.int64)
    else:
        log_two = np.zeros(len(placements))
        unscored = np.zeros(len(placements), dtype=np.int64)
    with np.errstate(divide="ignore"):       # an error of exactly 1 gives log 0 = -inf
        log_read = (np.log1p(-readout[grid]) * measures).sum(axis=1) if len(placements) \
            else log_two
        log_single = (np.log1p(-single[grid]) * singles).sum(axis=1) if len(placements) \
            else log_two
    total = log_two + log_read + log_single
    # Fewest off-coupler (unscored) gates first, then best score; ties broken by the
    # placement itself so the order is reproducible.
    order = np.lexsort(tuple(grid[:, k] for k in range(grid.shape[1] - 1, -1, -1))
                       + (-total, unscored))
    terms = {"two_qubit": log_two[order], "readout": log_read[order],
             "single_qubit": log_single[order]}
    return Ranking(FIGURE, tuple(placements[i] for i in order), total[order], terms,
                   unscored[order])
