"""Pictures of a chip: couplers shaded by error, dead parts marked, a placement on top,
or every qubit shaded by the best score of any placement that uses it.

Colours: couplers and the score map use matplotlib's `cividis` colour map (designed
to read the same with colour-vision deficiency: Nunez, Anderton & Renslow, PLoS ONE
13, e0199239 (2018)); roles use three colours from the Okabe-Ito palette (Okabe & Ito,
"Color Universal Design", 2008) *and* three marker shapes, so they differ even in grey.
Written as PNG or SVG by the file suffix. Each picture is a `matplotlib.figure.Figure` of its
own (never pyplot's): no backend is switched, so a notebook's own plots keep working.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError
from ..model.device import Device
from ..model.patch import Patch
from ..model.placement import Placement

__all__ = ["DEAD", "LABELLED_UP_TO", "NUMBERED_UP_TO", "ROLE_STYLE", "draw_placement",
           "draw_score_map", "number_font_size", "picture_bytes"]

ROLE_STYLE = {"data": ("o", "#0072B2"), "flag": ("D", "#E69F00"), "ancilla": ("s", "#009E73")}
# (a diamond, not a triangle, for flags: wide enough to hold the name)
DEAD = "#D55E00"


def _figure(device: Device):
    # A Figure of its own, not pyplot's: no backend is switched and no global state kept,
    # so a notebook's own plots keep showing (matplotlib saves a bare Figure to PNG or SVG
    # with the matching canvas by itself).
    from matplotlib.figure import Figure

    class Picture(Figure):
        """A Figure that shows itself in a notebook (as PNG) without pyplot."""

        def _repr_png_(self) -> bytes:
            return picture_bytes(self, "png")

    xs = [xy[0] for xy in device.positions.values()] or [0]
    ys = [xy[1] for xy in device.positions.values()] or [0]
    width = max(5.0, min(24.0, (max(xs) - min(xs) + 2) * 0.6))
    height = max(3.5, min(24.0, (max(ys) - min(ys) + 2) * 0.6 + 1.0))
    fig = Picture(figsize=(width, height), dpi=100)
    ax = fig.subplots()
    ax.set_aspect("equal")
    ax.invert_yaxis()                       # row 0 at the top, as the qubits are numbered
    ax.axis("off")
    return None, fig, ax


def _positions(device: Device) -> dict:
    if len(device.positions) == device.num_qubits:
        return dict(device.positions)
    # No drawing positions: a spring layout of the coupling graph (networkx), seeded.
    import networkx as nx
    g = nx.Graph()
    g.add_nodes_from(device.qubits)
    g.add_edges_from(device.couplers)
    pos = nx.spring_layout(g, seed=7)
    scale = max(4.0, np.sqrt(device.num_qubits))
    return {q: (float(x) * scale, float(y) * scale) for q, (x, y) in pos.items()}


LABELLED_UP_TO = 200          # qubit numbers at full size (5.5 pt) on chips this small
NUMBERED_UP_TO = 2500         # above: no numbers (a stated reason on the picture instead;
                              # 2025 numbers add about 5 s to a picture, bench: by hand)
SMALLEST_NUMBER_PT = 1.5      # numbers that would be smaller are left out, with the reason


def number_font_size(device: Device, pos, width_in: float) -> float:
    """The point size of the qubit numbers: 5.5 up to LABELLED_UP_TO qubits; above, scaled
    to the room a qubit has in a picture `width_in` inches wide (so they do not overlap)."""
    if device.num_qubits <= LABELLED_UP_TO:
        return 5.5
    xs = [x for x, _ in pos.values()] or [0.0]
    ys = [y for _, y in pos.values()] or [0.0]
    across = max(max(xs) - min(xs) + 2, 2.0)
    per_row = max(1.0, device.num_qubits / max(max(ys) - min(ys) + 1, 1.0))
    spacing_pt = width_in * 72 / max(across, per_row)   # points between neighbours
    return min(5.5, 0.128 * spacing_pt)                 # 5.5 pt at 0.6 inch (common practice)


def _number_qubits(ax, device: Device, pos):
    """Each qubit's physical number just below it, so a picture can be read against the
    text report. Above LABELLED_UP_TO qubits the numbers shrink with the room each qubit
    has (zoom into an SVG to read them); when they would be unreadable, or past
    NUMBERED_UP_TO qubits, the picture says why they are left out."""
    size = number_font_size(device, pos, ax.figure.get_figwidth())
    why = None
    if device.num_qubits > NUMBERED_UP_TO:
        why = f"{device.num_qubits} qubits, above {NUMBERED_UP_TO}"
    elif size < SMALLEST_NUMBER_PT:
        why = f"they would be {size:.1f} pt, below {SMALLEST_NUMBER_PT} pt"
    if why:
        ax.text(0.5, 1.0, f"qubit numbers left out ({why}); the text report names the qubits",
                transform=ax.transAxes, ha="center", va="bottom", fontsize=7,
                color="#333333", gid="qubit numbers note")
        return
    if device.num_qubits <= LABELLED_UP_TO:
        for q in device.qubits:
            x, y = pos[q]
            ax.annotate(str(q), (x, y), textcoords="offset points", xytext=(0, -12.5),
                        ha="center", fontsize=size, color="#333333", zorder=4,
                        gid="qubit numbers")
        return
    # Many numbers: plain texts (an annotation each costs several times as much), set
    # below each qubit by the same share of the spacing (the y axis points down).
    below = 0.29 * size / 5.5
    for q in device.qubits:
        x, y = pos[q]
        ax.text(x, y + below, str(q), ha="center", va="center", fontsize=size,
                color="#333333", zorder=4, gid="qubit numbers")


def _colour_bar(fig, mappable, ax, label: str, values) -> None:
    """A colour bar with plain tick labels (no '1e-10+1e-2' offset); on uniform data one
    tick at the value, and the label says every one has it."""
    from matplotlib.ticker import ScalarFormatter

    values = [float(v) for v in values]
    bar = fig.colorbar(mappable, ax=ax, shrink=0.7, pad=0.02, label=label)
    if values and max(values) == min(values):
        bar.set_ticks([values[0]])
        bar.set_ticklabels([f"{values[0]:.3g}"])
        bar.set_label(f"{label}: {values[0]:.3g} on every one")
        return
    formatter = ScalarFormatter(useOffset=False)
    formatter.set_powerlimits((-3, 4))
    bar.formatter = formatter
    bar.update_ticks()


def _draw_couplers(ax, device: Device, pos, highlight=frozenset(), plain=False):
    """Live couplers shaded by two-qubit error (or plain grey, where another quantity owns
    the colour map), dead ones dotted."""
    import matplotlib as mpl
    from matplotlib.collections import LineCollection

    errors = [e for c in device.live_couplers if c in device.coupler_calibration
              and (e := device.coupler_calibration[c].two_qubit_error) is not None]
    lo, hi = (min(errors), max(errors)) if errors else (0.0, 1.0)
    pad = max(abs(lo) * 0.05, 1e-6) if hi <= lo else 0.0       # uniform: a band around it
    norm = mpl.colors.Normalize(vmin=lo - pad, vmax=hi + pad)
    cmap = mpl.colormaps["cividis_r"]
    live, colours, widths = [], [], []
    for c in device.live_couplers:
        cal = device.coupler_calibration.get(c)
        err = cal.two_qubit_error if cal and cal.two_qubit_error is not None else lo
        live.append([pos[c[0]], pos[c[1]]])
        colours.append("#C8C8C8" if plain else cmap(norm(err)))
        widths.append(4.5 if c in highlight else 2.0)
    ax.add_collection(LineCollection(live, colors=colours, linewidths=widths, zorder=1,
                                     gid="couplers"))
    dead = [[pos[a], pos[b]] for a, b in device.couplers if (a, b) not in set(device.live_couplers)]
    if dead:
        ax.add_collection(LineCollection(dead, colors=DEAD, linewidths=1.5, linestyles="dotted",
                                         zorder=1, gid="dead couplers"))
    return mpl.cm.ScalarMappable(norm=norm, cmap=cmap), errors or [lo]


def draw_placement(device: Device, path: str | Path | None = None, *, patch: Patch | None = None,
                   placement: Placement | None = None, title: str | None = None):
    """Draw the chip, and the placement on top when given; write `path` (PNG/SVG); return the
    figure."""
    plt, fig, ax = _figure(device)
    pos = _positions(device)
    if placement is not None and patch is None:
        raise InputError("a placement is drawn with its patch: give patch=")
    where = placement.as_dict(patch) if placement is not None and patch is not None else {}
    edges = set()
    if placement is not None and patch is not None:
        for (a, b) in patch.interaction_counts():
            p, q = where[patch.qubits[a]], where[patch.qubits[b]]
            edges.add((min(p, q), max(p, q)))
    sm, shown = _draw_couplers(ax, device, pos, frozenset(edges))
    used = set(where.values())
    live = [q for q in device.live_qubits if q not in used]
    ax.scatter([pos[q][0] for q in live], [pos[q][1] for q in live], s=30, c="#BBBBBB",
               edgecolors="#666666", linewidths=0.5, zorder=2, label="free qubit", gid="free")
    dead = sorted(device.dead_qubits)
    if dead:
        ax.scatter([pos[q][0] for q in dead], [pos[q][1] for q in dead], s=60, marker="x",
                   c=DEAD, zorder=2, label="dead qubit", gid="dead qubits")
    if any(c not in set(device.live_couplers) for c in device.couplers):
        ax.plot([], [], color=DEAD, linestyle="dotted", label="dead coupler")
    for role, (marker, colour) in ROLE_STYLE.items():
        qs = [where[q] for q in patch.qubits_with_role(role)] if patch and where else []
        if qs and patch is not None:
            ax.scatter([pos[q][0] for q in qs], [pos[q][1] for q in qs], s=190, marker=marker,
                       c=colour, edgecolors="black", linewidths=1.0, zorder=3, label=role, gid=role)
            if len(qs) <= 60:                # names inside the markers: they never overlap
                ink = "black" if role == "flag" else "white"
                for name in patch.qubits_with_role(role):
                    x, y = pos[where[name]]
                    ax.annotate(name, (x, y), textcoords="offset points",
                                xytext=(0, 0), ha="center",
                                va="center", fontsize=6 if len(name) <= 3 else 4.5, color=ink,
                                zorder=4, gid="patch qubit names")
    _number_qubits(ax, device, pos)
    _colour_bar(fig, sm, ax, "two-qubit error (light: low)", shown)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=6, fontsize=8, frameon=False,
              markerscale=0.7)
    ax.set_title(title or f"{device.name}" + (f" with {patch.name}" if patch else ""), fontsize=10)
    ax.autoscale_view()
    return _save(plt, fig, path)


def draw_score_map(device: Device, patch: Patch, placements, success, path=None, *, title=None,
                   label="best est. success using it"):
    """Shade each qubit by the best value (higher is better) of any placement that uses it."""
    import matplotlib as mpl

    plt, fig, ax = _figure(device)
    pos = _positions(device)
    _draw_couplers(ax, device, pos, plain=True)       # the colour map is the score's here
    grid = np.array([p.physical for p in placements], dtype=np.int64).reshape(len(placements), -1)
    top = np.full(max(device.qubits) + 1, -np.inf)
    for col in range(grid.shape[1]):                 # per patch qubit, not per placement
        np.maximum.at(top, grid[:, col], np.asarray(success, dtype=float))
    best = {int(q): float(top[q]) for q in np.nonzero(np.isfinite(top))[0]}
    shaded = sorted(best)
    other = [q for q in device.live_qubits if q not in best]
    ax.scatter([pos[q][0] for q in other], [pos[q][1] for q in other], s=30, c="#DDDDDD",
               edgecolors="#888888", linewidths=0.5, zorder=2, label="in no placement",
               gid="unused")
    if shaded:
        values = [best[q] for q in shaded]
        points = ax.scatter([pos[q][0] for q in shaded], [pos[q][1] for q in shaded], s=90,
                            c=values, cmap=mpl.colormaps["cividis"], edgecolors="black",
                            linewidths=0.5, zorder=3, gid="scored")
        if max(values) == min(values):           # one colour: a band around the value
            pad = max(abs(values[0]) * 0.05, 1e-6)
            points.set_clim(values[0] - pad, values[0] + pad)
        _colour_bar(fig, points, ax, label, values)
    dead = sorted(device.dead_qubits)
    if dead:
        ax.scatter([pos[q][0] for q in dead], [pos[q][1] for q in dead], s=60, marker="x",
                   c=DEAD, zorder=2, label="dead qubit", gid="dead qubits")
    _number_qubits(ax, device, pos)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=6, fontsize=8, frameon=False,
              markerscale=0.7)
    ax.set_title(title or f"Where {patch.name} does best on {device.name}", fontsize=10)
    ax.autoscale_view()
    return _save(plt, fig, path)


def picture_bytes(fig, suffix: str) -> bytes:
    """The figure as PNG or SVG bytes (`suffix` 'png' or 'svg')."""
    import io
    buffer = io.BytesIO()
    fig.savefig(buffer, format=suffix, bbox_inches="tight")
    return buffer.getvalue()


def _save(plt, fig, path):
    if path is not None:
        from ..io.writers import write_atomic_bytes
        suffix = Path(path).suffix.lower().lstrip(".") or "png"
        if suffix not in ("png", "svg"):
            from ..errors import InputError
            raise InputError(f"pictures are written as .png or .svg, not .{suffix}", file=str(path))
        write_atomic_bytes(path, picture_bytes(fig, suffix))
    return fig
