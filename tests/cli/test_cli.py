"""The command line as a user meets it: the demo, JSON output, exit codes, bad input."""
import json
import subprocess
import sys
import textwrap

import pytest

from embedcheck.cli import main
from helpers import DEMO_CHIP, DEMO_PATCH, FIXED_PATCH, TEST_DATA

GOOD_CHIP = """\
embedcheck_chip: 1
name: tiny
qubits: 3
couplers: [[0, 1], [1, 2]]
calibration:
  defaults: {readout_error: 0.01, two_qubit_error: 0.01}
  qubits:
    - {qubit: 0, t1_us: 100, t2_us: 80}
"""


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def test_demo_find_reports_the_lesson(capsys):
    code, out, err = run(capsys, "find", DEMO_CHIP, DEMO_PATCH)
    assert code == 0 and err == ""
    assert "prep" in out and "NEEDS ROUTING (3 off-coupler)" in out
    round_line = next(line for line in out.splitlines() if line.split()[:1] == ["round"])
    assert "swap-free" in round_line
    assert f"prep, two-qubit gate 1: {DEMO_PATCH}:23\n      cx d[0], d[1];" in out
    assert "model estimates" in out and "search complete" in out


def test_demo_find_json_and_strict(capsys):
    code, out, _ = run(capsys, "find", DEMO_CHIP, DEMO_PATCH, "--format", "json", "--top", "3")
    data = json.loads(out)
    assert code == 0 and data["all_swap_free"] is False
    assert len(data["placements"]) == 3 and data["placements"][0]["rank"] == 1
    prep = next(c for c in data["circuits"] if c["circuit"] == "prep")
    assert prep["fits_alone"] and not prep["in_core"] and prep["off_coupler_min"] == 3
    assert data["search"]["complete"] and data["figure"] == "fidelity_product"
    assert run(capsys, "find", DEMO_CHIP, DEMO_PATCH, "--strict")[0] == 1
    assert run(capsys, "find", DEMO_CHIP, FIXED_PATCH, "--strict")[0] == 0


def test_audit_by_rank_and_by_placement(capsys):
    code, out, _ = run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--pick", "1", "--format", "json")
    data = json.loads(out)
    assert code == 0 and not data["audit"]["swap_free"]
    placement = ",".join(f"{k}={v}" for k, v in data["audit"]["placement"].items())
    code, out, _ = run(capsys, "audit", DEMO_CHIP, FIXED_PATCH, "--placement", placement,
                       "--strict")
    assert code == 0 and "experiment" in out and "NEEDS ROUTING" not in out
    code, out, _ = run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--placement", placement,
                       "--strict", "--router-estimate")
    assert code == 1 and "router estimate" in out


def test_validate(capsys):
    code, out, _ = run(capsys, "validate", DEMO_CHIP, DEMO_PATCH)
    assert code == 0 and "valid chip file" in out and "valid patch file" in out


def _bad(tmp_path, capsys, text, *, name="chip.yaml", patch=None):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text))
    args = ["validate", path] if patch is None else ["find", path, patch]
    code, out, err = run(capsys, *args)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    return err


@pytest.mark.parametrize("change,expected", [
    (("couplers: [[0, 1], [1, 2]]", "coupler: [[0, 1]]"),
     ":4: coupler: unknown key 'coupler' (did you mean 'couplers'?)"),
    (("two_qubit_error: 0.01", "two_qubit_error: 1.5"),
     "calibration.defaults.two_qubit_error: 1.5 must be <= 1"),
    (("[1, 2]]", "[1, 5]]"), ":4: couplers[1]: coupler [1, 5] names qubit 5"),
    (("[1, 2]]", "[1, 2], [2, 1]]"), ":4: couplers[2]: duplicate coupler [2, 1]"),
    (("t2_us: 80", "t2_us: 250"), ":8: calibration.qubits[0].t2_us: qubit 0: t2_us 250"),
    (("qubits: 3", "qubits: 3:"), "chip.yaml:3: YAML syntax error"),
    (("embedcheck_chip: 1", "embedcheck_chip: 2"), ":1: embedcheck_chip: format version 2"),
    (("name: tiny\n", ""), "missing required key 'name'"),
])
def test_bad_chip_files(tmp_path, capsys, change, expected):
    err = _bad(tmp_path, capsys, GOOD_CHIP.replace(*change))
    assert expected in err and "chip.yaml" in err


