"""`embedcheck forecast` as a user meets it: table, JSON (against its schema), picture,
the samples file (default place, resume, never an input), bad input."""
import json
from pathlib import Path

import jsonschema
import pytest

from embedcheck.cli import main
from embedcheck.io.yamlfile import schema

CHIP = """\
# INVENTED chip for the forecast tests: no real device, no real calibration.
embedcheck_chip: 1
name: test-line
family: {kind: line, size: 11}
calibration:
  defaults: {readout_error: 0.015, two_qubit_error: 0.012, single_qubit_error: 0.0004,
             t1_us: 120, t2_us: 90, two_qubit_duration_ns: 300, single_qubit_duration_ns: 40,
             measurement_duration_ns: 800}
"""
FAST = ["--family", "repetition", "--distances", "3,5", "--scales", "0.5,2", "--shots",
        "1500", "--serial"]


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture()
def chip(tmp_path):
    path = tmp_path / "chip.yaml"
    path.write_text(CHIP)
    return path


def test_table_json_picture_and_resume(capsys, chip, tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    report, picture = out_dir / "forecast.json", out_dir / "forecast.svg"
    code, out, err = run(capsys, "forecast", chip, *FAST, "--json", report, "--picture",
                         picture, "--format", "json")
    assert code == 0 and err.splitlines() == [f"wrote {report}: the forecast as JSON",
                                              f"wrote {picture}: the forecast drawn"]
    data = json.loads(out)
    jsonschema.validate(data, schema("forecast-report"))
    assert json.loads(report.read_text()) == data
    assert picture.read_text().lstrip().startswith(("<?xml", "<svg"))
    samples = out_dir / "test-line-repetition.forecast.sqlite"      # beside --json
    assert data["sampling"]["samples_file"] == str(samples) and samples.exists()
    assert data["scales"] == [0.5, 1.0, 2.0]
    assert [d["distance"] for d in data["distances"]] == [3, 5]
    assert {(p["distance"], p["placement"], p["scale"]) for p in data["points"]} == {
        (d, "best", s) for d in (3, 5) for s in (0.5, 1.0, 2.0)} | {(3, "median", 1.0),
                                                                    (5, "median", 1.0)}
    today = [s for s in data["suppression"] if s["scale"] == 1.0]
    assert len(today) == 1 and today[0]["verdict"] in ("pays", "does not pay", "unresolved")
    sampled = data["sampling"]["new_shots"]
    assert sampled > 0 and data["sampling"]["reused_shots"] == 0
    # The rerun (text this time) samples nothing new: everything comes from the file.
    code, out, _ = run(capsys, "forecast", chip, *FAST, "--samples", samples)
    assert code == 0 and f"0 shots sampled now, {sampled} reused" in out
    assert "Lambda" in out and today[0]["sentence"] in out and "<- today" in out
    assert "model estimates" in out


def test_default_samples_file_is_in_the_current_folder(capsys, chip, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, _ = run(capsys, "forecast", chip, *FAST, "--distances", "3", "--format", "json")
    assert code == 0
    assert json.loads(out)["sampling"]["samples_file"] == "test-line-repetition.forecast.sqlite"
    assert (tmp_path / "test-line-repetition.forecast.sqlite").exists()


@pytest.mark.parametrize("extra, words", [
    (["--distances", "4", "--family", "surface"], "odd distance"),
    (["--distances", "x"], "--distances"),
    (["--scales", "0,1"], "--scales"),
    (["--picture", "f.pdf"], ".png or .svg"),
    (["--family", "flagged"], "invalid choice"),
])
def test_bad_options_exit_2_with_one_line(capsys, chip, tmp_path, monkeypatch, extra, words):
    monkeypatch.chdir(tmp_path)
    code, out, err = run(capsys, "forecast", chip, *FAST, *extra)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and words in err
    assert not list(tmp_path.glob("*.sqlite"))


def test_the_samples_file_is_never_an_input_nor_a_foreign_file(capsys, chip, tmp_path):
    before = chip.read_text()
    code, _, err = run(capsys, "forecast", chip, *FAST, "--samples", chip)
    assert code == 2 and "--samples" in err and chip.read_text() == before
    notes = tmp_path / "notes.txt"
    notes.write_text("my notes\n")
    code, _, err = run(capsys, "forecast", chip, *FAST, "--samples", notes)
    assert code == 2 and "not an SQLite database" in err and notes.read_text() == "my notes\n"


def test_the_picture_leaves_the_global_backend_alone(capsys, chip, tmp_path):
    import matplotlib

    from embedcheck import draw_forecast
    code, out, _ = run(capsys, "forecast", chip, *FAST, "--distances", "3", "--format", "json",
                       "--samples", tmp_path / "s.sqlite")
    before = matplotlib.get_backend()
    figure = draw_forecast(json.loads(out))
    assert matplotlib.get_backend() == before
    assert [line.get_gid() for line in figure.axes[0].get_lines() if line.get_gid()] == [
        "distance 3"]


def test_help_names_the_command():
    from embedcheck.cli.app import build_parser
    text = build_parser().format_help()
    assert "forecast" in text
    assert Path(schema("forecast-report")["$id"]).name == "forecast-report.schema.json"


def test_surface_on_a_degree_three_chip_names_the_family_that_fits(capsys, tmp_path):
    # No surface-code qubit (4 partners) fits a heavy-hex chip (at most 3 couplers per
    # qubit): forecast and find name the built-in family made for such chips.
    import jsonschema

    from helpers import DEMO_CHIP
    samples = tmp_path / "s.sqlite"
    code, out, _ = run(capsys, "forecast", DEMO_CHIP, "--family", "surface", "--serial",
                       "--distances", "3", "--samples", samples, "--format", "json")
    data = json.loads(out)
    jsonschema.validate(data, schema("forecast-report"))
    assert code == 0 and data["fitting_family"] == "heavy-hex-chipfit"
    assert "--family heavy-hex-chipfit" in data["hint"]
    code, out, _ = run(capsys, "forecast", DEMO_CHIP, "--family", "surface", "--serial",
                       "--distances", "3", "--samples", samples)
    hints = [line for line in out.splitlines() if line.strip().startswith("hint:")]
    assert len(hints) == 1 and "heavy-hex-chipfit" in hints[0]
    patch = tmp_path / "surface.yaml"
    assert main(["code", "surface", "--distance", "3", "-o", str(patch)]) == 0
    capsys.readouterr()
    code, out, _ = run(capsys, "find", DEMO_CHIP, patch)
    assert code == 0 and "try 'embedcheck code heavy-hex-chipfit'" in " ".join(out.split())
    data = json.loads(run(capsys, "find", DEMO_CHIP, patch, "--format", "json")[1])
    jsonschema.validate(data, schema("find-report"))
    assert data["fitting_family"] == "heavy-hex-chipfit"
    # A chip with 4 couplers per qubit gets no hint: the surface code is not the problem.
    grid = tmp_path / "grid.yaml"
    assert main(["generate", "square-grid", "--rows", "5", "--columns", "5", "-o",
                 str(grid)]) == 0
    capsys.readouterr()
    data = json.loads(run(capsys, "find", grid, patch, "--format", "json")[1])
    assert "fitting_family" not in data and "hint" not in data
