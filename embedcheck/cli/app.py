"""The `embedcheck` command line: parse arguments, call the stages, map errors to exit codes.

Exit codes: 0 answered (findings included); 1 with `--strict` when a circuit needs
routing; 2 bad input or usage (one line on stderr, no traceback, nothing written).
"""
from __future__ import annotations

import argparse
import json
import os
import re
import sys

import numpy as np

from .. import __version__
from ..audit.exact import audit_placement
from ..io.chipfile import load_device, load_snapshots
from ..io.files import Outputs, forget_inputs, read_input
from ..io.writers import family_chip_yaml
from ..model.lattices import FAMILIES, build_family
from ..errors import InputError, did_you_mean
from ..io.patchfile import load_patch
from ..score.cost import CAUTION, rank_placements
from ..report import data as report_data
from ..report.text import render_audit, render_chip, render_find, render_patch, render_repair
from ..place.search import Placement
from ..pipeline.vet import vet_patch


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2
        raise InputError(f"{message} (see 'embedcheck --help')")


def main(argv: list[str] | None = None) -> int:
    forget_inputs()
    try:
        args = _parser().parse_args(argv)
        if not getattr(args, "command", None):
            raise InputError("give a command: find, audit, check, repair, draw, code, validate, "
                             "show or generate "
                             "(see 'embedcheck --help')")
        return args.run(args)
    except InputError as err:
        print(f"embedcheck: error: {err}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("embedcheck: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as err:                 # a bug of ours: one line, exit 3
        if os.environ.get("EMBEDCHECK_TRACEBACK"):
            raise
        message = " ".join(str(err).split())          # one line, whatever the message
        print(f"embedcheck: internal error: {type(err).__name__}: {message} (please report "
              "it; set EMBEDCHECK_TRACEBACK=1 for the traceback)", file=sys.stderr)
        return 3


def _parser() -> argparse.ArgumentParser:
    top = _Parser(prog="embedcheck", description="Check that a QEC code patch sits on a chip's "
                  "fixed couplers with no added two-qubit gates, circuit by circuit.")
    top.add_argument("--version", action="version", version=f"embedcheck {__version__}")
    sub = top.add_subparsers(dest="command", parser_class=_Parser)

    find = sub.add_parser("find", help="find, audit and rank every swap-free placement")
    _common(find)
    _search_options(find)
    _constraint_options(find)
    find.add_argument("--top", type=_top, default=10,
                      help="placements to list (default 10; 'all' lists every one, e.g. "
                           "for --format json)")
    find.add_argument("--strict", action="store_true",
                      help="exit 1 unless every circuit is swap-free on the best placement")
    find.add_argument("--over-snapshots", default="worst", metavar="HOW",
                      help="with several calibration snapshots, rank by 'worst' (default), "
                           "'mean' or a quantile such as 'q0.25' of the per-snapshot score")
    find.add_argument("--draw", metavar="FILE", help="draw the best placement on the chip "
                      "(.png or .svg)")
    find.add_argument("--score-map", metavar="FILE", help="draw every qubit shaded by the best "
                      "score of any placement that uses it (.png or .svg)")
    find.add_argument("--figure", choices=("auto", "undetected", "kept", "fidelity_product"),
                      default="auto",
                      help="what ranks the placements: 'undetected' (lowest-order rate of "
                           "logical errors no detector sees, from stim's detector error model), "
                           "'kept' (fraction of shots kept by post-selection) or "
                           "'fidelity_product'; 'auto' (default) takes 'undetected' when the "
                           "patch declares detectors and an observable and every circuit is "
                           "swap-free, else 'fidelity_product'")
    find.add_argument("--monte-carlo", type=_positive_int, metavar="SHOTS",
                      help="also sample SHOTS noisy shots of each listed placement with stim")
    find.add_argument("--decode", action="store_true",
                      help="with --monte-carlo, also decode by matching (pymatching)")
    find.add_argument("--processes", type=_positive_int, default=1,
                      help="worker processes for the placement search and the logical "
                           "scores (default 1)")
    find.add_argument("--compare-sdk", action="store_true",
                      help="also run qiskit's VF2Layout on the whole experiment and say where "
                           "its choice ranks under our model")
    find.set_defaults(run=_run_find)

    draw = sub.add_parser("draw", help="draw a chip, optionally with a placement of a patch")
    draw.add_argument("chip", help="chip file (YAML)")
    draw.add_argument("patch", nargs="?", help="patch file (optional)")
    draw.add_argument("--output", "-o", required=True, help="picture file (.png or .svg)")
    pick = draw.add_mutually_exclusive_group()
    pick.add_argument("--placement", help="patch qubit=physical qubit pairs")
    pick.add_argument("--pick", type=_positive_int, help="the placement ranked N by 'find'")
    pick.add_argument("--score-map", action="store_true",
                      help="shade qubits by the best score of any placement that uses them")
    draw.add_argument("--format", choices=("text", "json"), default="text")
    draw.set_defaults(run=_run_draw)

    audit = sub.add_parser("audit", help="audit every circuit of one placement, gate by gate")
    _common(audit)
    how = audit.add_mutually_exclusive_group(required=True)
    how.add_argument("--placement", help="patch qubit=physical qubit pairs, e.g. d0=53,d1=55,...")
    how.add_argument("--pick", type=_positive_int,
                     help="audit the placement ranked N by 'find' (1 = best)")
    _search_options(audit)
    audit.add_argument("--router-estimate", action="store_true",
                       help="also ask qiskit's router how many gates it would add (an estimate)")
    audit.add_argument("--cross-check", action="store_true",
                       help="re-check the audit with qiskit's transpiler (exit 3 if they disagree)")
    audit.add_argument("--seed", type=int, default=11, help="router seed (default 11)")
    audit.add_argument("--strict", action="store_true",
                       help="exit 1 when any circuit needs routing")
    audit.add_argument("--write-qasm", metavar="FOLDER",
                       help="write each swap-free circuit, placed on physical qubits in the "
                            "chip's native gates, as FOLDER/<circuit>.qasm (OpenQASM 3); "
                            "existing files are kept unless --force")
    audit.add_argument("--force", action="store_true",
                       help="with --write-qasm, replace existing <circuit>.qasm files")
    audit.set_defaults(run=_run_audit)

    valid = sub.add_parser("validate", help="check chip and patch files and say what is wrong")
    valid.add_argument("files", nargs="+", metavar="FILE")
    valid.add_argument("--format", choices=("text", "json"), default="text")
    valid.set_defaults(run=_run_validate)

    check = sub.add_parser("check", help="run a project file's rules for CI (exit 1 on a "
                           "failed rule)")
    check.add_argument("project", help="project file (YAML)")
    check.add_argument("--format", choices=("text", "json"), default="text")
    for kind in ("json", "markdown", "junit", "sarif"):
        check.add_argument(f"--{kind}", metavar="FILE", help=f"write the {kind} report here "
                           "(overrides the project file)")
    check.add_argument("--baseline", metavar="FILE",
                       help="a previous JSON report: say what got worse and what got better")
    check.add_argument("--fail-on-worse", action="store_true",
                       help="exit 1 when anything got worse against the baseline")
    check.add_argument("--cross-check-top", type=int, metavar="N",
                       help="placements per pair to re-check with qiskit's transpiler "
                            "(default: the project's, else 3; 0 turns it off)")
    check.set_defaults(run=_run_check)

    fix = sub.add_parser("repair", help="rewrite a preparation onto a placement's couplers, "
                         "with a proof; writes a new patch file")
    fix.add_argument("chip", help="chip file (YAML)")
    fix.add_argument("patch", help="patch file (YAML)")
    where = fix.add_mutually_exclusive_group()
    where.add_argument("--placement", help="patch qubit=physical qubit pairs")
    where.add_argument("--pick", type=_positive_int, help="the placement ranked N by 'find' "
                       "(default 1)")
    fix.add_argument("--circuit", default="prep", help="the circuit to rewrite (default prep)")
    fix.add_argument("--method", choices=("best", "product"), default="best",
                     help="best: the best proven unitary rewrite (default); product: a product "
                          "state that the check rounds project, verified by simulation, with "
                          "first-round detectors it makes random dropped")
    fix.add_argument("--output", "-o", required=True,
                     help="the new patch file to write (never the patch itself); the repaired "
                          "circuit goes beside it as <name>_<circuit>.qasm")
    fix.add_argument("--format", choices=("text", "json"), default="text")
    fix.set_defaults(run=_run_repair)

    code = sub.add_parser("code", help="write a patch file for a built-in code family")
    code.add_argument("family", choices=("repetition", "flagged", "surface", "heavy-hex",
                                         "heavy-hex-chipfit"))
    code.add_argument("--distance", type=_positive_int, default=3)
    code.add_argument("--rounds", type=_positive_int, default=2)
    code.add_argument("--basis", choices=("z", "x"), default="z",
                      help="repetition code: z (bit-flip) or x (phase-flip)")
    code.add_argument("--prep", choices=("unitary", "naive", "product"),
                      help="flagged unit: cat state over its couplers (default), the naive "
                           "chain, or a product state")
    code.add_argument("--output", "-o", help="file to write (default: standard output)")
    code.add_argument("--format", choices=("text", "json"), default="text",
                      help="json: one object with the patch file's text")
    code.set_defaults(run=_run_code)

    show = sub.add_parser("show", help="summarise a chip or patch file")
    show.add_argument("file", metavar="FILE", help="chip file, folder of chip snapshots, or patch file")
    show.add_argument("--format", choices=("text", "json"), default="text")
    show.set_defaults(run=_run_show)

    gen = sub.add_parser("generate", help="write a chip file for a lattice family "
                         "(placeholder calibration)")
    gen.add_argument("family", choices=sorted(FAMILIES))
    gen.add_argument("--rows", type=_positive_int)
    gen.add_argument("--columns", type=_positive_int)
    gen.add_argument("--size", type=_positive_int, help="qubits, for line and ring")
    gen.add_argument("--name", help="chip name (default: from the family and size)")
    gen.add_argument("--output", "-o", help="file to write (default: standard output); an "
                     "existing file is kept unless --force")
    gen.add_argument("--force", action="store_true", help="replace an existing --output file")
    gen.add_argument("--format", choices=("text", "json"), default="text",
                     help="json: one object with the chip file's text")
    gen.set_defaults(run=_run_generate)
    return top


def _constraint_options(p):
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


def _check_against_chip(rules, device) -> None:
    """Constraint values that name parts the chip does not have are mistakes, not no-ops."""
    known = set(device.qubits)
    for label, qubits in (("--exclude-qubits", rules.exclude_qubits),
                          ("--region", rules.region or ())):
        missing = sorted(set(qubits) - known)
        if missing:
            raise InputError(f"{label}: chip '{device.name}' has no qubit {missing[0]}")
    for a, b in sorted(rules.exclude_couplers):
        if (a, b) not in set(device.couplers):
            raise InputError(f"--exclude-couplers: {a}-{b} is not a coupler of chip "
                             f"'{device.name}'")


def _constraints_from(args, patch, device):
    """The patch's constraints merged with the command line's (the command line adds)."""
    from dataclasses import replace
    from ..place.constraints import Constraints, build
    try:
        build(args.require)
    except InputError as err:
        raise InputError(f"--require: {err.message}") from None
    given = build(args.require, exclude_qubits=_int_list(args.exclude_qubits, "--exclude-qubits"),
                  exclude_couplers=_pair_list(args.exclude_couplers),
                  region=_int_list(args.region, "--region") if args.region else None,
                  region_box=_floats(args.region_box) if args.region_box else None,
                  forbid_direction_fixes=args.forbid_direction_fixes)
    base = patch.constraints or Constraints()
    _check_against_chip(given, device)
    if given.empty:
        return base if not base.empty else None
    roles = {r: tuple(base.roles.get(r, ())) + tuple(given.roles.get(r, ()))
             for r in set(base.roles) | set(given.roles)}
    return replace(base, roles=roles, couplers=base.couplers + given.couplers,
                   exclude_qubits=base.exclude_qubits | given.exclude_qubits,
                   exclude_couplers=base.exclude_couplers | given.exclude_couplers,
                   region=given.region if given.region is not None else base.region,
                   region_box=given.region_box or base.region_box,
                   forbid_direction_fixes=base.forbid_direction_fixes
                   or given.forbid_direction_fixes)


def _int_list(text, option):
    out = []
    for part in filter(None, (t.strip() for t in (text or "").split(","))):
        lo, sep, hi = part.partition("-")
        try:
            first, last = (int(lo), int(hi)) if sep else (int(part), int(part))
        except ValueError:
            raise InputError(f"{option}: '{part}' is not a qubit number or range") from None
        if last < first:
            raise InputError(f"{option}: range '{part}' runs backwards; write {last}-{first}")
        out += list(range(first, last + 1))
    return out


def _pair_list(text):
    out = []
    for part in filter(None, (t.strip() for t in (text or "").split(","))):
        a, sep, b = part.partition("-")
        try:
            out.append((int(a), int(b)))
        except ValueError:
            raise InputError(f"--exclude-couplers: '{part}' should look like 3-4") from None
    return out


def _floats(text):
    import math
    try:
        values = [float(t) for t in text.split(",")]
    except ValueError:
        values = []
    if len(values) != 4 or not all(math.isfinite(v) for v in values):
        raise InputError(f"--region-box: '{text}' should be four finite numbers x0,y0,x1,y1")
    if values[2] < values[0] or values[3] < values[1]:
        raise InputError(f"--region-box: '{text}' is empty: x1 must be >= x0 and y1 >= y0")
    return values


def _search_options(p):
    p.add_argument("--limit", type=_positive_int, default=100_000,
                   help="stop after this many distinct placements (default 100000); the "
                        "ranking covers only the placements found")
    p.add_argument("--budget-s", type=_positive_float, default=60.0,
                   help="stop the search after this many seconds (default 60)")


def _positive_float(text):
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a number") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"'{text}' must be a positive number of seconds")
    return value


def _common(p):
    p.add_argument("chip", help="chip file (YAML)")
    p.add_argument("patch", help="patch file (YAML)")
    p.add_argument("--format", choices=("text", "json"), default="text")


def _top(text: str):
    """--top: a positive count, or 'all' (None)."""
    if text == "all":
        return None
    try:
        return _positive_int(text)
    except argparse.ArgumentTypeError:
        raise argparse.ArgumentTypeError(f"'{text}' is neither a whole number nor 'all'") from None


def _positive_int(text):
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"'{text}' must be at least 1")
    return value