def test_chip_given_where_a_patch_belongs(capsys):
    code, _, err = run(capsys, "find", DEMO_CHIP, DEMO_CHIP)
    assert code == 2 and "this is a chip file, but a patch file was expected" in err


def test_missing_file(tmp_path, capsys):
    code, _, err = run(capsys, "find", tmp_path / "nope.yaml", DEMO_PATCH)
    assert code == 2 and "nope.yaml: file not found" in err


def test_undeclared_patch_qubit(tmp_path, capsys):
    text = DEMO_PATCH.read_text().replace("ancilla: [a0]", "ancilla: [a9]")
    (tmp_path / "flagged_weight4_round.qasm").write_text(
        (DEMO_PATCH.parent / "flagged_weight4_round.qasm").read_text())
    err = _bad(tmp_path, capsys, text, name="patch.yaml")
    assert "flagged_weight4_round.qasm:14: circuit 'round' uses qubit 'a0'" in err


def test_patch_larger_than_chip(tmp_path, capsys):
    chip = tmp_path / "tiny.yaml"
    chip.write_text(GOOD_CHIP)
    # A finding, not a bad input: a project may list chips of every size.
    code, out, err = run(capsys, "find", chip, DEMO_PATCH)
    assert code == 0 and "the patch has 7 qubits but the chip has only 3 live qubits" in out
    assert "No placement" in out


def test_usage_errors_exit_2(capsys):
    assert run(capsys, "find", DEMO_CHIP)[0] == 2
    assert run(capsys)[0] == 2
    code, _, err = run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--placement", "d0=1")
    assert code == 2 and "no physical qubit given for d1" in err
    code, _, err = run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--placement", "dd0=1")
    assert code == 2 and "did you mean 'd0'" in err


def test_console_entry_point_runs_as_a_module():
    proc = subprocess.run([sys.executable, "-m", "embedcheck", "find", str(DEMO_CHIP),
                           str(DEMO_PATCH), "--top", "1"], capture_output=True, text=True)
    assert proc.returncode == 0 and "NEEDS ROUTING" in proc.stdout


def test_placement_edge_cases(capsys):
    code, _, err = run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--placement", "")
    assert code == 2 and "give name=physical_qubit pairs" in err and "Traceback" not in err
    assert run(capsys, "find", DEMO_CHIP, DEMO_PATCH, "--budget-s", "-1")[0] == 2


def test_dead_qubit_placement_is_refused(tmp_path, capsys):
    chip = tmp_path / "chip.yaml"
    chip.write_text(GOOD_CHIP + "dead_qubits: [2]\n")
    patch = tmp_path / "p.yaml"
    patch.write_text(textwrap.dedent("""\
        embedcheck_patch: 1
        name: pair
        qubits: {data: [q0, q1]}
        circuits:
          round:
            qasm: |
              OPENQASM 2.0;
              include "qelib1.inc";
              qreg q[2];
              cx q[0], q[1];
        """))
    code, _, err = run(capsys, "audit", chip, patch, "--placement", "q0=1,q1=2")
    assert code == 2 and "qubit 2 of chip 'tiny' is dead" in err
    # Not adjacent at all: "no coupler", even though a dead qubit is nearby.
    chip.write_text(GOOD_CHIP.replace("qubits: 3", "qubits: 4")
                    .replace("[1, 2]]", "[1, 2], [2, 3]]")
                    + "dead_qubits: [3]\n")
    code, out, _ = run(capsys, "audit", chip, patch, "--placement", "q0=0,q1=2", "--format", "json")
    (gate,) = json.loads(out)["audit"]["circuits"][0]["off_coupler"]
    assert code == 0 and gate["reason"] == "no coupler" and gate["line"] == 10


