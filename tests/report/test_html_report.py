"""The HTML report: valid HTML (html5lib's strict parser, an implementation of the WHATWG
parsing algorithm), self-contained (nothing fetched from anywhere), the chip with hover
figures, the failing gates with file and line; and it renders in headless Chromium with no
console errors and a screenshot."""
import json
import re
import shutil
import subprocess
from html import escape

import html5lib
import pytest

from embedcheck import load_device, load_patch
from embedcheck.cli import main
from embedcheck.report.html import render_html
from embedcheck.report.svg import placement_svg
from helpers import DEMO_CHIP, DEMO_PATCH, ROOT


def _find_page(tmp_path, capsys):
    page = tmp_path / "find.html"
    assert main(["find", str(DEMO_CHIP), str(DEMO_PATCH), "--format", "json", "--top", "5",
                 "--html", str(page)]) == 0
    return json.loads(capsys.readouterr().out), page.read_text()


def test_find_page_is_valid_self_contained_html_with_the_failing_gates(tmp_path, capsys):
    payload, page = _find_page(tmp_path, capsys)
    html5lib.HTMLParser(strict=True).parse(page)        # raises on any parse error
    assert not re.search(r"(src|href)\s*=|https?://(?!www\.w3\.org/2000/svg)", page)
    for gate in (23, 24, 25):                            # the naive prep's three CNOTs
        assert f"flagged_weight4.yaml:{gate}" in page
    # Hover figures: a <title> on every qubit and coupler of the chip.
    device = load_device(DEMO_CHIP)
    assert page.count("<title>qubit ") == device.num_qubits
    assert page.count("<title>coupler ") == len(device.couplers)
    assert "<title>qubit 25 = a0 (ancilla): readout_error" in page
    assert page.count('class="missing"') == 3
    assert escape(payload["caution"]) in page
    # The renderer alone gives the same page from the same payload.
    patch = load_patch(DEMO_PATCH)
    gates = [g for c in payload["best_audit"]["circuits"] for g in c["off_coupler"]]
    svg = placement_svg(device, patch, payload["placements"][0]["qubits"], gates,
                        title=f"{patch.name} on {device.name}")
    assert render_html(payload, pictures={"best placement": svg}) == page


def test_check_and_audit_pages_parse(tmp_path, capsys):
    page = tmp_path / "check.html"
    assert main(["check", str(ROOT / "samples" / "project.yaml"), "--html", str(page),
                 "--cross-check-top", "0"]) == 1
    text = page.read_text()
    html5lib.HTMLParser(strict=True).parse(text)
    assert "FAIL" in text and "flagged_weight4.yaml:23" in text
    assert text.count("<svg") == 2                        # one chip per chip x patch
    page = tmp_path / "audit.html"
    assert main(["audit", str(DEMO_CHIP), str(DEMO_PATCH), "--pick", "1", "--html",
                 str(page)]) == 0
    html5lib.HTMLParser(strict=True).parse(page.read_text())
    assert "needs routing" in page.read_text()
    capsys.readouterr()
    assert main(["audit", str(DEMO_CHIP), str(DEMO_PATCH), "--pick", "1", "--html",
                 str(tmp_path / "x.txt")]) == 2
    assert "ending in .html" in capsys.readouterr().err


def _chromium():
    return shutil.which("chromium") or shutil.which("chromium-browser")


def _render(browser, page_path, png_path, profile):
    """Headless Chromium: screenshot the page; return the console messages it logged."""
    run = subprocess.run(
        [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
         "--no-first-run", "--disable-background-networking", "--disable-component-update",
         "--disable-sync", f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0",
         f"--screenshot={png_path}", "--window-size=1100,1400", page_path.as_uri()],
        capture_output=True, text=True, timeout=120)
    return [line for line in run.stderr.splitlines() if "CONSOLE" in line]


def test_page_renders_in_headless_chromium_without_console_errors(capsys, tmp_path):
    browser = _chromium()
    if browser is None:
        pytest.skip("Chromium is not installed (Debian package 'chromium'; .ci/run installs "
                    "it): the browser check did not run")
    _find_page(tmp_path, capsys)
    path = tmp_path / "find.html"
    console = _render(browser, path, tmp_path / "find.png", tmp_path / "profile")
    assert console == []
    png = (tmp_path / "find.png").read_bytes()
    assert png.startswith(b"\x89PNG") and len(png) > 20_000      # a real, non-blank picture
    # The console check can fail: a page that logs an error is caught.
    bad = tmp_path / "bad.html"
    bad.write_text("<!DOCTYPE html><title>x</title><script>console.error('broken')</script>")
    assert any("broken" in line for line in
               _render(browser, bad, tmp_path / "bad.png", tmp_path / "profile2"))


def test_chip_svg_numbers_big_chips_or_says_why(monkeypatch):
    # Before: above 200 qubits the page's chip carried no numbers and nothing said so.
    import embedcheck.report.svg as svg
    from embedcheck import Device
    from embedcheck.model.lattices import square_grid
    device = Device.from_lattice(square_grid(16, 16), name="g16")          # 256 qubits
    drawn = svg.chip_svg(device)
    numbers = re.findall(r'fill="#333">(\d+)</text>', drawn)
    assert sorted(map(int, numbers)) == sorted(device.qubits)
    monkeypatch.setattr(svg, "NUMBERED_UP_TO", 200)
    drawn = svg.chip_svg(device)
    assert not re.findall(r'fill="#333">(\d+)</text>', drawn)
    assert "qubit numbers left out (256 qubits, above 200)" in drawn
    html5lib.HTMLParser(strict=True).parse(f"<!DOCTYPE html><title>t</title>{drawn}")
