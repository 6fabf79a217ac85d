"""A self-contained HTML page for `find`, `audit` and `check`: what a reviewer opens from CI.

One file, no network, no script: inline CSS, the chip as inline SVG (`svg.chip_svg`, with
hover figures on every qubit and coupler), the verdict, every gate that needs routing with
its file and line, and the ranking. Input is the command's JSON payload (the same dict
`--format json` prints) and the pictures as SVG strings; this module only formats.

    >>> page = render_html({"command": "audit", "chip": {"name": "c"}, "patch": {"name": "p"},
    ...                     "audit": {"swap_free": True, "circuits": [], "placement": {}},
    ...                     "caution": "model estimates"}, pictures={})
    >>> page.startswith("<!DOCTYPE html>") and "swap-free" in page
    True
"""
from __future__ import annotations

from html import escape
from typing import Any, Mapping

__all__ = ["render_html"]

_CSS = """
body{font-family:system-ui,sans-serif;margin:1.5rem auto;max-width:1000px;color:#222;
line-height:1.4;padding:0 1rem}
h1{font-size:1.35rem}h2{font-size:1.1rem;margin-top:1.6rem;border-bottom:1px solid #ddd}
table{border-collapse:collapse;margin:.5rem 0;font-size:.9rem}
th,td{border:1px solid #ccc;padding:.25rem .5rem;text-align:left;vertical-align:top}
th{background:#f3f3f3}td.num{text-align:right;font-variant-numeric:tabular-nums}
.pass{color:#0a6b2d;font-weight:600}.fail{color:#a3240b;font-weight:600}
.unknown{color:#8a5a00;font-weight:600}
code{background:#f5f5f5;padding:0 .2rem}figure{margin:.5rem 0}
figcaption{font-size:.8rem;color:#555}.caution{font-size:.85rem;color:#555;margin-top:2rem}
"""


def render_html(payload: Mapping[str, Any], *, pictures: Mapping[str, str]) -> str:
    """The page for a `find`, `audit` or `check` payload; `pictures`: caption -> SVG text
    (for `check`, captioned '<patch> on <chip>', each shown in its pair's section)."""
    command = payload["command"]
    if command == "check":
        title = f"embedcheck check: {payload['project']['name']}"
        body = _check(payload, pictures)
    elif command == "find":
        title = f"embedcheck find: {payload['patch']['name']} on {payload['chip']['name']}"
        body = _find(payload, pictures)
    elif command == "audit":
        title = f"embedcheck audit: {payload['patch']['name']} on {payload['chip']['name']}"
        body = _audit(payload, pictures)
    else:
        raise ValueError(f"no HTML page for command {command!r}")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{escape(title)}</title>\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<style>{_CSS}</style>\n</head>\n<body>\n<h1>{escape(title)}</h1>\n"
            + body + f"\n<p class=\"caution\">{escape(payload.get('caution', ''))}</p>\n"
            "</body>\n</html>\n")


def _verdict(ok: bool | None, yes: str = "PASS", no: str = "FAIL") -> str:
    if ok is None:
        return '<span class="unknown">UNKNOWN</span>'
    return f'<span class="pass">{yes}</span>' if ok else f'<span class="fail">{no}</span>'


def _pictures(pictures: Mapping[str, str]) -> str:
    return "".join(f"<figure>{svg}<figcaption>{escape(caption)} (hover a qubit or coupler "
                   "for its calibration)</figcaption></figure>"
                   for caption, svg in pictures.items())


def _table(headers, rows) -> str:
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(cell if cell.startswith("<td") else
                                    f"<td>{escape(cell)}</td>" for cell in row) + "</tr>"
                   for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _num(value, fmt="{:.4f}") -> str:
    return '<td class="num">' + ("" if value is None else escape(fmt.format(value))) + "</td>"


def _where(gate: Mapping[str, Any]) -> str:
    place = f"{gate.get('file') or '?'}:{gate['line']}" if gate.get("line") else \
        (gate.get("file") or "?")
    return f"<td><code>{escape(place)}</code></td>"


def _gates(gates) -> str:
    rows = [[_where(g), f"<td><code>{escape(g.get('text') or g.get('written', ''))}</code></td>",
             "-".join(g["patch_qubits"]), "-".join(map(str, g["physical_qubits"])),
             g.get("reason", "")] for g in gates]
    return _table(["where", "gate", "patch qubits", "chip qubits", "why"], rows)


def _locations(locations) -> str:
    """The file:line places a rule blames (no file text: lines are what a reviewer opens)."""
    places = [f"{at.get('file') or '?'}:{at['line']}" if at.get("line") else
              (at.get("file") or "?") for at in locations]
    return "<td><code>" + escape(" ".join(dict.fromkeys(places))) + "</code></td>"


def _near_misses(misses) -> list[str]:
    """The nearest misses as a table (the patch pairs each leaves without a coupler)."""
    if not misses:
        return []
    rows = [[_num(m["off_coupler_gates"], "{}"),
             ", ".join("-".join(p) for p in m["missing_pairs"]),
             " ".join(f"{q}={n}" for q, n in m["qubits"].items())] for m in misses]
    return [f"<h2>Nearest misses ({escape(misses[0]['method'])})</h2>",
            _table(["off-coupler gates", "pairs without a coupler",
                    "placement (patch qubit=chip qubit)"], rows)]