@pytest.mark.parametrize("change,expected", [
    (("readout_error: 0.01,", "readout_error: .nan,"), ":6: calibration.defaults.readout_error: "
                                                       ".nan is not a finite number"),
    (("embedcheck_chip: 1", "embedcheck_chip: '1'"),
     "must be the number 1, not a string (write the number 1, without quotes)"),
    (("qubits: 3", "qubits: 100000000"), ":3: qubits: 100000000 is not valid here"),
])
def test_more_bad_chip_values(tmp_path, capsys, change, expected):
    err = _bad(tmp_path, capsys, GOOD_CHIP.replace(*change))
    assert expected in err


def test_near_miss_circuit_name(tmp_path, capsys):
    text = DEMO_PATCH.read_text().replace("  round:\n", "  rounds:\n")
    (tmp_path / "flagged_weight4_round.qasm").write_text("")
    err = _bad(tmp_path, capsys, text, name="patch.yaml")
    assert "circuit 'rounds' is not one of prep, round, readout (did you mean 'round'?)" in err


@pytest.mark.parametrize("extra,expected", [
    (["--region", "40-0"], "--region: range '40-0' runs backwards"),
    (["--region-box", "3,3,0,0"], "--region-box: '3,3,0,0' is empty"),
    (["--region-box", "0,0,nan,inf"], "should be four finite numbers"),
    (["--exclude-qubits", "999"], "--exclude-qubits: chip 'demo-heavy-hex-87' has no qubit 999"),
    (["--exclude-couplers", "3-5"], "--exclude-couplers: 3-5 is not a coupler"),
    (["--require", "ancilla: readout_error <= -1"], "--require: 'readout_error <= -1': an "
                                                    "error bound must lie in [0, 1]"),
    (["--decode"], "--decode decodes sampled shots: give --monte-carlo SHOTS too"),
])
def test_bad_find_options(capsys, extra, expected):
    code, out, err = run(capsys, "find", DEMO_CHIP, FIXED_PATCH, *extra)
    assert code == 2 and out == "" and expected in err and err.count("\n") == 1


def test_scalar_openqasm3_qubits_reach_qiskit_with_their_names(tmp_path, capsys):
    # A scalar `qubit a0;` has no register in qiskit: names must follow declaration order.
    (tmp_path / "p.yaml").write_text(textwrap.dedent("""\
        embedcheck_patch: 1
        name: scalar
        qubits: {data: [d0, d1], ancilla: [a0]}
        circuits:
          round:
            qasm: |
              OPENQASM 3.0;
              include "stdgates.inc";
              qubit d0;
              qubit a0;
              qubit d1;
              bit c;
              cx d0, a0;
              cx d1, a0;
              c = measure a0;
        """))
    chip = tmp_path / "line.yaml"
    chip.write_text(GOOD_CHIP)
    code, out, err = run(capsys, "audit", chip, tmp_path / "p.yaml", "--placement",
                         "d0=0,a0=1,d1=2", "--cross-check", "--router-estimate", "--format",
                         "json")
    data = json.loads(out)
    assert code == 0 and data["cross_check"]["disagreements"] == []
    assert data["audit"]["circuits"][0]["router_estimate"]["added_two_qubit_gates"] == 0


def test_project_rule_naming_a_missing_circuit(tmp_path, capsys):
    text = (DEMO_PATCH.parent / "project.yaml").read_text().replace(
        "max_off_coupler_gates: 0 ", "max_off_coupler_gates: {prepp: 1} ")
    text = text.replace("../devices/", str(DEMO_CHIP.parent) + "/")
    for f in ("flagged_weight4.yaml", "flagged_weight4_round.qasm",
              "flagged_weight4_coupler_prep.yaml"):
        (tmp_path / f).write_text((DEMO_PATCH.parent / f).read_text())
    (tmp_path / "project.yaml").write_text(text)
    code, _, err = run(capsys, "check", tmp_path / "project.yaml")
    assert code == 2 and "has no circuit 'prepp' (did you mean 'prep'?)" in err


