"""`embedcheck check PROJECT`: the CI gate (exit 0 every rule holds, 1 a rule fails)."""
from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from ..errors import InputError, InternalError
from .options import announce_written, emit, finite, non_negative_int

__all__ = ["add_parser", "run"]

_REPORT_NAMES = {"json": "JSON", "markdown": "Markdown", "junit": "JUnit XML",
                 "sarif": "SARIF", "html": "HTML"}


def add_parser(sub: Any) -> None:
    check = sub.add_parser("check", help="run a project file's rules for CI (exit 1 on a "
                           "failed rule)")
    check.add_argument("project", help="project file (YAML)")
    check.add_argument("--format", choices=("text", "json"), default="text")
    for kind in ("json", "markdown", "junit", "sarif", "html"):
        check.add_argument(f"--{kind}", metavar="FILE", help=f"write the {kind} report here "
                           "(overrides the project file)" + (
                               "; self-contained, the chip of each chip x patch drawn with "
                               "its chosen placement" if kind == "html" else ""))
    check.add_argument("--baseline", metavar="FILE",
                       help="a previous JSON report: say what got worse and what got better")
    check.add_argument("--fail-on-worse", action="store_true",
                       help="exit 1 when anything got worse against the baseline")
    check.add_argument("--cross-check-top", type=non_negative_int, metavar="N",
                       help="placements per pair to re-check with qiskit's transpiler "
                            "(default: the project's, else 3; 0 turns it off)")
    check.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from ..io.files import Outputs
    from ..io.projectfile import load_project
    from ..pipeline.checks import run_project
    from ..report import data as report_data
    from ..report.junit import render_junit
    from ..report.markdown import render_markdown
    from ..report.sarif import render_sarif
    from ..report.text import render_check

    if args.fail_on_worse and not args.baseline:
        raise InputError("--fail-on-worse compares with a previous report: give --baseline FILE")
    project = load_project(args.project)
    targets = dict(project.reports)
    for kind in ("json", "markdown", "junit", "sarif", "html"):
        if getattr(args, kind):
            targets[kind] = getattr(args, kind)
    baseline = _read_baseline(args.baseline) if args.baseline else None
    # Every file the project names is an input, read now or later: no report may land on
    # one, nor on another report. The claims also check that every folder is writable.
    outputs = Outputs(inputs=[path for path, _ in project.chips]
                      + [entry.file for entry in project.patches])
    for kind, target in targets.items():
        where = f"--{kind}" if getattr(args, kind) else f"reports.{kind}"
        outputs.claim(target, option=where)
    on_terminal = sys.stderr.isatty()
    result = run_project(project, cross_check_top=args.cross_check_top,
                         progress=(lambda msg: print(f"\r  checking {msg} ...", end="",
                                                     file=sys.stderr, flush=True))
                         if on_terminal else None)
    if on_terminal:
        print("\r" + " " * 60 + "\r", end="", file=sys.stderr)
    payload = report_data.check_dict(result, baseline)
    if payload["baseline"] is not None:
        payload["baseline"]["file"] = args.baseline
    writers = {"json": lambda: json.dumps(finite(payload), indent=2, allow_nan=False) + "\n",
               "markdown": lambda: render_markdown(payload),
               "junit": lambda: render_junit(payload),
               "sarif": lambda: json.dumps(render_sarif(payload), indent=2) + "\n",
               "html": lambda: _html(result, payload)}
    outputs.commit({target: writers[kind]() for kind, target in targets.items()})
    announce_written({target: f"the {_REPORT_NAMES[kind]} report"
                      for kind, target in targets.items()})
    emit(args, payload, render_check(payload))
    if result.internal_errors:
        raise InternalError("the exact audit and qiskit's transpiler disagree (see the report); "
                            "please report it")
    worse = bool(payload["baseline"] and payload["baseline"]["worse"])
    return 0 if result.passed and not (args.fail_on_worse and worse) else 1


def _html(result: Any, payload: dict[str, Any]) -> str:
    """The check as one HTML page: each chip x patch with its chosen placement drawn."""
    from ..report.html import render_html
    from ..report.svg import placement_svg
    pictures = {}
    for pair, shown in zip(result.pairs, payload["results"], strict=True):
        placement = shown.get("chosen_placement")
        gates = [g for c in shown.get("circuits", []) for g in c.get("gates", [])]
        pictures[f"{shown['patch']} on {shown['chip']}"] = placement_svg(
            pair.device, pair.patch, placement, gates, title=f"{shown['patch']} on "
                                                             f"{shown['chip']}")
    return render_html(payload, pictures=pictures)


def _read_baseline(path: str) -> dict[str, Any]:
    from ..io.files import read_json
    data = read_json(path, what="baseline report")
    if not isinstance(data, dict) or data.get("command") != "check":
        raise InputError("baseline is not an embedcheck check report (--format json or the "
                         "project's json report)", file=path)
    return data
