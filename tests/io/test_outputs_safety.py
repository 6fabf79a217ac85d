"""No command ever writes over one of its inputs or over another of its outputs.

Every writing option is pointed at every kind of input (project file, chip file, patch
file, the OpenQASM file a patch names, a baseline report) and at another output: the
command must exit 2 with one line on stderr, leave every input byte-identical and write
nothing at all (no report, no temporary file).
"""
import json
import shutil
from pathlib import Path

import pytest

from embedcheck.cli import main
from helpers import DEMO_CHIP, ROOT


@pytest.fixture()
def work(tmp_path):
    """A project folder: chip, two patches, the round's OpenQASM file, a project file."""
    for name in ("flagged_weight4.yaml", "flagged_weight4_coupler_prep.yaml",
                 "flagged_weight4_round.qasm"):
        shutil.copy(ROOT / "samples" / name, tmp_path / name)
    shutil.copy(DEMO_CHIP, tmp_path / "chip.yaml")
    (tmp_path / "project.yaml").write_text(
        "embedcheck_project: 1\nname: safety\nchips: [chip.yaml]\n"
        "patches: [flagged_weight4_coupler_prep.yaml]\n"
        "rules: {max_off_coupler_gates: 0}\ncross_check: {top: 0}\n"
        "search: {limit: 100, budget_s: 30}\n")
    (tmp_path / "baseline.json").write_text(json.dumps({"command": "check", "pairs": []}))
    return tmp_path


def _snapshot(folder: Path) -> dict:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def _refused(work, capsys, argv, *, message):
    before = _snapshot(work)
    code = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err, err
    assert message in err, err
    assert _snapshot(work) == before          # inputs unchanged, nothing new (no temp files)


INPUTS = ["project.yaml", "chip.yaml", "flagged_weight4_coupler_prep.yaml",
          "flagged_weight4_round.qasm"]


@pytest.mark.parametrize("kind", ["json", "markdown", "junit", "sarif", "html"])
@pytest.mark.parametrize("victim", INPUTS)
def test_check_report_options_never_overwrite_an_input(work, capsys, kind, victim):
    _refused(work, capsys, ["check", work / "project.yaml", f"--{kind}", work / victim],
             message="will not write over an input file")


@pytest.mark.parametrize("kind", ["json", "markdown", "junit", "sarif", "html"])
@pytest.mark.parametrize("victim", INPUTS)
def test_project_reports_never_overwrite_an_input(work, capsys, kind, victim):
    project = work / "project.yaml"
    project.write_text(project.read_text() + f"reports: {{{kind}: {victim}}}\n")
    _refused(work, capsys, ["check", project], message="will not write over an input file")


def test_check_report_never_overwrites_its_baseline(work, capsys):
    _refused(work, capsys, ["check", work / "project.yaml", "--baseline", work / "baseline.json",
                            "--json", work / "baseline.json"],
             message="will not write over an input file")


def test_same_file_through_another_path_or_a_hard_link_is_refused(work, capsys):
    (work / "sub").mkdir()
    _refused(work, capsys, ["check", work / "project.yaml",
                            "--json", work / "sub" / ".." / "chip.yaml"],
             message="will not write over an input file")
    (work / "link.yaml").hardlink_to(work / "chip.yaml")
    _refused(work, capsys, ["check", work / "project.yaml", "--json", work / "link.yaml"],
             message="will not write over an input file")


def test_two_reports_on_one_path_are_refused(work, capsys):
    _refused(work, capsys, ["check", work / "project.yaml", "--json", work / "out.txt",
                            "--markdown", work / "out.txt"], message="the same file as --json")
    project = work / "project.yaml"
    project.write_text(project.read_text() + "reports: {json: r.json, sarif: r.json}\n")
    _refused(work, capsys, ["check", project], message="the same file as")


def test_unwritable_report_fails_before_any_work_and_writes_no_other(work, capsys):
    (work / "a_folder").mkdir()
    _refused(work, capsys, ["check", work / "project.yaml", "--json", work / "ok.json",
                            "--markdown", work / "a_folder"], message="is a folder")
    _refused(work, capsys, ["check", work / "project.yaml", "--json", work / "ok.json",
                            "--sarif", "/proc/embedcheck-test/x.sarif"],
             message="does not exist")
    _refused(work, capsys, ["check", work / "project.yaml", "--json", work / "ok.json",
                            "--junit", "/proc/x.xml"], message="cannot write")
    assert not (work / "ok.json").exists()


