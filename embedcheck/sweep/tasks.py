"""The sweep's units of work, as plain functions of plain arguments (they run on workers).

- `rank_unit`: search and rank one chip snapshot x patch (`vet_patch`), keep the `top`
  placements with their fidelity product (and the fast `undetected` figure when asked
  and the patch declares detectors).
- `sample_placement`: the decoded logical error of one placement
  (`score.sampling.sample_decoded`: stim, pymatching, seeded) until `shots` or
  `max_errors`, with a Wilson interval; per round too.

Both return dicts and never raise on bad input: an `InputError` comes back as
`{"error": ..., "input_error": True}` so the sweep records it and goes on.
"""
from __future__ import annotations

import time
from typing import Any

__all__ = ["rank_unit", "sample_placement"]


def rank_unit(job: dict[str, Any]) -> dict[str, Any]:
    """Search and rank one unit; `job` has device, patch, top, figures, limit, budget_s."""
    from ..errors import InputError
    from ..pipeline.vet import vet_patch
    started, cpu = time.perf_counter(), time.process_time()
    device, patch = job["device"], job["patch"]
    try:
        vetting = vet_patch(device, patch, limit=job["limit"], budget_s=job["budget_s"])
    except InputError as err:
        return {"error": str(err), "input_error": True, **_timing(started, cpu)}
    ranking = vetting.ranking
    best = list(ranking.placements[:job["top"]])
    rows = []
    for rank, placement in enumerate(best, start=1):
        rows.append({"rank": rank, "figure": "fidelity_product",
                     "value": float(ranking.success[rank - 1]),
                     "placement": placement.as_dict(patch),
                     "off_coupler": int(ranking.unscored_gates[rank - 1])})
    swap_free = vetting.all_swap_free and bool(best)
    if "undetected" in job["figures"] and swap_free and patch.detectors and patch.observable:
        from ..score.logical import fast_scores
        for row, score in zip(list(rows), fast_scores(device, patch, best), strict=True):
            rows.append({**row, "figure": "undetected", "value": float(score.undetected)})
    return {"rows": rows, "placements": len(ranking.placements), "complete": vetting.complete,
            "swap_free": swap_free, **_timing(started, cpu)}


def sample_placement(job: dict[str, Any]) -> dict[str, Any]:
    """Decoded logical error of one placement: `job` has device, patch, placement (physical
    qubits in patch order), shots, max_errors, seed."""
    from ..errors import InputError
    from ..model.placement import Placement
    from ..score.noise import noisy_circuit
    from ..score.sampling import sample_decoded
    started, cpu = time.perf_counter(), time.process_time()
    device, patch = job["device"], job["patch"]
    try:
        circuit = noisy_circuit(device, patch, Placement(tuple(job["placement"])))
        stats = sample_decoded(circuit, shots=job["shots"], max_errors=job["max_errors"],
                               seed=job["seed"])
    except (InputError, ValueError) as err:
        return {"error": " ".join(str(err).split())[:300], "input_error": True,
                **_timing(started, cpu)}
    low, high = stats.interval()
    return {"shots": stats.shots, "errors": stats.errors, "value": stats.rate, "low": low,
            "high": high, "per_round": stats.per_round(max(1, patch.rounds)),
            **_timing(started, cpu)}


def _timing(started: float, cpu: float) -> dict[str, float]:
    """Wall seconds and CPU seconds of this process since `started` / `cpu`: on a shared
    machine the wall time measures the load, the CPU time the work."""
    return {"seconds": time.perf_counter() - started, "cpu_seconds": time.process_time() - cpu}
