"""What the commands share: the parser class, common options, argument types, constraint
and placement options, and how a command prints its answer.

Kept cheap to import (the standard library only, at module level): `embedcheck --help`
builds every command's parser without loading numpy, qiskit or stim.

    >>> int_list("0-3,7", "--region")
    [0, 1, 2, 3, 7]
    >>> finite({"x": float("inf"), "y": [1.0, float("nan")]})
    {'x': None, 'y': [1.0, None]}
"""
from __future__ import annotations

import argparse
import contextlib
import json
import math
import os
import sys
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import TYPE_CHECKING, Any, NoReturn

from ..errors import InputError
from ..io.limits import MAX_QUBIT_NUMBER, SEARCH_LIMIT

if TYPE_CHECKING:
    from ..model.constraints import Constraints
    from ..model.device import Device
    from ..model.patch import Patch
    from ..model.placement import Placement

__all__ = ["Parser", "add_common", "add_constraint_options", "add_html_option",
           "add_search_options", "bounded_int", "emit", "finite", "floats", "int_list",
           "kind_of", "max_processes", "non_negative_int", "pair_list", "parse_placement",
           "picture_bytes_for", "positive_float", "positive_int", "progress_printer",
           "request_constraints", "require_html_path", "require_picture_path", "seed_value",
           "stage_printer", "top_count"]


class Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one-line `InputError`s (exit 2)."""

    def error(self, message: str) -> NoReturn:  # one line, exit 2
        raise InputError(f"{message} (see 'embedcheck --help')")


def add_common(p: argparse.ArgumentParser) -> None:
    p.add_argument("chip", help="chip file (YAML)")
    p.add_argument("patch", help="patch file (YAML)")
    p.add_argument("--format", choices=("text", "json"), default="text")


def add_search_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--limit", type=positive_int, default=SEARCH_LIMIT,
                   help="stop after this many distinct placements (default 100000); the "
                        "ranking covers only the placements found")
    p.add_argument("--budget-s", type=positive_float, default=60.0,
                   help="stop the search after this many seconds (default 60)")


def add_constraint_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--require", action="append", default=[], metavar="BOUND",
                   help="a constraint such as 'ancilla: readout_error <= 0.03' or "
                        "'coupler: two_qubit_error <= 0.02' (repeat for more)")
    p.add_argument("--exclude-qubits", metavar="LIST", help="chip qubits not to use, e.g. 3,17")
    p.add_argument("--exclude-couplers", metavar="LIST", help="couplers not to use, e.g. 3-4,17-18")
    p.add_argument("--region", metavar="LIST", help="only these chip qubits, e.g. 0-40,52")
    p.add_argument("--region-box", metavar="X0,Y0,X1,Y1",
                   help="only chip qubits whose drawing position lies in this box")
    p.add_argument("--forbid-direction-fixes", action="store_true",
                   help="every CNOT must run in its coupler's native direction")


def request_constraints(args: argparse.Namespace, patch: Patch,
                        device: Device) -> Constraints | None:
    """The patch's constraints merged with the command line's (the command line adds)."""
    from ..model.constraints import build
    from ..pipeline.requests import merge_constraints
    try:
        build(args.require)
    except InputError as err:
        raise InputError(err.message, key="--require") from None
    given = build(args.require, exclude_qubits=int_list(args.exclude_qubits, "--exclude-qubits"),
                  exclude_couplers=pair_list(args.exclude_couplers),
                  region=int_list(args.region, "--region") if args.region else None,
                  region_box=floats(args.region_box) if args.region_box else None,
                  forbid_direction_fixes=args.forbid_direction_fixes)
    return merge_constraints(patch.constraints, given, device)


def int_list(text: str | None, option: str, noun: str = "qubit number") -> list[int]:
    """Qubit numbers from '3,17,40-52' (ranges merged first, so no list is longer than the
    qubit numbers that exist: 0 to MAX_QUBIT_NUMBER)."""
    spans = []
    for part in filter(None, (t.strip() for t in (text or "").split(","))):
        lo, sep, hi = part.partition("-")
        try:
            first, last = (int(lo), int(hi)) if sep else (int(part), int(part))
        except ValueError:
            raise InputError(f"{option}: '{part}' is not a {noun} or range") from None
        if last < first:
            raise InputError(f"{option}: range '{part}' runs backwards; write {last}-{first}")
        if first < 0 or last > MAX_QUBIT_NUMBER:
            raise InputError(f"{option}: '{part}': qubit numbers run from 0 to "
                             f"{MAX_QUBIT_NUMBER}")
        spans.append((first, last))
    out: list[int] = []
    covered = -1
    for first, last in sorted(spans):
        out += range(max(first, covered + 1), last + 1)
        covered = max(covered, last)
    return out


def pair_list(text: str | None) -> list[tuple[int, int]]:
    out = []
    for part in filter(None, (t.strip() for t in (text or "").split(","))):
        a, sep, b = part.partition("-")
        try:
            out.append((int(a), int(b)))
        except ValueError:
            raise InputError(f"--exclude-couplers: '{part}' should look like 3-4") from None
    return out


def floats(text: str) -> list[float]:
    try:
        values = [float(t) for t in text.split(",")]
    except ValueError:
        values = []
    if len(values) != 4 or not all(math.isfinite(v) for v in values):
        raise InputError(f"--region-box: '{text}' should be four finite numbers x0,y0,x1,y1")
    if values[2] < values[0] or values[3] < values[1]:
        raise InputError(f"--region-box: '{text}' is empty: x1 must be >= x0 and y1 >= y0")
    return values


def parse_placement(text: str, patch: Patch, device: Device) -> Placement:
    """--placement 'd0=53,d1=55,...' as a checked placement."""
    from ..pipeline.requests import placement_from_pairs
    pairs = []
    for item in filter(None, (s.strip() for s in text.split(","))):
        name, sep, phys = item.partition("=")
        if not sep:
            raise InputError(f"--placement: '{item}' should look like name=physical_qubit")
        pairs.append((name.strip(), phys))
    return placement_from_pairs(pairs, patch, device)


def positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"'{text}' must be a positive number of seconds")
    return value


def positive_int(text: str) -> int:
    return _whole(text, 1, "must be at least 1")


def _whole(text: str, low: int, must: str) -> int:
    """`text` as a whole number of at least `low`, or the argparse error saying `must`."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from None
    if value < low:
        raise argparse.ArgumentTypeError(f"'{text}' {must}")
    return value


