"""Load a sweep file (YAML, schema `sweep.schema.json`): chips x snapshots x patches to run.

Paths inside are relative to the sweep file. A patch entry is a patch file, or a code
family with its distances (each distance is its own patch). The file is checked
strictly (unknown keys, wrong types, missing files are errors naming the line); the
*contents* of the chips and patches it names are read later, unit by unit, so one
malformed chip fails its own units and not the sweep.

    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> (folder / "chip.yaml").write_text("embedcheck_chip: 1")
    18
    >>> _ = (folder / "s.yaml").write_text(
    ...     "embedcheck_sweep: 1\\nname: s\\nchips: [chip.yaml]\\n"
    ...     "patches: [{family: surface, distances: [3, 5]}]\\n")
    >>> [p.label for p in load_sweep(folder / "s.yaml").patches]
    ['surface d=3', 'surface d=5']
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .yamlfile import read_yaml

__all__ = ["FIGURES", "PatchSource", "Sweep", "load_sweep"]

FIGURES = ("fidelity_product", "undetected", "decoded")


@dataclass(frozen=True, kw_only=True)
class PatchSource:
    """Where a sweep's patch comes from: a file, or a code family at one distance."""

    label: str
    file: str | None = None
    family: str | None = None
    distance: int | None = None
    rounds: int | None = None
    basis: str = "z"
    line: int | None = None


@dataclass(frozen=True, kw_only=True)
class Sweep:
    """A validated sweep file (paths resolved against its folder)."""

    name: str
    file: str
    chips: tuple[tuple[str, int | None], ...]       # (path, line in the sweep file)
    patches: tuple[PatchSource, ...]
    figures: tuple[str, ...] = ("fidelity_product",)
    top: int = 3
    shots: int = 20_000
    max_errors: int = 200
    seed: int = 1
    limit: int = 10_000
    budget_s: float = 60.0
    database: str = ""


def load_sweep(path: str | Path) -> Sweep:
    """Read a sweep file; raise `InputError` (file, line, key) on any problem."""
    doc = read_yaml(path, "sweep")
    data = doc.data
    base = Path(doc.file).parent
    chips = []
    for i, chip in enumerate(data["chips"]):
        full = base / chip
        if not full.exists():
            raise doc.error(("chips", i), f"chip file or folder '{chip}' not found "
                                          f"(looked for {full})")
        chips.append((str(full), doc.line(("chips", i))))
    patches: list[PatchSource] = []
    for i, entry in enumerate(data["patches"]):
        line = doc.line(("patches", i))
        if isinstance(entry, str):
            full = base / entry
            if not full.is_file():
                raise doc.error(("patches", i), f"patch file '{entry}' not found "
                                                f"(looked for {full})")
            patches.append(PatchSource(label=entry, file=str(full), line=line))
            continue
        family = entry["family"]
        for distance in entry["distances"]:
            if family == "repetition" or distance % 2 == 1:
                patches.append(PatchSource(
                    label=f"{family} d={distance}", family=family, distance=distance,
                    rounds=entry.get("rounds"), basis=entry.get("basis", "z"), line=line))
            else:
                raise doc.error(("patches", i, "distances"),
                                f"family '{family}' takes odd distances, not {distance}")
    labels = [p.label for p in patches]
    for i, label in enumerate(labels):
        if labels.index(label) != i:
            raise doc.error(("patches",), f"patch '{label}' is listed twice")
    resolved = [str(Path(c).resolve()) for c, _ in chips]
    for i, chip in enumerate(resolved):
        if resolved.index(chip) != i:
            raise doc.error(("chips", i), f"chip '{data['chips'][i]}' is listed twice")
    sampling = data.get("sampling", {})
    search = data.get("search", {})
    database = base / data.get("database", Path(doc.file).stem + ".sqlite")
    return Sweep(name=data["name"], file=doc.file, chips=tuple(chips), patches=tuple(patches),
                 figures=tuple(data.get("figures", ["fidelity_product"])),
                 top=data.get("top", 3), shots=sampling.get("shots", 20_000),
                 max_errors=sampling.get("max_errors", 200), seed=sampling.get("seed", 1),
                 limit=search.get("limit", 10_000), budget_s=float(search.get("budget_s", 60.0)),
                 database=str(database))
