"""Run a sweep: plan the units, send them to an executor, store every result as it lands.

A *unit* is one chip snapshot x one patch. Its ranking is one task (`tasks.rank_unit`);
when the sweep asks for the sampled `decoded` figure, each of the unit's best swap-free
placements is then one sampling task (`tasks.sample_placement`), submitted as soon as
the ranking is back, unless sampling cannot say anything (the patch's observable is a
parity of its detectors: no fault flips it unseen, every shot counts 0 errors), in which
case the unit records why (`SAMPLING_SKIPPED`) and is ranked by the fidelity product.
Task keys name the unit and the parameters the task runs with, so a rerun of the same
sweep skips every stored task (resume) and a changed parameter (more
shots, a bigger `top`) recomputes only what it changes.

Chips and patches are loaded here, in the process that runs the sweep (loading is the io
stage); a chip or patch that does not load fails its own units, with its one-line error
stored, and the rest of the sweep goes on.

    >>> from embedcheck.engine import SerialExecutor
    >>> callable(run_sweep)
    True
"""
from __future__ import annotations

import hashlib
import json
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

from ..engine import Done, Executor, Task
from ..errors import InputError
from ..io.sweepfile import PatchSource, Sweep
from ..model.device import Device
from ..model.patch import Patch, observable_is_detector_parity
from .store import ResultRow, ResultStore, Unit
from .tasks import rank_unit, sample_placement

__all__ = ["SAMPLING_SKIPPED", "SweepOutcome", "plan_units", "run_sweep"]

# Stored as the unit's note when the `decoded` figure is asked for but cannot say anything.
SAMPLING_SKIPPED = ("decoded not sampled: the observable is a parity of the detectors, so no "
                    "fault flips it unseen and every shot would count 0 logical errors")


@dataclass(frozen=True, kw_only=True)
class SweepOutcome:
    """What one run of a sweep did."""

    database: str
    units: int                 # chip snapshots x patches
    failed_units: tuple[str, ...]   # 'unit: error', one line each
    computed: int              # tasks computed in this run
    skipped: int               # tasks found stored (resume)
    failed_samples: int = 0

    @property
    def ok(self) -> bool:
        return not self.failed_units and not self.failed_samples


@dataclass(frozen=True, kw_only=True)
class _Planned:
    unit: Unit
    device: Device | None = None
    patch: Patch | None = None
    error: str | None = None


def plan_units(sweep: Sweep) -> list[_Planned]:
    """Every chip snapshot x patch of the sweep, loaded (or with the error that stopped it)."""
    from ..io.chipfile import load_snapshots
    from ..io.patchfile import load_patch, patch_from_family
    chips: list[tuple[str, str, list, str | None]] = []      # (label, file, snapshots, error)
    names: set[str] = set()
    for path, _ in sweep.chips:
        try:
            snapshots = list(load_snapshots(path))
            label, error = snapshots[-1].name, None
        except InputError as err:
            snapshots, label, error = [], Path(path).stem, str(err)
        while label in names:                      # two chips of one name stay apart
            label += f" ({Path(path).name})"
        names.add(label)
        chips.append((label, path, snapshots, error))
    patches: list[tuple[PatchSource, Patch | None, str | None]] = []
    for source in sweep.patches:
        try:
            if source.file is not None:
                patch = load_patch(source.file)
            else:
                assert source.family is not None and source.distance is not None
                patch = patch_from_family(source.family, distance=source.distance,
                                          rounds=source.rounds or source.distance,
                                          basis=source.basis)
            patches.append((source, patch, None))
        except (InputError, ValueError) as err:
            patches.append((source, None, " ".join(str(err).split())))
    out = []
    for label, path, snapshots, chip_error in chips:
        for source, loaded, patch_error in patches:
            rounds = loaded.rounds if loaded is not None else None
            if chip_error is not None:
                unit = Unit(key=f"{label}|-|{source.label}", chip=label, chip_file=path,
                            snapshot="-", patch=source.label, distance=source.distance)
                out.append(_Planned(unit=unit, error=chip_error))
                continue
            for i, device in enumerate(snapshots):
                snapshot = device.calibration_timestamp or (
                    Path(device.source or path).stem if len(snapshots) == 1 else f"#{i}")
                unit = Unit(key=f"{label}|{snapshot}|{source.label}", chip=label, chip_file=path,
                            snapshot=snapshot, taken_at=device.calibration_timestamp,
                            patch=source.label, distance=source.distance, rounds=rounds)
                out.append(_Planned(unit=unit, device=device, patch=loaded, error=patch_error))
    return out


def run_sweep(sweep: Sweep, *, executor: Executor, database: str | None = None,
              progress: Callable[[int, int], None] | None = None) -> SweepOutcome:
    """Run (or resume) `sweep` on `executor`, storing results in its SQLite database.

    `progress(done, total)` is called after each finished task is stored (total grows as
    sampling tasks are added). An interruption (KeyboardInterrupt) at any point keeps
    every stored task; running again resumes.
    """
    store = ResultStore(database or sweep.database)
    try:
        return _run(sweep, executor, store, progress)
    finally:
        store.close()


