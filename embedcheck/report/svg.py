"""A chip (and a placement on it) as a small, self-contained SVG with hover figures.

Hand-written SVG, no plotting library: it is what the HTML report inlines and what a
notebook shows for a device or a placement (`_repr_svg_`). Every qubit and coupler carries
a `<title>`, so hovering shows its calibration figures in any browser with no script.
Couplers are shaded from light (low two-qubit error) to dark (high); couplers a placement
uses are drawn thick, pairs that need a missing coupler dashed in red; dead parts dotted.
Role colours and shapes are those of `picture.py` (Okabe-Ito colours, Okabe & Ito, "Color
Universal Design" (2008), plus a shape per role so they differ in grey too).

    >>> from embedcheck import Device, square_grid
    >>> text = chip_svg(Device.from_lattice(square_grid(2, 2), name="toy"))
    >>> text.startswith("<svg") and text.count("<circle") == 4
    True
"""
from __future__ import annotations

from html import escape
from typing import Iterable, Mapping

__all__ = ["chip_svg", "placement_svg"]

ROLE_FILL = {"data": "#0072B2", "flag": "#E69F00", "ancilla": "#009E73"}
DEAD = "#D55E00"
_SCALE = 40.0
_R = 7.0
NUMBERED_UP_TO = 2500      # qubit numbers printed up to this many qubits (as in picture.py)


def chip_svg(device, *, placement: Mapping[str, int] | None = None,
             roles: Mapping[str, str] | None = None,
             missing: Iterable[tuple[int, int]] = (), title: str | None = None,
             max_width: int = 900) -> str:
    """The chip as an SVG string; with `placement` (patch qubit -> chip qubit) and `roles`
    (patch qubit -> role), the patch drawn on top; `missing`: chip pairs a circuit needs
    that have no coupler (drawn dashed)."""
    pos = _positions(device)
    xs = [p[0] for p in pos.values()] or [0.0]
    ys = [p[1] for p in pos.values()] or [0.0]
    x0, y0 = min(xs), min(ys)
    width = (max(xs) - x0) * _SCALE + 4 * _R + 20
    height = (max(ys) - y0) * _SCALE + 4 * _R + 20 + (18 if title else 0)
    top = 18 if title else 0

    def at(q):
        x, y = pos[q]
        return (x - x0) * _SCALE + 2 * _R + 10, (y - y0) * _SCALE + 2 * _R + 10 + top

    placed = {phys: name for name, phys in (placement or {}).items()}
    used = set()
    if placement and roles is not None:
        used = {c for c in device.couplers if c[0] in placed and c[1] in placed}
    errors = [cal.two_qubit_error for cal in device.coupler_calibration.values()
              if cal.two_qubit_error is not None]
    lo, hi = (min(errors), max(errors)) if errors else (0.0, 1.0)
    dead_q, dead_c = set(device.dead_qubits), set(device.dead_couplers)
    shown_width = min(max_width, width)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width:.0f} {height:.0f}" '
           f'width="{shown_width:.0f}" height="{height * shown_width / width:.0f}" '
           f'role="img" aria-label="{escape(title or device.name)}" '
           'font-family="sans-serif">']
    if title:
        out.append(f'<text x="8" y="14" font-size="12">{escape(title)}</text>')
    numbered = device.num_qubits <= NUMBERED_UP_TO
    if not numbered:
        out.append(f'<text x="8" y="{top + 14}" font-size="12" class="numbers-note">qubit '
                   f'numbers left out ({device.num_qubits} qubits, above {NUMBERED_UP_TO}); '
                   'hover a qubit for its number</text>')
    out.append('<g class="couplers">')
    for a, b in device.couplers:
        (xa, ya), (xb, yb) = at(a), at(b)
        cal = device.coupler_calibration.get((a, b))
        err = cal.two_qubit_error if cal else None
        tip = f"coupler {a}-{b}" + _figures(cal, ("two_qubit_error", "duration_ns"))
        if (a, b) in dead_c:
            style = f'stroke="{DEAD}" stroke-width="1.5" stroke-dasharray="2 3"'
            tip += " (dead)"
        else:
            shade = _shade(err, lo, hi)
            style = f'stroke="{shade}" stroke-width="{6 if (a, b) in used else 2.5}"'
        out.append(f'<line x1="{xa:.1f}" y1="{ya:.1f}" x2="{xb:.1f}" y2="{yb:.1f}" {style}>'
                   f'<title>{escape(tip)}</title></line>')
    for a, b in missing:
        (xa, ya), (xb, yb) = at(a), at(b)
        out.append(f'<line x1="{xa:.1f}" y1="{ya:.1f}" x2="{xb:.1f}" y2="{yb:.1f}" '
                   f'stroke="{DEAD}" stroke-width="2.5" stroke-dasharray="6 4" class="missing">'
                   f'<title>needs a coupler {a}-{b}: none on this chip</title></line>')
    out.append('</g><g class="qubits">')
    qubit_fields = ("readout_error", "single_qubit_error", "reset_error", "t1_us", "t2_us")
    for q in device.qubits:
        x, y = at(q)
        cal = device.qubit_calibration.get(q)
        name = placed.get(q)
        tip = f"qubit {q}" + (f" = {name} ({roles.get(name, '?')})" if name and roles else "") \
            + _figures(cal, qubit_fields) + (" (dead)" if q in dead_q else "")
        role = roles.get(name) if name and roles else None
        fill = ROLE_FILL.get(role or "", "#FFFFFF")
        stroke = DEAD if q in dead_q else "#333333"
        if role == "flag":
            shape = (f'<polygon points="{x:.1f},{y - _R - 2:.1f} {x + _R + 2:.1f},{y:.1f} '
                     f'{x:.1f},{y + _R + 2:.1f} {x - _R - 2:.1f},{y:.1f}"')
        elif role == "ancilla":
            shape = f'<rect x="{x - _R:.1f}" y="{y - _R:.1f}" width="{2 * _R}" height="{2 * _R}"'
        else:
            shape = f'<circle cx="{x:.1f}" cy="{y:.1f}" r="{_R if role else _R - 2}"'
        out.append(f'<g class="qubit">{shape} fill="{fill}" stroke="{stroke}" '
                   f'stroke-width="1"/><title>{escape(tip)}</title>')
        if numbered:          # above 200 qubits the page shrinks them: zoom in to read
            out.append(f'<text x="{x:.1f}" y="{y + _R + 9:.1f}" font-size="7" '
                       f'text-anchor="middle" fill="#333">{q}</text>')
        if name:
            out.append(f'<text x="{x:.1f}" y="{y + 2.5:.1f}" font-size="6" '
                       f'text-anchor="middle" fill="#fff">{escape(name)}</text>')
        out.append('</g>')
    out.append('</g></svg>')
    return "".join(out)


