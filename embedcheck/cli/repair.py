"""`embedcheck repair CHIP PATCH -o NEW.yaml`: rewrite a preparation onto a placement's
couplers, with a proof, as a new patch file. A repair that finds no rewrite (none fits
the placement, every one lowers the fault distance, the rounds project no product state)
is a finding: it is reported, nothing is written, and the exit code is 0 (1 with
`--strict`, for a script that must stop there); bad input exits 2."""
from __future__ import annotations

import argparse
from typing import TYPE_CHECKING, Any

from ..errors import InputError
from .options import emit, parse_placement, positive_int

if TYPE_CHECKING:
    from pathlib import Path

    from ..io.files import Outputs
    from ..model.device import Device
    from ..model.patch import Patch
    from ..model.placement import Placement
    from ..repair.result import Repair

__all__ = ["add_parser", "run"]


def add_parser(sub: Any) -> None:
    fix = sub.add_parser("repair", help="rewrite a preparation onto a placement's couplers, "
                         "with a proof; writes a new patch file")
    fix.add_argument("chip", help="chip file (YAML)")
    fix.add_argument("patch", help="patch file (YAML)")
    where = fix.add_mutually_exclusive_group()
    where.add_argument("--placement", help="patch qubit=physical qubit pairs")
    where.add_argument("--pick", type=positive_int, help="the placement ranked N by 'find' "
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
    fix.add_argument("--strict", action="store_true",
                     help="exit 1 when no rewrite is found (default: 0, the finding is the "
                          "answer)")
    fix.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from ..audit.exact import audit_placement
    from ..io.chipfile import load_device
    from ..io.files import Outputs
    from ..io.patchfile import load_patch
    from ..io.writers import repaired_patch_yaml
    from ..pipeline.vet import vet_patch
    from ..repair.product import project_preparation
    from ..repair.rewrite import repair_preparation
    from ..report.text import render_repair
    from ..score.cost import CAUTION
    from ..version import __version__

    device, patch = load_device(args.chip), load_patch(args.patch)
    out = Path(args.output)
    qasm_path = out.with_name(f"{out.stem}_{args.circuit}.qasm")
    if Path(args.patch).suffix.lower() not in (".yaml", ".yml"):
        raise InputError("repair writes a new YAML patch file: give a YAML patch")
    outputs = Outputs()
    outputs.claim(out, option="--output", overwrite=False)
    outputs.claim(qasm_path, option="--output (its circuit file)", overwrite=False)
    if args.placement is not None:
        placement = parse_placement(args.placement, patch, device)
    else:
        core = [n for n in patch.circuits if n != args.circuit]
        placements = vet_patch(device, patch).ranking.placements
        k = args.pick or 1
        if k > len(placements):
            raise InputError(f"no placement ranked {k}: 'find' ranks {len(placements)} "
                             f"(the other circuits, {', '.join(core)}, must fit first)")
        placement = placements[k - 1]
    already = next((c for c in audit_placement(device, patch, placement).circuits
                    if c.circuit == args.circuit), None)
    if already is not None and already.swap_free:
        emit(args, {"tool": "embedcheck", "version": __version__, "command": "repair",
                    "circuit": args.circuit, "nothing_to_do": True,
                    "placement": placement.as_dict(patch)},
             f"'{args.circuit}' is already swap-free on this placement: nothing to repair, "
             "nothing written.")
        return 0
    if args.method == "product":
        fix = project_preparation(patch, circuit=args.circuit)
    else:
        fix = repair_preparation(device, patch, placement, circuit=args.circuit)
    if not fix.repaired:
        return _finding(args, patch, placement, fix)
    if args.method == "product":
        return _projection(args, device, patch, placement, out, qasm_path, outputs, fix)
    new_text = repaired_patch_yaml(Path(args.patch), out, args.circuit, qasm_path.name,
                                   how=f"rewritten by 'embedcheck repair' ({fix.method} method) "
                                       "to use only the couplers of one placement")
    header = (f"// Repaired by embedcheck: circuit '{args.circuit}' of patch '{patch.name}' "
              f"rewritten onto the couplers of\n// chip '{device.name}' at "
              + " ".join(f"{q}={p}" for q, p in placement.as_dict(patch).items())
              + f"\n// method: {fix.method}; proof: {fix.proof}\n")
    outputs.commit({qasm_path: header + fix.qasm, out: new_text})
    payload = {"tool": "embedcheck", "version": __version__, "command": "repair",
               "circuit": fix.circuit, "method": fix.method, "proven": fix.proven,
               "proof": fix.proof, "helpers": list(fix.helpers),
               "placement": placement.as_dict(patch), "before": _figures(fix.before),
               "after": _figures(fix.after), "candidates": {k: list(v) if v else None
                                                           for k, v in fix.candidates.items()},
               "rejected_for_fault_distance": list(fix.rejected),
               "wrote": {"patch": str(out), "circuit": str(qasm_path)}, "caution": CAUTION}
    emit(args, payload, render_repair(payload))
    return 0


def _figures(figures: Any) -> dict[str, Any]:
    """Before/after figures for JSON, which has no infinity: an infinite fault distance
    (the observable is a parity of detectors) is written 'infinite'."""
    out = dict(figures)
    if out.get("fault_distance") == float("inf"):
        out["fault_distance"] = "infinite"
    return out


def _finding(args: argparse.Namespace, patch: Patch, placement: Placement, fix: Repair) -> int:
    """No rewrite: say why, write nothing; a finding, so exit 0 (1 under --strict)."""
    from ..version import __version__

    payload = {"tool": "embedcheck", "version": __version__, "command": "repair",
               "circuit": fix.circuit, "method": args.method, "repaired": False,
               "finding": fix.finding, "placement": placement.as_dict(patch),
               "rejected_for_fault_distance": list(fix.rejected)}
    emit(args, payload, f"No repair of '{fix.circuit}': {fix.finding}. Nothing written.")
    return 1 if args.strict else 0


def _projection(args: argparse.Namespace, device: Device, patch: Patch, placement: Placement,
                out: Path, qasm_path: Path, outputs: Outputs, fix: Repair) -> int:
    from pathlib import Path

    from ..audit.exact import audit_placement
    from ..io.writers import repaired_patch_yaml
    from ..version import __version__

    assert fix.patch is not None
    audit = audit_placement(device, fix.patch, placement)
    text = repaired_patch_yaml(Path(args.patch), out, args.circuit, qasm_path.name,
                               drop=fix.dropped_detectors,
                               how="replaced by 'embedcheck repair' with a product state that "
                                   "the check rounds project")
    header = (f"// Product-state preparation by embedcheck for circuit '{args.circuit}' of "
              f"patch '{patch.name}';\n// the check rounds project it; {fix.proof}\n")
    outputs.commit({qasm_path: header + fix.qasm, out: text})
    payload = {"tool": "embedcheck", "version": __version__, "command": "repair",
               "method": "product", "circuit": args.circuit, "basis": fix.basis,
               "proof": fix.proof, "frame_corrections": list(fix.corrections),
               "dropped_detectors": list(fix.dropped_detectors),
               "swap_free": audit.swap_free, "placement": placement.as_dict(patch),
               "wrote": {"patch": str(out), "circuit": str(qasm_path)}}
    lines = [f"Product-state option for '{args.circuit}' (|{'0' if fix.basis == 'z' else '+'}"
             f"...> then the check rounds): {fix.proof}.",
             f"  frame corrections seen: {'; '.join(fix.corrections)}",
             f"  first-round detectors dropped (random after a product state): "
             f"{', '.join(fix.dropped_detectors) or 'none'}",
             f"  every circuit swap-free on this placement: {'yes' if audit.swap_free else 'no'}",
             f"Wrote {out} and {qasm_path} (your patch file is unchanged)."]
    emit(args, payload, "\n".join(lines))
    return 0