def _run(sweep, executor, store, progress) -> SweepOutcome:
    planned = plan_units(sweep)
    done_before = store.done_tasks()
    rank_params = _digest({"limit": sweep.limit, "budget_s": sweep.budget_s, "top": sweep.top,
                           "figures": sorted(set(sweep.figures) - {"decoded"})})
    sample_params = _digest({"shots": sweep.shots, "max_errors": sweep.max_errors,
                             "seed": sweep.seed})
    by_key = {p.unit.key: p for p in planned}
    parity: dict[int, bool] = {}            # per patch object (shared by its units)

    def skip_note(unit_key: str) -> str | None:
        """Why the unit's asked-for sampling is not run, or None (it is run)."""
        patch = by_key[unit_key].patch
        if "decoded" not in sweep.figures or patch is None or not patch.detectors \
                or not patch.observable:
            return None
        if id(patch) not in parity:
            parity[id(patch)] = observable_is_detector_parity(patch)
        return SAMPLING_SKIPPED if parity[id(patch)] else None
    computed = skipped = failed_samples = 0
    tasks: list[Task] = []

    def sampling(unit_key: str, placements) -> list[Task]:
        nonlocal skipped
        plan = by_key[unit_key]
        patch = plan.patch
        if "decoded" not in sweep.figures or patch is None or not patch.detectors \
                or not patch.observable or skip_note(unit_key) is not None:
            return []
        out = []
        for rank, placement, off in placements:
            key = f"sample:{unit_key}:{rank}:{sample_params}"
            if off or key in done_before:
                skipped += key in done_before
                continue
            physical = [placement[q] for q in patch.qubits]
            out.append(Task(key=key, function=sample_placement, argument={
                "device": plan.device, "patch": plan.patch, "placement": physical,
                "shots": sweep.shots, "max_errors": sweep.max_errors,
                "seed": (zlib.crc32(key.encode()) + sweep.seed) % 2**32, "rank": rank,
                "physical": placement, "off_coupler": off, "unit": unit_key}))
        return out

    for plan in planned:
        key = f"rank:{plan.unit.key}:{rank_params}"
        if key in done_before:
            skipped += 1
            tasks += sampling(plan.unit.key, store.placements(plan.unit.key))
        elif plan.error is not None:
            store.record_failure(plan.unit, task=key, error=plan.error)
            computed += 1
        else:
            tasks.append(Task(key=key, function=rank_unit, argument={
                "device": plan.device, "patch": plan.patch, "top": sweep.top,
                "figures": tuple(sweep.figures), "limit": sweep.limit,
                "budget_s": sweep.budget_s, "unit": plan.unit.key}))
    total = [len(tasks)]
    finished = 0

    def follow(done: Done) -> list[Task]:
        if not done.key.startswith("rank:") or done.error or done.value.get("error"):
            return []
        unit_key = done.key.split(":", 1)[1].rsplit(":", 1)[0]
        placements = [(r["rank"], r["placement"], r["off_coupler"]) for r in done.value["rows"]
                      if r["figure"] == "fidelity_product"]
        more = sampling(unit_key, placements) if done.value["swap_free"] else []
        total[0] += len(more)
        return more

    stream = executor.results(tasks, follow=_recording(store, by_key, follow, skip_note))
    for done in stream:
        finished += 1
        computed += 1
        if done.key.startswith("sample:") and (done.error or done.value.get("error")):
            failed_samples += 1
        if progress is not None:
            progress(finished, total[0])
    units = store.units()
    failed = tuple(f"{u['unit']}: {u['error']}" for u in units if u["status"] == "failed")
    return SweepOutcome(database=store.path, units=len(planned), failed_units=failed,
                        computed=computed, skipped=skipped, failed_samples=failed_samples)


def _recording(store: ResultStore, by_key: dict, follow, skip_note):
    """Store each finished task before anything else looks at it (never lost)."""

    def record(done: Done) -> list[Task]:
        kind, rest = done.key.split(":", 1)
        if kind == "rank":
            unit_key = rest.rsplit(":", 1)[0]
            unit = by_key[unit_key].unit
            value = done.value or {}
            error = done.error and f"internal error: {done.error}" or value.get("error")
            if error:
                store.record_failure(unit, task=done.key, error=error,
                                     seconds=value.get("seconds", 0.0),
                                     cpu_seconds=value.get("cpu_seconds"))
                return []
            rows = [ResultRow(**row) for row in value["rows"]]
            ranked_by = "undetected" if any(r.figure == "undetected" for r in rows) \
                else "fidelity_product"
            store.record_unit(unit, task=done.key, rows=rows, placements=value["placements"],
                              complete=value["complete"], seconds=value["seconds"],
                              ranked_by=ranked_by, cpu_seconds=value.get("cpu_seconds"),
                              note=skip_note(unit_key))
        else:
            unit_key, rank_text, _ = rest.rsplit(":", 2)
            value = done.value or {}
            error = done.error and f"internal error: {done.error}" or value.get("error")
            row = None
            if not error:
                stored = {r: (p, off) for r, p, off in store.placements(unit_key)}
                physical, off = stored[int(rank_text)]
                row = ResultRow(rank=int(rank_text), figure="decoded", value=value["value"],
                                low=value["low"], high=value["high"], shots=value["shots"],
                                errors=value["errors"], per_round=value["per_round"],
                                placement=physical, off_coupler=off)
            store.record_sample(unit_key, task=done.key, row=row,
                                seconds=value.get("seconds", 0.0), error=error,
                                cpu_seconds=value.get("cpu_seconds"))
        return follow(done)

    return record


def _digest(params: dict) -> str:
    return hashlib.sha256(json.dumps(params, sort_keys=True).encode()).hexdigest()[:10]