def test_worker_processes_scores_and_internal_errors(tmp_path, capsys, monkeypatch):
    # --processes 2 pickles devices and patches for the workers; a distance-5 code (no one
    # or two faults flip its observable unseen) is ranked by the decoded estimate, to order
    # 3, computed in the workers; tiny scores keep their digits; a bug of ours is one line
    # and exit 3.
    from embedcheck.report.text import format_score
    rep = tmp_path / "rep5.yaml"
    assert main(["code", "repetition", "--distance", "5", "--rounds", "3", "-o", str(rep)]) == 0
    capsys.readouterr()
    assert main(["find", str(DEMO_CHIP), str(rep), "--processes", "2"]) == 0
    out = capsys.readouterr().out
    assert "Ranked by estimate" in out and "to order 3" in out
    assert format_score(1.234e-5) == "1.234e-05" and format_score(0.5974) == "0.5974"
    import embedcheck.pipeline.find as pipeline_find
    monkeypatch.setattr(pipeline_find, "vet_patch", lambda *a, **k: 1 / 0)
    assert main(["find", str(DEMO_CHIP), str(rep)]) == 3
    err = capsys.readouterr().err
    assert err.startswith("embedcheck: internal error: ZeroDivisionError") and err.count("\n") == 1


def test_validate_reports_every_file(tmp_path, capsys):
    bad = tmp_path / "bad.yaml"
    bad.write_text(DEMO_CHIP.read_text().replace("native_two_qubit_gate", "natve_two_qubit_gate"))
    assert main(["validate", str(DEMO_CHIP), str(bad), str(DEMO_PATCH)]) == 2
    out = capsys.readouterr()
    assert out.out.count("valid") == 2 and "did you mean 'native_two_qubit_gate'" in out.err
    assert out.err.count("\n") == 1


def test_top_all_lists_every_placement(capsys):
    assert main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--top", "all", "--format",
                 "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert len(data["placements"]) == data["search"]["distinct_placements"] > 10
    assert main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--top", "al"]) == 2
    assert "'al' must be a whole number from 1 up, or 'all'" in capsys.readouterr().err
    assert main(["find", str(DEMO_CHIP), str(FIXED_PATCH), "--top", "0"]) == 2
    assert "'0' must be a whole number from 1 up, or 'all'" in capsys.readouterr().err


def test_find_gives_the_same_answer_every_run(tmp_path):
    # Unplaced qubits go on the nearest free qubits; rustworkx lists neighbours in hash
    # order, which changes between processes, so the order must be fixed by us.
    patch = tmp_path / "idle.qasm"
    patch.write_text('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[5];\ncreg c[5];\nh q[0];\n'
                     'cx q[0], q[1];\ncx q[1], q[2];\nx q[3];\nh q[4];\nmeasure q -> c;\n')
    outs = []
    for seed in ("1", "2", "3"):
        done = subprocess.run([sys.executable, "-m", "embedcheck", "find", str(DEMO_CHIP),
                               str(patch), "--top", "all", "--format", "json"],
                              capture_output=True, text=True, check=True,
                              env={**__import__("os").environ, "PYTHONHASHSEED": seed})
        data = json.loads(done.stdout)
        outs.append([row["qubits"] for row in data["placements"]])
    assert outs[0] == outs[1] == outs[2] and len(outs[0]) > 10