def _finite(obj):
    """JSON has no infinity or NaN: they become null (the text report says what they mean)."""
    if isinstance(obj, float) and not np.isfinite(obj):
        return None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_finite(v) for v in obj]
    return obj


def _emit(args, payload: dict, text: str) -> None:
    if args.format == "json":
        json.dump(_finite(payload), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        print(text)


def _progress():
    if not sys.stderr.isatty():
        return None

    def show(n):
        print(f"\r  searching: {n} maps so far ...", end="", file=sys.stderr, flush=True)
    return show


def _run_find(args) -> int:
    snapshots, patch = load_snapshots(args.chip), load_patch(args.patch)
    device = snapshots[-1]
    by = args.over_snapshots
    if by not in ("worst", "mean") and not re.fullmatch(r"q(0(\.\d+)?|1(\.0*)?)", by):
        raise InputError(f"--over-snapshots: '{by}' should be worst, mean or q<fraction> "
                         "such as q0.25")
    outputs = Outputs()
    for target, option in ((args.draw, "--draw"), (args.score_map, "--score-map")):
        if target:
            _check_picture_path(target, option)
            outputs.claim(target, option=option)
    pictures: dict = {}
    progress = _progress()
    vetting = vet_patch(device, patch, limit=args.limit, budget_s=args.budget_s,
                        progress=progress, constraints=_constraints_from(args, patch, device),
                        processes=args.processes)
    if progress:
        print("\r" + " " * 40 + "\r", end="", file=sys.stderr)
    top = args.top if args.top is not None else max(1, len(vetting.ranking.placements))
    payload = report_data.find_dict(vetting, top=top)
    if args.decode and not args.monte_carlo:
        raise InputError("--decode decodes sampled shots: give --monte-carlo SHOTS too")
    logical, undetected_is_zero = _logical_ranking(args, device, patch, vetting)
    if logical is not None:
        payload["logical"] = report_data.logical_dict(patch, logical, top,
                                                      sampled=bool(args.monte_carlo))
        payload["ranked_by"] = logical.figure
        if undetected_is_zero:
            payload["logical_note"] = ("no one or two faults flip the logical observable "
                                       "unseen, so 'undetected' is 0 on every placement; ranked "
                                       "by 'kept', with the sampled logical errors of the "
                                       "placements listed" + (", decoded" if args.decode else
                                                               " (add --decode to decode them)"))
        elif logical.figure == "undetected" and not np.any(logical.undetected):
            payload["logical_note"] = ("every placement scores 0 on 'undetected' (no one or two "
                                       "faults flip the observable unseen), so that column does "
                                       "not rank them; ties are broken by 'kept'")
    elif patch.detectors and patch.observable and vetting.all_swap_free:
        from ..score.simulate import _spanned_by_detectors
        if _spanned_by_detectors(patch):
            payload["logical_note"] = ("the logical observable is a parity of the declared "
                                       "detectors, so no fault flips it unseen and the logical "
                                       "figures are 0 everywhere; ranked by fidelity_product")
        elif undetected_is_zero:
            payload["logical_note"] = ("no one or two faults flip the logical observable "
                                       "unseen (the circuit's fault distance is above 2), so "
                                       "the 'undetected' figure, taken to second order, is 0 on "
                                       "every placement and cannot rank them; ranked by "
                                       "fidelity_product (add --monte-carlo SHOTS --decode to "
                                       "sample decoded logical errors of the placements listed)")
    if args.monte_carlo and logical is None:
        payload.setdefault("logical_note", "--monte-carlo needs a patch with detectors and an "
                           "observable on which every circuit is swap-free; nothing sampled")
    if logical is None and args.figure in ("undetected", "kept"):
        raise InputError(f"--figure {args.figure}: no placement makes every circuit swap-free, "
                         "so there is no noisy circuit to score; use fidelity_product")
    if len(snapshots) > 1 and vetting.ranking.placements:
        from ..score.cost import rank_across_snapshots
        payload["snapshots"] = report_data.snapshot_dict(
            patch, rank_across_snapshots(snapshots, patch, vetting.ranking.placements, by=by),
            top=min(top, 5))
    if args.compare_sdk:
        payload["sdk_choice"] = report_data.sdk_dict(device, patch, vetting)
    from ..report.picture import draw_placement, draw_score_map
    if args.draw and vetting.ranking.placements:
        best = logical.placements[0] if logical is not None else vetting.ranking.placements[0]
        pictures[args.draw] = _picture(args.draw, draw_placement(
            device, None, patch=patch, placement=best,
            title=f"{patch.name} on {device.name}: best placement"))
        payload["pictures"] = {**payload.get("pictures", {}), "placement": args.draw}
    elif args.draw:                          # nothing to place: the chip alone, titled so
        pictures[args.draw] = _picture(args.draw, draw_placement(
            device, None, title=f"{device.name}: no placement of {patch.name} to draw"))
        payload["pictures"] = {**payload.get("pictures", {}), "placement": args.draw}
    if args.score_map and not vetting.ranking.placements:
        payload["logical_note"] = (payload.get("logical_note", "") + "; " if
                                   payload.get("logical_note") else "") + \
            f"no placement to shade, so --score-map wrote nothing to {args.score_map}"
    if args.score_map and vetting.ranking.placements:
        if logical is not None:
            values = -np.log10(np.maximum(logical.undetected, 1e-12)) \
                if logical.figure == "undetected" else logical.kept
            label = "-log10 undetected rate" if logical.figure == "undetected" else \
                "kept fraction"
            figure = draw_score_map(device, patch, logical.placements, values, None,
                                    label=f"best {label} using it (higher is better)")
        else:
            figure = draw_score_map(device, patch, vetting.ranking.placements,
                                    vetting.ranking.success, None)
        pictures[args.score_map] = _picture(args.score_map, figure)
        payload["pictures"] = {**payload.get("pictures", {}), "score_map": args.score_map}
    outputs.commit(pictures)
    _emit(args, payload, render_find(payload))
    return 1 if args.strict and not vetting.all_swap_free else 0


def _logical_ranking(args, device, patch, vetting):
    """(ranking by a logical figure when asked, or by 'auto' when it applies, else None;
    whether 'undetected' is 0 on every placement, so 'auto' could not use it)."""
    from ..score.logical import rank_by_logical, require_detectors
    figure = args.figure
    swap_free = [p for p, off in zip(vetting.ranking.placements, vetting.ranking.unscored_gates)
                 if off == 0] if vetting.all_swap_free else []
    zero = False
    if figure == "fidelity_product":
        return None, zero
    if figure == "auto":
        if not swap_free or not patch.detectors or not patch.observable:
            return None, zero
        from ..score.simulate import _spanned_by_detectors
        if _spanned_by_detectors(patch):     # no fault flips it unseen: every score is 0
            return None, zero
        from ..score.logical import undetected_zero_everywhere
        zero = undetected_zero_everywhere(patch)   # every fault at once: 0 there, 0 anywhere
        if zero and not args.monte_carlo:
            return None, zero
        figure = "kept" if zero else "undetected"   # kept: sampled below, ranked by what is kept
    if not swap_free:
        return None, zero
    require_detectors(patch)
    _sanity(patch, patch.source)
    progress = _progress()
    out = rank_by_logical(device, patch, swap_free, figure=figure,
                          monte_carlo_shots=args.monte_carlo or 0,
                          top=args.top if args.top is not None else len(swap_free),
                          decode=args.decode, processes=args.processes,
                          progress=(lambda n: print(f"\r  scoring: {n} placements ...", end="",
                                                    file=sys.stderr, flush=True))
                          if progress else None)
    if progress:
        print("\r" + " " * 40 + "\r", end="", file=sys.stderr)
    return out, zero


def _run_repair(args) -> int:
    from pathlib import Path

    from ..repair.rewrite import repair_preparation
    device, patch = load_device(args.chip), load_patch(args.patch)
    out = Path(args.output)
    qasm_path = out.with_name(f"{out.stem}_{args.circuit}.qasm")
    if Path(args.patch).suffix.lower() not in (".yaml", ".yml"):
        raise InputError("repair writes a new YAML patch file: give a YAML patch")
    outputs = Outputs()
    outputs.claim(out, option="--output", overwrite=False)
    outputs.claim(qasm_path, option="--output (its circuit file)", overwrite=False)
    if args.placement is not None:
        placement = _parse_placement(args.placement, patch, device)
    else:
        core = [n for n in patch.circuits if n != args.circuit]
        vetting = vet_patch(device, patch)
        placements = vetting.ranking.placements
        k = args.pick or 1
        if k > len(placements):
            raise InputError(f"no placement ranked {k}: 'find' ranks {len(placements)} "
                             f"(the other circuits, {', '.join(core)}, must fit first)")
        placement = placements[k - 1]
    already = next((c for c in audit_placement(device, patch, placement).circuits
                    if c.circuit == args.circuit), None)
    if already is not None and already.swap_free:
        _emit(args, {"tool": "embedcheck", "version": __version__, "command": "repair",
                     "circuit": args.circuit, "nothing_to_do": True,
                     "placement": placement.as_dict(patch)},
              f"'{args.circuit}' is already swap-free on this placement: nothing to repair, "
              "nothing written.")
        return 0
    if args.method == "product":
        return _run_projection(args, device, patch, placement, out, qasm_path, outputs)
    repair = repair_preparation(device, patch, placement, circuit=args.circuit)
    for figures in (repair.before, repair.after):       # JSON has no infinity
        if figures.get("fault_distance") == float("inf"):
            figures["fault_distance"] = "infinite"
    new_text = _repaired_yaml(Path(args.patch), out, args.circuit, qasm_path.name,
                              how=f"rewritten by 'embedcheck repair' ({repair.method} method) "
                                  "to use only the couplers of one placement")
    header = (f"// Repaired by embedcheck: circuit '{args.circuit}' of patch '{patch.name}' "
              f"rewritten onto the couplers of\n// chip '{device.name}' at "
              + " ".join(f"{q}={p}" for q, p in placement.as_dict(patch).items())
              + f"\n// method: {repair.method}; proof: {repair.proof}\n")
    outputs.commit({qasm_path: header + repair.qasm, out: new_text})
    payload = {"tool": "embedcheck", "version": __version__, "command": "repair",
               "circuit": repair.circuit, "method": repair.method, "proven": repair.proven,
               "proof": repair.proof, "helpers": list(repair.helpers),
               "placement": placement.as_dict(patch), "before": repair.before,
               "after": repair.after, "candidates": {k: list(v) if v else None
                                                     for k, v in repair.candidates.items()},
               "rejected_for_fault_distance": list(repair.rejected),
               "wrote": {"patch": str(out), "circuit": str(qasm_path)}, "caution": CAUTION}
    _emit(args, payload, render_repair(payload))
    return 0


def _run_projection(args, device, patch, placement, out, qasm_path, outputs) -> int:
    from pathlib import Path

    from ..repair.rewrite import project_preparation
    projection, fixed = project_preparation(patch, circuit=args.circuit)
    audit = audit_placement(device, fixed, placement)
    text = _repaired_yaml(Path(args.patch), out, args.circuit, qasm_path.name,
                          drop=projection.dropped_detectors,
                          how="replaced by 'embedcheck repair' with a product state that the "
                              "check rounds project")
    header = (f"// Product-state preparation by embedcheck for circuit '{args.circuit}' of "
              f"patch '{patch.name}';\n// the check rounds project it; {projection.proof}\n")
    outputs.commit({qasm_path: header + projection.qasm, out: text})
    payload = {"tool": "embedcheck", "version": __version__, "command": "repair",
               "method": "product", "circuit": args.circuit, "basis": projection.basis,
               "proof": projection.proof, "frame_corrections": list(projection.corrections),
               "dropped_detectors": list(projection.dropped_detectors),
               "swap_free": audit.swap_free, "placement": placement.as_dict(patch),
               "wrote": {"patch": str(out), "circuit": str(qasm_path)}}
    lines = [f"Product-state option for '{args.circuit}' (|{'0' if projection.basis == 'z' else '+'}"
             f"...> then the check rounds): {projection.proof}.",
             f"  frame corrections seen: {'; '.join(projection.corrections)}",
             f"  first-round detectors dropped (random after a product state): "
             f"{', '.join(projection.dropped_detectors) or 'none'}",
             f"  every circuit swap-free on this placement: {'yes' if audit.swap_free else 'no'}",
             f"Wrote {out} and {qasm_path} (your patch file is unchanged)."]
    _emit(args, payload, "\n".join(lines))
    return 0


def _repaired_yaml(source, target, circuit, qasm_name, drop=(), how="rewritten") -> str:
    """The patch file re-written for `target`: the circuit now from `qasm_name`, other file
    paths re-based; comments are not kept."""
    import os
    from pathlib import Path

    import yaml
    data = yaml.safe_load(read_input(source))
    folder = target.resolve().parent
    for name, spec in data["circuits"].items():
        for key in ("file", "stim"):
            if key in spec:
                full = (source.parent / spec[key]).resolve()
                if folder in full.parents:
                    spec[key] = os.path.relpath(full, folder)
                elif key == "file":        # a patch reads circuit files only below itself
                    spec.pop("file")
                    spec["qasm"] = read_input(full, what="circuit file")
                else:
                    raise InputError(f"circuit '{name}' is a stim file outside the folder of "
                                     f"--output; write the repaired patch beside {source.name}",
                                     file=str(target))
    data["circuits"][circuit] = {"file": qasm_name,
                                 "description": f"repaired by embedcheck from {source.name}"}
    if drop and "detectors" in data:
        data["detectors"] = [d for i, d in enumerate(data["detectors"])
                             if d.get("name", f"D{i}") not in set(drop)]
    data["name"] = f"{data['name']}-repaired"
    old = str(data.get("description", "")).strip()
    data["description"] = f"Circuit '{circuit}' {how}." + (f" The original patch: {old}"
                                                            if old else "")
    return (f"# Written by 'embedcheck repair' from {source.name}; circuit '{circuit}' is now "
            f"{qasm_name}.\n" + yaml.safe_dump(data, sort_keys=False, width=100))


def _check_picture_path(target: str, option: str) -> None:
    from pathlib import Path
    path = Path(target)
    if path.suffix.lower() not in (".png", ".svg"):
        raise InputError(f"{option}: pictures are written as .png or .svg, not "
                         f"'{path.suffix or path.name}'", file=target)


def _picture(target: str, figure) -> bytes:
    """A drawn figure as the bytes of `target`'s format (.png or .svg)."""
    from pathlib import Path

    from ..report.picture import picture_bytes
    return picture_bytes(figure, Path(target).suffix.lower().lstrip("."))


def _run_draw(args) -> int:
    from ..report.picture import draw_placement, draw_score_map
    _check_picture_path(args.output, "--output")
    device = load_device(args.chip)
    patch = load_patch(args.patch) if args.patch is not None else None
    outputs = Outputs()
    outputs.claim(args.output, option="--output")
    if patch is None:
        if args.placement or args.pick or args.score_map:
            raise InputError("--placement, --pick and --score-map need a patch file")
        figure = draw_placement(device, None)
        text = f"wrote {args.output}: chip '{device.name}'"
    else:
        if args.placement is not None:
            placement = _parse_placement(args.placement, patch, device)
        else:
            vetting = vet_patch(device, patch)
            if not vetting.ranking.placements:
                raise InputError(f"patch '{patch.name}' has no placement on chip "
                                 f"'{device.name}' to draw (see 'embedcheck find')")
            if args.score_map:
                figure = draw_score_map(device, patch, vetting.ranking.placements,
                                        vetting.ranking.success, None)
                outputs.commit({args.output: _picture(args.output, figure)})
                _emit(args, {"tool": "embedcheck", "command": "draw", "file": args.output},
                      f"wrote {args.output}: where '{patch.name}' does best on '{device.name}'")
                return 0
            k = args.pick or 1
            if k > len(vetting.ranking.placements):
                raise InputError(f"--pick {k}: 'find' ranks only "
                                 f"{len(vetting.ranking.placements)} placement(s)")
            placement = vetting.ranking.placements[k - 1]
        figure = draw_placement(device, None, patch=patch, placement=placement)
        text = f"wrote {args.output}: '{patch.name}' on '{device.name}'"
    outputs.commit({args.output: _picture(args.output, figure)})
    _emit(args, {"tool": "embedcheck", "version": __version__, "command": "draw",
                 "file": args.output}, text)
    return 0


def _run_audit(args) -> int:
    device, patch = load_device(args.chip), load_patch(args.patch)
    outputs = Outputs()
    if args.write_qasm or args.router_estimate:
        _need_qasm(patch, "--write-qasm" if args.write_qasm else "--router-estimate")
    if args.write_qasm:
        from pathlib import Path
        folder = Path(args.write_qasm)
        if not folder.is_dir():
            raise InputError(f"--write-qasm: folder '{args.write_qasm}' does not exist")
        for name in patch.circuits:
            outputs.claim(folder / f"{name}.qasm", option="--write-qasm", overwrite=args.force)
    if args.placement is not None:
        placement = _parse_placement(args.placement, patch, device)
    else:
        vetting = vet_patch(device, patch, limit=max(args.pick, args.limit),
                            budget_s=args.budget_s)
        if args.pick > len(vetting.ranking.placements):
            raise InputError(f"--pick {args.pick}: 'find' ranks only "
                             f"{len(vetting.ranking.placements)} placement(s)")
        placement = vetting.ranking.placements[args.pick - 1]
    report = audit_placement(device, patch, placement, router_estimate=args.router_estimate,
                             seed=args.seed)
    written = _write_placed(args.write_qasm, device, patch, report, outputs) \
        if args.write_qasm else None
    ranking = rank_placements(device, patch, [placement])
    score = report_data.placement_rows(patch, ranking, _zeros(patch), 1)[0]
    payload = {"tool": "embedcheck", "version": __version__, "command": "audit",
               "chip": report_data.chip_summary(device), "patch": report_data.patch_summary(patch),
               "audit": report_data.audit_dict(patch, report),
               "score": {k: score[k] for k in ("figure", "success", "log_success", "terms",
                                               "unscored_gates")},
               "caution": CAUTION, "written": written}
    if args.cross_check:
        from ..pipeline.checks import cross_check
        payload["cross_check"] = {"method": "qiskit transpile, optimization_level=0",
                                  "disagreements": cross_check(device, patch, [placement],
                                                               seed=args.seed)}
    _emit(args, payload, render_audit(payload))
    if args.cross_check and payload["cross_check"]["disagreements"]:
        print("embedcheck: internal error: the exact audit and qiskit's transpiler disagree: "
              + payload["cross_check"]["disagreements"][0], file=sys.stderr)
        return 3
    return 1 if args.strict and not report.swap_free else 0


def _need_qasm(patch, option: str) -> None:
    """qiskit reads our circuits from their OpenQASM text; a stim circuit has none."""
    for name, circuit in patch.circuits.items():
        if circuit.qasm is None:
            raise InputError(f"{option} needs OpenQASM circuits, and circuit '{name}' of patch "
                             f"'{patch.name}' comes from a stim file", file=patch.source)


def _write_placed(folder, device, patch, report, outputs) -> dict:
    """Write each swap-free circuit as placed OpenQASM 3; say why any other is not written."""
    from pathlib import Path

    from ..audit.qiskit_views import placed_qasm3

    target = Path(folder)
    texts, skipped = {}, {}
    for c in report.circuits:
        if c.swap_free:
            texts[c.circuit] = placed_qasm3(device, patch, c.circuit, report.placement)
        else:
            skipped[c.circuit] = f"needs routing ({len(c.off_coupler)} off-coupler gates)"
    files = {name: str(target / f"{name}.qasm") for name in texts}
    outputs.commit({files[name]: text for name, text in texts.items()})
    return {"files": files, "not_written": skipped}


def _zeros(patch):
    import numpy as np
    return np.zeros((1, len(patch.circuits)), dtype=int)


def _parse_placement(text: str, patch, device) -> Placement:
    where = {}
    for item in filter(None, (s.strip() for s in text.split(","))):
        name, sep, phys = item.partition("=")
        if not sep:
            raise InputError(f"--placement: '{item}' should look like name=physical_qubit")
        name = name.strip()
        if name not in patch.index:
            raise InputError(f"--placement: '{name}' is not a qubit of patch '{patch.name}'"
                             f"{did_you_mean(name, patch.qubits)}")
        try:
            q = int(phys)
        except ValueError:
            raise InputError(f"--placement: '{phys}' is not a qubit number") from None
        if q not in set(device.qubits):
            raise InputError(f"--placement: chip '{device.name}' has no qubit {q}")
        if q in device.dead_qubits:
            raise InputError(f"--placement: qubit {q} of chip '{device.name}' is dead")
        if name in where:
            raise InputError(f"--placement: '{name}' is placed twice")
        where[name] = q
    if not where:
        raise InputError("--placement: give name=physical_qubit pairs, e.g. d0=53,d1=55")
    missing = [q for q in patch.qubits if q not in where]
    if missing:
        raise InputError(f"--placement: no physical qubit given for {', '.join(missing)}")
    if len(set(where.values())) != len(where):
        raise InputError("--placement: two patch qubits share one physical qubit")
    return Placement(tuple(where[q] for q in patch.qubits))


def _run_validate(args) -> int:
    """Every file is checked (not only up to the first bad one): valid ones on stdout,
    each bad one as its one-line error on stderr; exit 2 if any is bad."""
    results, bad = [], 0
    for path in args.files:
        try:
            kind = _kind_of(path)
            obj = load_device(path) if kind == "chip" else load_patch(path)
            if kind == "patch" and obj.detectors:
                _sanity(obj, path)
        except InputError as err:
            bad += 1
            print(f"embedcheck: error: {err}", file=sys.stderr)
            results.append({"file": path, "valid": False, "error": str(err)})
            continue
        results.append({"file": path, "kind": kind, "name": obj.name,
                        "qubits": obj.num_qubits, "valid": True})
    text = "\n".join(f"{r['file']}: valid {r['kind']} file '{r['name']}' ({r['qubits']} qubits)"
                     for r in results if r["valid"])
    if text or args.format == "json":
        _emit(args, {"tool": "embedcheck", "version": __version__, "command": "validate",
                     "files": results}, text)
    return 2 if bad else 0


def _run_check(args) -> int:
    from pathlib import Path

    from ..pipeline.checks import run_project
    from ..io.projectfile import load_project
    from ..report.junit import render_junit
    from ..report.markdown import render_markdown
    from ..report.sarif import render_sarif
    from ..report.text import render_check

    if args.fail_on_worse and not args.baseline:
        raise InputError("--fail-on-worse compares with a previous report: give --baseline FILE")
    project = load_project(args.project)
    targets = dict(project.reports)
    for kind in ("json", "markdown", "junit", "sarif"):
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
    progress = _progress()
    result = run_project(project, cross_check_top=args.cross_check_top,
                         progress=(lambda msg: print(f"\r  checking {msg} ...", end="",
                                                     file=sys.stderr, flush=True))
                         if progress else None)
    if progress:
        print("\r" + " " * 60 + "\r", end="", file=sys.stderr)
    payload = report_data.check_dict(result, baseline)
    if payload["baseline"] is not None:
        payload["baseline"]["file"] = args.baseline
    writers = {"json": lambda: json.dumps(_finite(payload), indent=2, allow_nan=False) + "\n",
               "markdown": lambda: render_markdown(payload),
               "junit": lambda: render_junit(payload),
               "sarif": lambda: json.dumps(render_sarif(payload), indent=2) + "\n"}
    outputs.commit({target: writers[kind]() for kind, target in targets.items()})
    _emit(args, payload, render_check(payload))
    if result.internal_errors:
        print("embedcheck: internal error: the exact audit and qiskit's transpiler disagree "
              "(see the report); please report it", file=sys.stderr)
        return 3
    worse = bool(payload["baseline"] and payload["baseline"]["worse"])
    return 0 if result.passed and not (args.fail_on_worse and worse) else 1


def _read_baseline(path: str) -> dict:
    try:
        data = json.loads(read_input(path, what="baseline report"))
    except json.JSONDecodeError as exc:
        raise InputError(f"baseline is not JSON: {exc.msg}", file=path, line=exc.lineno) from None
    if not isinstance(data, dict) or data.get("command") != "check":
        raise InputError("baseline is not an embedcheck check report (--format json or the "
                         "project's json report)", file=path)
    return data


def _run_code(args) -> int:
    from pathlib import Path

    from ..model.codes import family_yaml
    from ..score.simulate import check_detectors, fault_distance, fault_distance_at_most
    outputs = Outputs()
    if args.output:
        outputs.claim(args.output, option="--output", overwrite=False)
    try:
        text = family_yaml(args.family, distance=args.distance, rounds=args.rounds,
                           basis=args.basis, prep=args.prep)
    except ValueError as exc:
        raise InputError(str(exc)) from None
    from ..model.codes import build_patch
    patch = build_patch(args.family, distance=args.distance, rounds=args.rounds,
                        basis=args.basis, prep=args.prep)
    problems = check_detectors(patch)
    if problems:                     # our own family failing is a bug, never a user error
        print(f"embedcheck: internal error: {problems[0]}", file=sys.stderr)
        return 3
    distance = fault_distance(patch)
    bound = None
    if distance is None and patch.observable:         # too big for the exhaustive search
        bound = fault_distance_at_most(patch)
    if args.output:
        outputs.commit({args.output: text})
        if bound is not None:
            shown = (f"at most {bound} (graphlike faults only: the exhaustive search is "
                     f"skipped above 150 detectors)")
        else:
            shown = "infinite" if distance == float("inf") else distance
        print(f"wrote {args.output}: patch '{patch.name}', {patch.num_qubits} qubits, "
              f"{len(patch.detectors)} detectors (all deterministic without noise), "
              f"circuit-level fault distance {shown}", file=sys.stderr)
        low = distance if isinstance(distance, int) else bound
        if args.family != "flagged" and isinstance(low, int) and low < args.distance:
            print(f"embedcheck: warning: fault distance {'' if low == distance else 'at most '}"
                  f"{low} is below the code distance {args.distance}", file=sys.stderr)
    if args.format == "json":
        _emit(args, {"tool": "embedcheck", "version": __version__, "command": "code",
                     "name": patch.name, "file": args.output, "text": text,
                     "fault_distance": "infinite" if distance == float("inf") else distance,
                     "fault_distance_at_most": bound}, "")
    elif not args.output:
        sys.stdout.write(text)
    return 0


def _run_show(args) -> int:
    from pathlib import Path
    kind = "chip" if Path(args.file).is_dir() else _kind_of(args.file)
    if kind == "chip":
        payload = report_data.chip_details(load_snapshots(args.file))
        text = render_chip(payload)
    else:
        payload = report_data.patch_details(load_patch(args.file))
        text = render_patch(payload)
    _emit(args, payload, text)
    return 0


def _run_generate(args) -> int:
    _, params = FAMILIES[args.family]
    size = {p: getattr(args, p) for p in params}
    missing = [f"--{p}" for p, v in size.items() if v is None]
    if missing:
        raise InputError(f"family '{args.family}' needs {' and '.join(missing)}")
    extra = [f"--{p}" for p in ("rows", "columns", "size") if p not in params
             and getattr(args, p) is not None]
    if extra:
        raise InputError(f"family '{args.family}' does not take {', '.join(extra)}")
    name = args.name or f"{args.family}-" + "x".join(str(v) for v in size.values())
    try:
        build_family(args.family, **size)
    except ValueError as exc:
        raise InputError(str(exc)) from None
    text = family_chip_yaml(args.family, name, **size)
    if args.output:
        outputs = Outputs()
        outputs.claim(args.output, option="--output", overwrite=args.force)
        outputs.commit({args.output: text})
        print(f"wrote {args.output}: chip '{name}' with PLACEHOLDER calibration", file=sys.stderr)
    if args.format == "json":
        _emit(args, {"tool": "embedcheck", "version": __version__, "command": "generate",
                     "name": name, "file": args.output, "text": text}, "")
    elif not args.output:
        sys.stdout.write(text)
    return 0


def _sanity(patch, path) -> None:
    """Declared detectors must be deterministic without noise (stim); else bad input."""
    from ..score.simulate import check_detectors
    problems = check_detectors(patch)
    if problems:
        line = None
        name = problems[0].split("'")[1] if "'" in problems[0] else None
        for det in patch.detectors:
            if det.name == name:
                line = det.line
        raise InputError(problems[0] + " (a bug in the circuit or the declaration)",
                         file=path, line=line)


def _kind_of(path: str) -> str:
    """'chip' or 'patch', from the file's top-level version key (or a circuit file's suffix)."""
    import re
    from pathlib import Path
    if Path(path).suffix.lower() in (".stim", ".qasm", ".qasm2", ".qasm3"):
        return "patch"
    text = read_input(path)
    m = re.search(r"^embedcheck_(chip|patch)\s*:", text, re.M)
    if not m:
        raise InputError("not a chip or patch file: it needs a version key "
                         "'embedcheck_chip: 1' or 'embedcheck_patch: 1'", file=path)
    return m.group(1)


if __name__ == "__main__":
    sys.exit(main())