@pytest.mark.parametrize("victim", INPUTS[1:])
@pytest.mark.parametrize("option", ["--draw", "--score-map"])
def test_find_pictures_never_overwrite_an_input(work, capsys, victim, option):
    target = work / (Path(victim).stem + ".svg")
    target.hardlink_to(work / victim)          # same file, a picture's suffix
    _refused(work, capsys, ["find", work / "chip.yaml", work / "flagged_weight4_coupler_prep.yaml",
                            option, target], message="will not write over an input file")


def test_find_pictures_on_one_path_are_refused(work, capsys):
    _refused(work, capsys, ["find", work / "chip.yaml", work / "flagged_weight4_coupler_prep.yaml",
                            "--draw", work / "p.png", "--score-map", work / "p.png"],
             message="the same file as --draw")


def test_draw_never_overwrites_an_input(work, capsys):
    (work / "chip.svg").hardlink_to(work / "chip.yaml")
    _refused(work, capsys, ["draw", work / "chip.yaml", "-o", work / "chip.svg"],
             message="will not write over an input file")


def test_write_qasm_never_overwrites_the_circuit_file_it_read(work, capsys):
    # The patch reads its round from flagged_weight4_round.qasm; make that file the one
    # --write-qasm would write (FOLDER/round.qasm).
    (work / "round.qasm").hardlink_to(work / "flagged_weight4_round.qasm")
    patch = work / "flagged_weight4_coupler_prep.yaml"
    patch.write_text(patch.read_text().replace("flagged_weight4_round.qasm", "round.qasm"))
    _refused(work, capsys, ["audit", work / "chip.yaml", patch, "--pick", "1",
                            "--write-qasm", work, "--force"],
             message="will not write over an input file")


def test_write_qasm_and_generate_keep_existing_files_unless_forced(work, capsys):
    (work / "out").mkdir()
    (work / "out" / "prep.qasm").write_text("// mine\n")
    patch = work / "flagged_weight4_coupler_prep.yaml"
    _refused(work / "out", capsys, ["audit", work / "chip.yaml", patch, "--pick", "1",
                                    "--write-qasm", work / "out"], message="file exists")
    assert main(["audit", str(work / "chip.yaml"), str(patch), "--pick", "1",
                 "--write-qasm", str(work / "out"), "--force"]) == 0
    assert (work / "out" / "prep.qasm").read_text() != "// mine\n"
    announced = capsys.readouterr().err.splitlines()     # each file written, on stderr
    assert [line.split(":")[0] for line in announced] == [
        f"wrote {work / 'out' / name}.qasm" for name in ("prep", "round", "readout")]
    (work / "g.yaml").write_text("# mine\n")
    _refused(work, capsys, ["generate", "line", "--size", "5", "-o", work / "g.yaml"],
             message="file exists")
    capsys.readouterr()
    assert main(["generate", "line", "--size", "5", "-o", str(work / "g.yaml"), "--force"]) == 0
    assert "embedcheck_chip" in (work / "g.yaml").read_text()


def test_write_qasm_to_a_missing_folder_fails_before_the_search(work, capsys):
    _refused(work, capsys, ["audit", work / "chip.yaml", work / "flagged_weight4_coupler_prep.yaml",
                            "--pick", "1", "--write-qasm", work / "missing"],
             message="does not exist")


@pytest.mark.parametrize("victim", INPUTS)
def test_generate_code_and_repair_never_overwrite_an_input(work, capsys, victim):
    _refused(work, capsys, ["generate", "line", "--size", "5", "-o", work / victim],
             message="file exists")
    _refused(work, capsys, ["code", "repetition", "-o", work / victim], message="file exists")


def test_repair_output_never_overwrites_the_patch(work, capsys):
    patch = work / "flagged_weight4.yaml"
    _refused(work, capsys, ["repair", work / "chip.yaml", patch, "-o", patch],
             message="will not write over an input file")


def test_fail_on_worse_without_baseline_is_a_usage_error(work, capsys):
    _refused(work, capsys, ["check", work / "project.yaml", "--fail-on-worse"],
             message="give --baseline")


def test_an_existing_output_names_force_only_where_the_command_has_it(tmp_path, capsys):
    # code -o said "add --force to replace it", and code has no --force (a new user's trial).
    out = tmp_path / "s3.yaml"
    out.write_text("keep me\n")
    assert main(["code", "surface", "--distance", "3", "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert "file exists; will not overwrite it (give another path" in err and "--force" not in err
    assert out.read_text() == "keep me\n"
    chip = tmp_path / "chip.yaml"
    chip.write_text("keep me too\n")
    assert main(["generate", "line", "--size", "3", "-o", str(chip)]) == 2
    assert "(add --force to replace it)" in capsys.readouterr().err
