"""How results look in a notebook: short HTML (and SVG) for the objects a user evaluates.

The model and result classes (`Device`, `Patch`, `Placement`, `SearchResult`, `Ranking`,
`AuditReport`, `Vetting`, `FindResult`) define `_repr_html_` by calling `html_of` here, and a
one-line `__repr__`, so that evaluating one in Jupyter shows a few lines and, where a chip is
known, the chip picture inline (`svg.chip_svg`), instead of tens of thousands of characters
of dataclass fields. `view(device, patch, placement)` gives a displayable placement with its
patch qubit names and the chip drawn. Formatting only: nothing is computed here.

    >>> from embedcheck import Device, square_grid
    >>> html = html_of(Device.from_lattice(square_grid(2, 2), name="toy"))
    >>> "<svg" in html and "toy" in html
    True
"""
from __future__ import annotations

from dataclasses import dataclass
from html import escape
from typing import Any

__all__ = ["PlacementView", "html_of", "view"]

_ROWS = 5          # ranking rows shown


@dataclass(frozen=True, kw_only=True)
class PlacementView:
    """A placement with its device and patch: shows which patch qubit sits where."""

    device: Any
    patch: Any
    placement: Any

    def __repr__(self) -> str:
        pairs = " ".join(f"{q}={p}" for q, p in self.placement.as_dict(self.patch).items())
        return f"<placement of {self.patch.name} on {self.device.name}: {pairs}>"

    def _repr_html_(self) -> str:
        return html_of(self)

    def _repr_svg_(self) -> str:
        from .svg import chip_svg
        return chip_svg(self.device, placement=self.placement.as_dict(self.patch),
                        roles=dict(self.patch.roles), title=f"{self.patch.name} on "
                                                            f"{self.device.name}")


def view(device: Any, patch: Any, placement: Any) -> PlacementView:
    """A placement shown with its patch qubit names and drawn on its chip (notebooks)."""
    return PlacementView(device=device, patch=patch, placement=placement)


def html_of(obj: Any) -> str:
    """Short HTML for one of embedcheck's objects (see the module docstring)."""
    kind = type(obj).__name__
    render = {"Device": _device, "Patch": _patch, "Placement": _placement,
              "PlacementView": _placement_view, "SearchResult": _search, "Ranking": _ranking,
              "AuditReport": _audit, "Vetting": _vetting, "FindResult": _find}.get(kind)
    if render is None:
        return f"<pre>{escape(repr(obj))}</pre>"
    return f'<div class="embedcheck">{render(obj)}</div>'


def _table(headers, rows) -> str:
    head = "".join(f"<th>{escape(str(h))}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{escape(str(c))}</td>" for c in row) + "</tr>"
                   for row in rows)
    return f"<table><tr>{head}</tr>{body}</table>"


def _device(device) -> str:
    from .svg import chip_svg
    dead = f", {len(device.dead_qubits)} dead qubits, {len(device.dead_couplers)} dead " \
           "couplers" if device.dead_qubits or device.dead_couplers else ""
    when = f"; calibration of {device.calibration_timestamp}" \
        if device.calibration_timestamp else ""
    return (f"<b>Chip {escape(device.name)}</b>: {device.num_qubits} qubits, "
            f"{len(device.couplers)} couplers{dead}, native gate "
            f"{escape(device.native_two_qubit_gate)}{escape(when)}"
            f"<br>{chip_svg(device, max_width=600)}")


def _patch(patch) -> str:
    roles: dict[str, list[str]] = {}
    for q in patch.qubits:
        roles.setdefault(patch.roles[q], []).append(q)
    rows = [[c.name, len(c.operations), len(c.two_qubit_gates), len(c.measurements)]
            for c in patch.circuits.values()]
    inferred = " (roles inferred from the circuits)" if patch.roles_inferred else ""
    return (f"<b>Patch {escape(patch.name)}</b>: {patch.num_qubits} qubits; "
            + "; ".join(f"{escape(r)}: {escape(' '.join(qs))}" for r, qs in roles.items())
            + f"{inferred}; {patch.rounds} round(s), {len(patch.detectors)} detectors"
            + _table(["circuit", "operations", "two-qubit gates", "measurements"], rows))


def _placement(placement) -> str:
    return (f"<b>Placement</b> on chip qubits {escape(str(list(placement.physical)))} (in the "
            "patch's qubit order; <code>embedcheck.view(device, patch, placement)</code> "
            "names and draws them)")