def test_a_round_that_cannot_fit_ranks_no_layout_for_the_rest(capsys):
    # The rotated surface code's round needs degree-4 qubits, which heavy-hex lacks; its
    # CSS preparation would fit alone, but no layout is ranked for the preparation alone.
    patch = TEST_DATA / "surface3_css_prep.yaml"
    assert main(["find", str(DEMO_CHIP), str(patch), "--format", "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    fits = {c["circuit"]: c["fits_alone"] for c in data["circuits"]}
    assert fits["round"] is False and fits["prep"] is True
    assert data["search"]["distinct_placements"] == 0 and not data["placements"]
    assert main(["find", str(DEMO_CHIP), str(patch)]) == 0
    assert "No placement makes the check round swap-free" in capsys.readouterr().out


def test_bare_chips_and_empty_pictures_are_findings(tmp_path, capsys):
    # A chip file without calibration is valid; --draw with nothing to place draws the chip
    # alone, and --score-map says it wrote nothing.
    bare = tmp_path / "bare.yaml"
    bare.write_text("embedcheck_chip: 1\nname: bare\nqubits: 3\ncouplers: [[0, 1], [1, 2]]\n")
    assert main(["validate", str(bare)]) == 0
    picture, heat = tmp_path / "none.png", tmp_path / "heat.png"
    assert main(["find", str(bare), str(DEMO_PATCH), "--draw", str(picture),
                 "--score-map", str(heat)]) == 0
    out = capsys.readouterr().out
    assert picture.exists() and not heat.exists() and "--score-map wrote nothing" in out


@pytest.mark.parametrize("extra", [[], ["--budget-s", "0.000001"], ["--top", "all"],
                                   ["--limit", "3"]])
def test_find_json_follows_its_schema(capsys, extra, tmp_path):
    # Reference: the JSON Schema validator (draft 2020-12) on our shipped schema.
    import importlib.resources

    import jsonschema
    schema = json.loads(importlib.resources.files("embedcheck.schemas")
                        .joinpath("find-report.schema.json").read_text())
    jsonschema.Draft202012Validator.check_schema(schema)
    draw = [] if extra else ["--draw", str(tmp_path / "p.png")]   # pictures: drawn once
    for patch in (DEMO_PATCH, FIXED_PATCH):
        assert main(["find", str(DEMO_CHIP), str(patch), "--format", "json"] + draw
                    + extra) == 0
        jsonschema.validate(json.loads(capsys.readouterr().out), schema)
    tiny = tmp_path / "tiny.yaml"
    tiny.write_text(GOOD_CHIP)
    assert main(["find", str(tiny), str(DEMO_PATCH), "--format", "json"] + extra) == 0
    jsonschema.validate(json.loads(capsys.readouterr().out), schema)


def test_audit_json_follows_its_schema(capsys, tmp_path):
    import importlib.resources

    import jsonschema
    schema = json.loads(importlib.resources.files("embedcheck.schemas")
                        .joinpath("audit-report.schema.json").read_text())
    jsonschema.Draft202012Validator.check_schema(schema)
    for extra in ([], ["--router-estimate"], ["--write-qasm", str(tmp_path)], ["--cross-check"]):
        assert main(["audit", str(DEMO_CHIP), str(DEMO_PATCH), "--pick", "1", "--format",
                     "json"] + extra) == 0
        jsonschema.validate(json.loads(capsys.readouterr().out), schema)


def test_find_and_repair_give_the_same_answer_under_any_hash_seed(tmp_path):
    # Python randomises set order per process (PYTHONHASHSEED); an idle sum over a set and
    # a fan-out over a set once made the last digits of find's scores, and repair's choice of
    # rewrite, change from run to run.
    import json
    import os
    import subprocess
    import sys

    def run(seed, *argv):
        env = {**os.environ, "PYTHONHASHSEED": str(seed)}
        out = subprocess.run([sys.executable, "-m", "embedcheck", *map(str, argv)], env=env,
                             capture_output=True, text=True, check=True).stdout
        data = json.loads(out)
        data.get("search", {}).pop("elapsed_s", None)
        data.pop("wrote", None)
        return data

    find = [run(seed, "find", DEMO_CHIP, DEMO_PATCH, "--format", "json") for seed in (1, 2)]
    assert find[0] == find[1]
    repair = [run(seed, "repair", DEMO_CHIP, DEMO_PATCH, "-o", tmp_path / f"r{seed}.yaml",
                  "--format", "json") for seed in (1, 2)]
    assert repair[0] == repair[1]


def test_find_says_when_asked_for_monte_carlo_was_not_run(capsys):
    # The observable of the fixed patch is a detector parity: no fault flips it unseen, so
    # sampling cannot say anything; the report must say it skipped the shots and why.
    code, out, _ = run(capsys, "find", DEMO_CHIP, FIXED_PATCH, "--monte-carlo", "5000",
                       "--format", "json")
    data = json.loads(out)
    assert code == 0 and "logical" not in data
    assert "--monte-carlo sampling asked for was not run" in data["logical_note"]
    assert "parity of detectors" in data["logical_note"]
    code, out, _ = run(capsys, "find", DEMO_CHIP, FIXED_PATCH, "--monte-carlo", "5000")
    assert "sampling asked for was not run" in " ".join(out.split())
    # Without --monte-carlo nothing was asked for, so nothing is said about it.
    code, out, _ = run(capsys, "find", DEMO_CHIP, FIXED_PATCH, "--format", "json")
    assert "monte-carlo" not in json.loads(out)["logical_note"]


def test_a_placeholder_chip_warns_that_the_ranking_means_nothing(tmp_path, capsys):
    # 'generate' marks its calibration as a PLACEHOLDER in the file; find, check and
    # forecast say the ranking carries no information there, and their JSON flags it.
    chip = tmp_path / "grid.yaml"
    assert main(["generate", "square-grid", "--rows", "4", "--columns", "4", "-o",
                 str(chip)]) == 0
    capsys.readouterr()
    warning = "PLACEHOLDER calibration (the same figures everywhere): the ranking carries no"
    code, out, _ = run(capsys, "find", chip, FIXED_PATCH)
    assert code == 0 and warning in " ".join(out.split())
    data = json.loads(run(capsys, "find", chip, FIXED_PATCH, "--format", "json")[1])
    assert data["chip"]["placeholder_calibration"] is True
    real = json.loads(run(capsys, "find", DEMO_CHIP, FIXED_PATCH, "--format", "json")[1])
    assert real["chip"]["placeholder_calibration"] is False
    assert warning not in " ".join(run(capsys, "find", DEMO_CHIP, FIXED_PATCH)[1].split())
    for name in (FIXED_PATCH.name, "flagged_weight4_round.qasm"):
        (tmp_path / name).write_text((FIXED_PATCH.parent / name).read_text())
    (tmp_path / "project.yaml").write_text(
        f"embedcheck_project: 1\nname: p\nchips: [grid.yaml]\npatches: [{FIXED_PATCH.name}]\n")
    code, out, _ = run(capsys, "check", tmp_path / "project.yaml", "--cross-check-top", "0")
    assert warning in " ".join(out.split())
    code, out, _ = run(capsys, "check", tmp_path / "project.yaml", "--cross-check-top", "0",
                       "--format", "json")
    assert json.loads(out)["results"][0]["placeholder_calibration"] is True
    line = tmp_path / "line.yaml"
    assert main(["generate", "line", "--size", "7", "-o", str(line)]) == 0
    capsys.readouterr()
    fast = ["--family", "repetition", "--distances", "3", "--scales", "1", "--shots", "200",
            "--serial", "--samples", tmp_path / "s.sqlite"]
    code, out, _ = run(capsys, "forecast", line, *fast)
    assert code == 0 and warning in " ".join(out.split())
    code, out, _ = run(capsys, "forecast", line, *fast, "--format", "json")
    assert json.loads(out)["chip"]["placeholder_calibration"] is True
