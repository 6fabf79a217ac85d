"""Resource limits on every input, so that a hostile or mistaken file is refused quickly.

A file of a few bytes can ask for unbounded work: YAML aliases that expand a billion
times, a register of 10^8 qubits, a gate definition nested ten deep that unrolls to 10^9
CNOTs, a qubit numbered 10^12 (arrays are indexed by qubit number). Each limit below is
checked before the work it guards (or while it is being done, never after), and a
refusal is a one-line `InputError` naming the file, line or option and the limit.

The limits lie far above real use: chips of tens of thousands of qubits, codes up to
distance about 51 with as many rounds. The three a user might meet are configurable
through environment variables; the others are fixed.

- input file size: 10 MB (`EMBEDCHECK_MAX_FILE_MB`);
- qubits of a chip, of a patch, declared in one OpenQASM program: 100,000
  (`EMBEDCHECK_MAX_QUBITS`); calibration snapshots x chip qubits: 10 times that;
- operations of one circuit after unrolling (gate definitions, broadcasts, multi-qubit
  gates), statements of an OpenQASM text: 1,000,000 (`EMBEDCHECK_MAX_OPERATIONS`); the
  whole experiment (prep, rounds x round, readout): 10 times that;
- fixed: chip qubit numbers 0 to 999,999 (the JSON Schema), YAML nesting 64 levels, values
  added by YAML aliases 1,000,000, `code --distance` 101 and `--rounds` 1,000 (and the patch
  file within the file size), `find --monte-carlo` 10,000,000 shots, `find --processes`
  and `sweep --workers` 4 per CPU.

    >>> max_qubits()
    100000
    >>> check_count(12, max_qubits(), what="qubits", setting="EMBEDCHECK_MAX_QUBITS")
    >>> family_qubits("heavy-hex", rows=3, columns=4)
    87
"""
from __future__ import annotations

import math
import os

from ..errors import InputError

__all__ = ["EXPERIMENT_FACTOR", "MAX_ALIAS_VALUES", "MAX_CODE_DISTANCE", "MAX_CODE_ROUNDS",
           "MAX_FILE_MB", "MAX_OPERATIONS", "MAX_QUBITS", "MAX_QUBIT_NUMBER", "MAX_SHOTS",
           "MAX_YAML_DEPTH", "SEARCH_LIMIT", "SNAPSHOT_FACTOR", "check_count", "family_qubits",
           "max_experiment_operations", "max_file_bytes", "max_operations", "max_qubits"]

MAX_FILE_MB = 10
MAX_QUBITS = 100_000
MAX_OPERATIONS = 1_000_000
EXPERIMENT_FACTOR = 10
SNAPSHOT_FACTOR = 10
MAX_QUBIT_NUMBER = 999_999
MAX_YAML_DEPTH = 64
MAX_ALIAS_VALUES = 1_000_000
MAX_CODE_DISTANCE = 101
MAX_CODE_ROUNDS = 1_000
MAX_SHOTS = 10_000_000
# Distinct placements a search keeps unless told otherwise: `find --limit`, a project's
# `search: {limit}` for `check`, and the API's `run_find` and `vet_patch` share it.
SEARCH_LIMIT = 100_000


def max_file_bytes() -> int:
    """The largest input file accepted, in bytes (EMBEDCHECK_MAX_FILE_MB, default 10)."""
    return int(_setting("EMBEDCHECK_MAX_FILE_MB", MAX_FILE_MB, fraction=True) * 1024 * 1024)


def max_qubits() -> int:
    """Most qubits of a chip, of a patch, or declared in one OpenQASM program."""
    return int(_setting("EMBEDCHECK_MAX_QUBITS", MAX_QUBITS))


def max_operations() -> int:
    """Most operations of one circuit after unrolling."""
    return int(_setting("EMBEDCHECK_MAX_OPERATIONS", MAX_OPERATIONS))


def max_experiment_operations() -> int:
    """Most operations of a whole experiment (prep, every run of the round, readout)."""
    return EXPERIMENT_FACTOR * max_operations()


def check_count(count: int, limit: int, *, what: str, setting: str | None = None,
                file: str | None = None, line: int | None = None, key: str | None = None,
                detail: str = "") -> None:
    """Raise `InputError` when `count` exceeds `limit` (`what` names the things counted)."""
    if count <= limit:
        return
    how = f" (set {setting} to raise it)" if setting else ""
    raise InputError(f"{detail}{count:,} {what}, above the limit of {limit:,}{how}",
                     file=file, line=line, key=key)


def family_qubits(kind: str, **size) -> int:
    """Qubits of a lattice family of the given size, computed without building it.

    Formulas as in `embedcheck.model.lattices` (heavy-hex: (m+1)(4n+3) + m(n+1) - 4; the
    honeycomb "brick wall": (m+1)(2n+2) - 2 vertices; the square grid: rows x columns).
    """
    if kind in ("line", "ring"):
        return size["size"]
    m, n = size["rows"], size["columns"]
    if kind == "square-grid":
        return m * n
    if kind == "hexagonal":
        return (m + 1) * (2 * n + 2) - 2
    if kind == "heavy-hex":
        return (m + 1) * (4 * n + 3) + m * (n + 1) - 4
    raise KeyError(kind)


def _setting(name: str, default: float, fraction: bool = False) -> float:
    text = os.environ.get(name)
    if not text:
        return default
    try:
        value = float(text) if fraction else int(text)
    except ValueError:
        kind = "number" if fraction else "whole number"
        raise InputError(f"{name}: '{text}' is not a {kind}") from None
    if not value > 0 or math.isnan(value) or math.isinf(value):
        raise InputError(f"{name}: '{text}' must be a positive number")
    return value