def _placement_view(v) -> str:
    pairs = " ".join(f"{q}={p}" for q, p in v.placement.as_dict(v.patch).items())
    return f"<b>{escape(v.patch.name)} on {escape(v.device.name)}</b>: " \
           f"<code>{escape(pairs)}</code><br>{v._repr_svg_()}"


def _search(result) -> str:
    why = "".join(f"<li>{escape(r)}</li>" for r in result.reasons)
    return (f"<b>Search</b> of {escape(', '.join(result.circuits))}: "
            f"{len(result.placements)} distinct placement(s) ({result.raw_maps} maps, patch "
            f"symmetry of order {result.symmetry_order}); {escape(result.stop_reason.value)} "
            f"in {result.elapsed_s:.2f} s" + (f"<ul>{why}</ul>" if why else ""))


def _ranking(ranking) -> str:
    rows = [[k + 1, f"{ranking.success[k]:.4f}", int(ranking.unscored_gates[k]),
             " ".join(map(str, p.physical))]
            for k, p in enumerate(ranking.placements[:_ROWS])]
    more = len(ranking.placements) - _ROWS
    return (f"<b>Ranking</b> by {escape(ranking.figure)} of {len(ranking.placements)} "
            "placement(s)" + _table(["rank", "score", "off-coupler", "chip qubits"], rows)
            + (f"... {more} more" if more > 0 else ""))


def _audit(report) -> str:
    rows = [[c.circuit, c.times_run, c.two_qubit_gates, len(c.off_coupler), c.direction_fixes,
             c.depth, "swap-free" if c.swap_free else "needs routing"] for c in report.circuits]
    gates = [[c.circuit, f"{g.file or '?'}:{g.line}" if g.line else (g.file or "?"), g.text,
              "-".join(map(str, g.physical_qubits))]
             for c in report.circuits for g in c.off_coupler]
    return (f"<b>Audit</b> on chip qubits {escape(str(list(report.placement.physical)))}: "
            f"{'every circuit swap-free' if report.swap_free else 'some gates need routing'}"
            + _table(["circuit", "runs", "2q gates", "off-coupler", "direction fixes", "depth",
                      "verdict"], rows)
            + (_table(["circuit", "where", "gate", "chip pair (no coupler)"], gates)
               if gates else ""))


def _vetting(vetting) -> str:
    from .svg import placement_svg
    fits = [[f.circuit, f.two_qubit_gates,
             {True: "yes", False: "no", None: "unknown"}[f.fits_alone],
             "yes" if f.circuit in vetting.core else "no", "; ".join(f.reasons)]
            for f in vetting.fits]
    ranking = vetting.ranking
    rows = [[k + 1, f"{ranking.success[k]:.4f}", int(ranking.unscored_gates[k]),
             " ".join(f"{q}={p}" for q, p in ranking.placements[k].as_dict(vetting.patch)
                      .items())] for k in range(min(_ROWS, len(ranking.placements)))]
    picture = ""
    if ranking.placements:
        gates = [{"physical_qubits": g.physical_qubits} for c in
                 (vetting.best_audit.circuits if vetting.best_audit else ()) for g in c.off_coupler]
        picture = placement_svg(vetting.device, vetting.patch,
                                ranking.placements[0].as_dict(vetting.patch), gates,
                                title="best placement")
    verdict = "every circuit swap-free" if vetting.all_swap_free else \
        f"needs routing: {', '.join(vetting.excluded) or 'no placement'}"
    incomplete = "" if vetting.complete else " (INCOMPLETE: a budget stopped it)"
    misses = [[m.off_coupler_gates, ", ".join("-".join(p) for p in m.missing_pairs),
               " ".join(f"{q}={p}" for q, p in m.placement.as_dict(vetting.patch).items())]
              for m in vetting.near_misses]
    return (f"<b>{escape(vetting.patch.name)} on {escape(vetting.device.name)}</b>: "
            f"{escape(verdict)}; {len(ranking.placements)} placement(s){incomplete}"
            + _table(["circuit", "2q gates", "fits alone", "in the layout", "why not"], fits)
            + (_table(["nearest miss: off-coupler gates", "pairs without a coupler",
                       "placement"], misses) if misses else "")
            + _table(["rank", "score", "off-coupler", "placement"], rows) + picture)


def _find(found) -> str:
    extra = ""
    if found.logical is not None:
        extra = f"<br>Ranked by <b>{escape(found.logical.figure)}</b> (logical figure)."
    return _vetting(found.vetting) + extra
