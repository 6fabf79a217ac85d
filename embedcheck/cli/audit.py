"""`embedcheck audit CHIP PATCH (--placement ... | --pick N)`: every circuit of one
placement, gate by gate."""
from __future__ import annotations

import argparse
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..errors import InputError, InternalError
from .options import (
    add_common,
    add_html_option,
    add_search_options,
    announce_written,
    emit,
    parse_placement,
    positive_int,
    require_html_path,
    seed_value,
)

if TYPE_CHECKING:
    from ..audit.exact import AuditReport
    from ..model.device import Device
    from ..model.patch import Patch

__all__ = ["add_parser", "need_qasm", "run"]


def add_parser(sub: Any) -> None:
    audit = sub.add_parser("audit", help="audit every circuit of one placement, gate by gate")
    add_common(audit)
    how = audit.add_mutually_exclusive_group(required=True)
    how.add_argument("--placement", help="patch qubit=physical qubit pairs, e.g. d0=53,d1=55,...")
    how.add_argument("--pick", type=positive_int,
                     help="audit the placement ranked N by 'find' (1 = best)")
    add_search_options(audit)
    audit.add_argument("--router-estimate", action="store_true",
                       help="also ask qiskit's router how many gates it would add (an estimate)")
    audit.add_argument("--cross-check", action="store_true",
                       help="re-check the audit with qiskit's transpiler (exit 3 if they disagree)")
    audit.add_argument("--seed", type=seed_value, default=11, help="router seed (default 11)")
    audit.add_argument("--strict", action="store_true",
                       help="exit 1 when any circuit needs routing")
    audit.add_argument("--write-qasm", metavar="FOLDER",
                       help="write each swap-free circuit, placed on physical qubits in the "
                            "chip's native gates, as FOLDER/<circuit>.qasm (OpenQASM 3); "
                            "existing files are kept unless --force")
    audit.add_argument("--force", action="store_true",
                       help="with --write-qasm, replace existing <circuit>.qasm files")
    add_html_option(audit)
    audit.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    import numpy as np

    from ..audit.cross_check import cross_check
    from ..audit.exact import audit_placement
    from ..io.chipfile import load_device
    from ..io.files import Outputs
    from ..io.patchfile import load_patch
    from ..pipeline.vet import vet_patch
    from ..report import data as report_data
    from ..report.text import render_audit
    from ..score.cost import CAUTION, rank_placements
    from ..version import __version__

    device, patch = load_device(args.chip), load_patch(args.patch)
    outputs = Outputs()
    if args.write_qasm or args.router_estimate:
        need_qasm(patch, "--write-qasm" if args.write_qasm else "--router-estimate")
    if args.write_qasm:
        folder = Path(args.write_qasm)
        if not folder.is_dir():
            raise InputError(f"--write-qasm: folder '{args.write_qasm}' does not exist")
        for name in patch.circuits:
            outputs.claim(folder / f"{name}.qasm", option="--write-qasm", overwrite=args.force,
                          force_option="--force")
    if args.html:
        require_html_path(args.html)
        outputs.claim(args.html, option="--html")
    if args.placement is not None:
        placement = parse_placement(args.placement, patch, device)
    else:
        vetting = vet_patch(device, patch, limit=max(args.pick, args.limit),
                            budget_s=args.budget_s)
        if args.pick > len(vetting.ranking.placements):
            raise InputError(f"--pick {args.pick}: 'find' ranks only "
                             f"{len(vetting.ranking.placements)} placement(s)")
        placement = vetting.ranking.placements[args.pick - 1]
    report = audit_placement(device, patch, placement, router_estimate=args.router_estimate,
                             seed=args.seed)
    files: dict[str | Path, str | bytes] = {}
    written = _write_placed(args.write_qasm, device, patch, report, files) \
        if args.write_qasm else None
    ranking = rank_placements(device, patch, [placement])
    zeros = np.zeros((1, len(patch.circuits)), dtype=int)
    score = report_data.placement_rows(patch, ranking, zeros, 1)[0]
    payload = {"tool": "embedcheck", "version": __version__, "command": "audit",
               "chip": report_data.chip_summary(device), "patch": report_data.patch_summary(patch),
               "audit": report_data.audit_dict(patch, report),
               "score": {k: score[k] for k in ("figure", "success", "log_success", "terms",
                                               "unscored_gates")},
               "caution": CAUTION, "written": written}
    disagreements: list[str] = []
    if args.cross_check:
        disagreements = cross_check(device, patch, [placement], seed=args.seed)
        payload["cross_check"] = {"method": "qiskit transpile, optimization_level=0",
                                  "disagreements": disagreements}
    if args.html:
        from ..report.html import render_html
        from ..report.svg import placement_svg
        gates = [g for c in report_data.audit_dict(patch, report)["circuits"]
                 for g in c["off_coupler"]]
        files[args.html] = render_html(payload, pictures={"the placement": placement_svg(
            device, patch, placement.as_dict(patch), gates,
            title=f"{patch.name} on {device.name}")})
    outputs.commit(files)
    announce_written({path: "the HTML report" if path == args.html else
                      "a circuit placed on the chip's qubits (OpenQASM)" for path in files})
    emit(args, payload, render_audit(payload))
    if disagreements:
        raise InternalError("the exact audit and qiskit's transpiler disagree: "
                            + disagreements[0])
    return 1 if args.strict and not report.swap_free else 0


def need_qasm(patch: Patch, option: str) -> None:
    """qiskit reads our circuits from their OpenQASM text; a stim circuit has none."""
    for name, circuit in patch.circuits.items():
        if circuit.qasm is None:
            raise InputError(f"{option} needs OpenQASM circuits, and circuit '{name}' of patch "
                             f"'{patch.name}' comes from a stim file", file=patch.source)


def _write_placed(folder: str, device: Device, patch: Patch, report: AuditReport,
                  files: dict[str | Path, str | bytes]) -> dict[str, Any]:
    """Each swap-free circuit as placed OpenQASM 3, added to `files` (written with the rest,
    all or nothing); say why any other is not written."""
    from pathlib import Path

    from ..audit.qiskit_views import placed_qasm3

    target = Path(folder)
    texts, skipped = {}, {}
    for c in report.circuits:
        if c.swap_free:
            texts[c.circuit] = placed_qasm3(device, patch, c.circuit, report.placement)
        else:
            skipped[c.circuit] = f"needs routing ({len(c.off_coupler)} off-coupler gates)"
    paths = {name: str(target / f"{name}.qasm") for name in texts}
    files.update({paths[name]: text for name, text in texts.items()})
    return {"files": paths, "not_written": skipped}