def bounded_int(limit: int) -> Callable[[str], int]:
    """An argparse type: a whole number from 1 to `limit` (sizes that would run for hours).

    >>> bounded_int(101)("7")
    7
    """
    def parse(text: str) -> int:
        value = positive_int(text)
        if value > limit:
            raise argparse.ArgumentTypeError(f"{value} is above the limit of {limit}")
        return value
    return parse


def non_negative_int(text: str) -> int:
    """An argparse type: a whole number, 0 or more (a count where 0 turns something off)."""
    return _whole(text, 0, "must be 0 or more")


def add_executor_options(parser: Any, *, serial_help: str) -> None:
    """--scheduler / --serial / --workers: where a command's tasks run (sweep, forecast)."""
    where = parser.add_mutually_exclusive_group()
    where.add_argument("--scheduler", metavar="ADDRESS",
                       help="an existing Dask scheduler, e.g. tcp://10.0.0.5:8786 (default: a "
                            "local cluster of worker processes started here)")
    where.add_argument("--serial", action="store_true", help=serial_help)
    parser.add_argument("--workers", type=bounded_int(max_processes()), metavar="N",
                        help="worker processes of the local cluster (default: the cores; at "
                             "most 4 per CPU)")


def executor_from(args: argparse.Namespace) -> Any:
    """The executor the options above ask for; an unreachable scheduler is bad input (2)."""
    from ..engine import DaskExecutor, SerialExecutor
    if args.serial:
        if args.workers:
            raise InputError("--workers sizes the local Dask cluster; --serial runs no "
                             "workers: give one of them")
        return SerialExecutor()
    try:
        return DaskExecutor(scheduler=args.scheduler, workers=args.workers)
    except ConnectionError as err:
        raise InputError(f"--scheduler: {err}") from None


@contextlib.contextmanager
def resumable(bar: Any, stored: str) -> Iterator[None]:
    """Run a resumable job (sweep, forecast): Ctrl-C closes the progress bar, says where
    the finished work is (`stored`) and exits 130; the bar is closed at the end too."""
    try:
        yield
    except KeyboardInterrupt:
        if bar:
            bar.close()
        print(f"embedcheck: interrupted; {stored}: rerun to resume", file=sys.stderr)
        raise SystemExit(130) from None
    if bar:
        bar.close()


def executor_label(args: argparse.Namespace) -> str:
    """Where the tasks ran, for the report."""
    if args.serial:
        return "this process"
    return f"Dask at {args.scheduler}" if args.scheduler else "a local Dask cluster"


def max_processes() -> int:
    """Worker processes one command may start: four per CPU (at least 4)."""
    return max(4, 4 * (os.cpu_count() or 1))