def placement_svg(device, patch, placement: Mapping[str, int] | None,
                  gates: Iterable[Mapping] = (), *, title: str | None = None) -> str:
    """The chip with a placement of `patch` and the chip pairs of `gates` (off-coupler gate
    records of an audit, as the JSON reports give them) dashed: what the HTML report shows."""
    missing = sorted({tuple(sorted(g["physical_qubits"])) for g in gates})
    return chip_svg(device, placement=placement, roles=dict(patch.roles), missing=missing,
                    title=title)


def _positions(device) -> dict:
    if len(device.positions) == device.num_qubits:
        return {q: (float(x), float(y)) for q, (x, y) in device.positions.items()}
    import math
    side = max(1, math.ceil(math.sqrt(device.num_qubits)))   # no positions: a plain grid
    return {q: (float(i % side), float(i // side)) for i, q in enumerate(device.qubits)}


def _shade(err, lo, hi) -> str:
    """Light grey (lowest error) to dark blue (highest); grey when unknown."""
    if err is None:
        return "#BBBBBB"
    t = 0.0 if hi <= lo else min(1.0, max(0.0, (err - lo) / (hi - lo)))
    light, dark = (0xCF, 0xD8, 0xE3), (0x1B, 0x2A, 0x4A)
    r, g, b = (round(a + (b_ - a) * t) for a, b_ in zip(light, dark, strict=True))
    return f"#{r:02X}{g:02X}{b:02X}"


def _figures(cal, fields) -> str:
    if cal is None:
        return ": no calibration"
    parts = []
    for name in fields:
        value = getattr(cal, name, None)
        if value is not None:
            parts.append(f"{name} {value:.4g}")
    return (": " + ", ".join(parts)) if parts else ": no calibration"