def _audit_circuits(circuits) -> str:
    rows = []
    for c in circuits:
        rows.append([c["circuit"], _num(c.get("times_run", 1), "{}"),
                     _num(c["two_qubit_gates"], "{}"),
                     _num(c.get("off_coupler_count", len(c.get("off_coupler", []))), "{}"),
                     _num(c.get("direction_fixes", 0), "{}"), _num(c.get("depth"), "{}"),
                     _num(c.get("duration_ns"), "{:.0f}"),
                     f"<td>{_verdict(c.get('swap_free'), 'swap-free', 'needs routing')}</td>"])
    return _table(["circuit", "runs", "2q gates", "off-coupler", "direction fixes", "depth",
                   "duration ns", "verdict"], rows)


def _audit(payload, pictures) -> str:
    audit = payload["audit"]
    verdict = _verdict(audit["swap_free"], "swap-free", "needs routing")
    out = [f"<p>Every circuit on this placement: {verdict}</p>",
           _pictures(pictures), "<h2>Circuits</h2>", _audit_circuits(audit["circuits"])]
    bad = [g for c in audit["circuits"] for g in c.get("off_coupler", [])]
    if bad:
        out += ["<h2>Gates that need routing</h2>", _gates(bad)]
    score = payload.get("score")
    if score:
        out.append(f"<p>Score ({escape(score['figure'])}): {score['success']:.4f}</p>")
    return "\n".join(out)


def _find(payload, pictures) -> str:
    out = [f"<p>Every circuit swap-free on the best placement: "
           f"{_verdict(payload['all_swap_free'], 'yes', 'no')}; search "
           f"{'complete' if payload['complete'] else 'INCOMPLETE (stopped by a budget)'}: "
           f"{payload['search']['distinct_placements']} distinct placement(s).</p>",
           _pictures(pictures), "<h2>Circuits</h2>"]
    rows = [[c["circuit"], _num(c["two_qubit_gates"], "{}"),
             "<td>" + {True: "yes", False: "no", None: "unknown"}[c["fits_alone"]] + "</td>",
             "<td>" + ("yes" if c["in_core"] else "no") + "</td>",
             "; ".join(c.get("reasons", []))] for c in payload["circuits"]]
    out.append(_table(["circuit", "2q gates", "fits alone", "in the layout", "why not"], rows))
    out += _near_misses(payload.get("near_misses", []))
    for part, what in (("logical", "logical ranking"), ("snapshots", "ranking over snapshots")):
        cut = (payload.get(part) or {}).get("unscored_placements", 0)
        if cut:
            out.append(f"<p>INCOMPLETE {what}: the time budget ran out before {cut} "
                       "placement(s) were scored; the best by the cost model came first.</p>")
    best = payload.get("best_audit")
    if best:
        bad = [g for c in best["circuits"] for g in c.get("off_coupler", [])]
        if bad:
            out += ["<h2>Gates that need routing on the best placement</h2>", _gates(bad)]
    logical = payload.get("logical")
    if logical and logical.get("top"):
        out.append(f"<h2>Ranking by {escape(logical['figure'])} (what this report leads "
                   "with)</h2>")
        out.append(_table(["rank", logical["figure"], "placement (patch qubit=chip qubit)"],
                          [[_num(r["rank"], "{}"),
                            _num(_logical_value(r, logical["figure"]), "{:.3g}"),
                            " ".join(f"{q}={n}" for q, n in r["qubits"].items())]
                           for r in logical["top"]]))
    if payload.get("placements"):
        out.append(f"<h2>Ranking ({escape(payload['figure'])})</h2>")
        rows = [[_num(p["rank"], "{}"), _num(p["success"]), _num(p["unscored_gates"], "{}"),
                 " ".join(f"{q}={n}" for q, n in p["qubits"].items())]
                for p in payload["placements"]]
        out.append(_table(["rank", "score", "off-coupler", "placement (patch qubit=chip qubit)"],
                          rows))
    return "\n".join(out)


def _logical_value(row: Mapping[str, Any], figure: str) -> Any:
    """A logical ranking row's figure: the sampled decoded error per round, the estimate,
    or the deterministic detection figures."""
    if figure == "decoded" and row.get("decoded"):
        return row["decoded"]["per_round"]
    return row.get(figure, row.get("estimate"))


def _check(payload, pictures) -> str:
    out = [f"<p>Project <code>{escape(payload['project']['name'])}</code>: "
           f"{_verdict(payload['passed'])}</p>"]
    for result in payload["results"]:
        name = f"{result['patch']} on {result['chip']}"
        out.append(f"<h2>{escape(name)}: {_verdict(result['passed'])}</h2>")
        if name in pictures:
            out.append(_pictures({name: pictures[name]}))
        rows = [[o["rule"], o.get("circuit") or "", f"<td>{_verdict(o['passed'])}</td>",
                 o["message"], _locations(o.get("locations", []))]
                for o in result["outcomes"]]
        out.append(_table(["rule", "circuit", "verdict", "why", "where"], rows))
        if result.get("blamed_circuits"):
            out.append("<p>Circuits that cannot fit: "
                       f"{escape(', '.join(result['blamed_circuits']))}</p>")
        out += _near_misses(result.get("near_misses", []))
        bad = [g for c in result.get("circuits", []) for g in c.get("gates", [])]
        if bad:
            out += ["<p>Gates that need routing on the chosen placement:</p>", _gates(bad)]
    return "\n".join(out)