def seed_value(text: str) -> int:
    """An argparse type: a seed for qiskit's transpiler, a whole number from 0 to 2^63 - 1."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from None
    if not 0 <= value < 2 ** 63:
        raise argparse.ArgumentTypeError(f"'{text}' must be a whole number from 0 to 2^63 - 1")
    return value


def top_count(text: str) -> int | None:
    """--top: a positive count, or 'all' (None)."""
    if text == "all":
        return None
    try:
        return positive_int(text)
    except argparse.ArgumentTypeError:
        raise argparse.ArgumentTypeError(f"'{text}' must be a whole number from 1 up, or "
                                         "'all'") from None


def finite(obj: Any) -> Any:
    """JSON has no infinity or NaN: they become null (the text report says what they mean)."""
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if isinstance(obj, dict):
        return {k: finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite(v) for v in obj]
    return obj


def emit(args: argparse.Namespace, payload: dict[str, Any], text: str) -> None:
    """Print the answer: the payload as one JSON object, or the text."""
    if args.format == "json":
        json.dump(finite(payload), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        print(text)


def announce_written(written: dict[Any, str]) -> None:
    """Say on stderr, one line per file, what a command wrote: 'wrote FILE: what' (the wording
    of `code` and `generate`). Call it only after `Outputs.commit` succeeded, so no line names
    a file that is not there; never on stdout, which stays clean JSON with --format json."""
    for path, what in written.items():
        print(f"wrote {path}: {what}", file=sys.stderr)


def progress_printer() -> Callable[[str, int], None] | None:
    """On a terminal, a progress line on stderr ('searching: n maps so far ...'); else None.
    Call it with (stage, count); `progress.done()` clears the line."""
    if not sys.stderr.isatty():
        return None
    return _Progress()


class _Progress:
    words = {"searching": "maps so far", "scoring": "placements"}

    def __init__(self) -> None:
        self.stage: str | None = None
        self.maps = 0
        self.tried = ""                      # the search's effort, shown before any map
        self.shown = 0.0

    def __call__(self, stage: str, count: int) -> None:
        if self.stage is not None and stage != self.stage:
            self.done()
        self.stage = stage
        if stage == "searching":
            self.maps = count
        print(f"\r  {stage}: {count} {self.words.get(stage, '')}{self.tried} ...", end="",
              file=sys.stderr, flush=True)

    def effort(self, effort: Any) -> None:
        """The search's effort (`place.enumeration.Effort`): partial maps tried and
        anchors begun, at most five times a second."""
        now = time.monotonic()
        if now - self.shown < 0.2:
            return
        self.shown = now
        self.tried = (f", {effort.work:.3g} partial maps tried, anchors {effort.anchors}"
                      f"/{effort.anchors_total}")
        self("searching", self.maps)

    def done(self) -> None:
        print("\r" + " " * 100 + "\r", end="", file=sys.stderr)
        self.tried = ""


def stage_printer(command: str) -> _Stages | None:
    """On a terminal, a line on stderr naming each stage as it starts ('code: checking 144
    detectors ...'), for steps that report no count while they run; else None. Call
    `.done()` (when given) to clear the line."""
    if not sys.stderr.isatty():
        return None
    return _Stages(command)


class _Stages:
    def __init__(self, command: str) -> None:
        self.command, self.width = command, 0

    def __call__(self, stage: str) -> None:
        line = f"  {self.command}: {stage} ..."
        print("\r" + line.ljust(self.width), end="", file=sys.stderr, flush=True)
        self.width = len(line)

    def done(self) -> None:
        print("\r" + " " * self.width + "\r", end="", file=sys.stderr, flush=True)


def kind_of(path: str) -> str:
    """'chip' or 'patch', from the file's top-level version key (or a circuit file's suffix;
    a folder is a folder of chip snapshots). A file without a version key is refused for
    the reason a loader would give (empty, not YAML, nested too deep)."""
    from ..io.yamlfile import file_kind
    if Path(path).is_dir():
        return "chip"
    if Path(path).suffix.lower() in (".stim", ".qasm", ".qasm2", ".qasm3"):
        return "patch"
    kind = file_kind(path)
    if kind in ("project", "sweep"):
        command = "check" if kind == "project" else "sweep"
        raise InputError(f"this is a {kind} file, not a chip or patch file (run "
                         f"'embedcheck {command}' on it)", file=path)
    return kind


def add_html_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--html", metavar="FILE",
                   help="also write a self-contained HTML report (the chip with the placement, "
                        "hover for figures; the gates that need routing with file and line; "
                        "the ranking); viewing it needs no network")


def require_html_path(target: str) -> None:
    if not target.lower().endswith((".html", ".htm")):
        raise InputError("--html: give a file name ending in .html", file=target)


def require_picture_path(target: str, option: str) -> None:
    path = Path(target)
    if path.suffix.lower() not in (".png", ".svg"):
        raise InputError(f"{option}: pictures are written as .png or .svg, not "
                         f"'{path.suffix or path.name}'", file=target)


def picture_bytes_for(target: str, figure: Any) -> bytes:
    """A drawn figure as the bytes of `target`'s format (.png or .svg)."""
    from ..report.picture import picture_bytes
    return picture_bytes(figure, Path(target).suffix.lower().lstrip("."))
