"""Bounds on command-line options that size the work (issue 16's hunt over options).

Each option that sets how much a command does (sizes, counts, shots, processes, seeds,
qubit lists) is refused past its bound with exit 2 and one line naming the option and the
limit, before any work: `--region 5-99999999999` raised MemoryError, `--monte-carlo 10^14`
crashed stim, `code surface --distance 101 --rounds 1000` would have written 788 MB, a
negative transpiler seed exited 3. The limits themselves are in `embedcheck.io.limits`.
"""
from __future__ import annotations

import pytest

from embedcheck.cli import main
from helpers import ROOT


def test_size_options_name_the_option_and_the_limit(capsys):
    assert main(["generate", "square-grid", "--rows", "100000", "--columns", "3"]) == 2
    assert "--rows 100000 --columns 3: 300,000 qubits, above the limit of 100,000" in \
        capsys.readouterr().err
    assert main(["generate", "line", "--size", "100000"]) == 0
    capsys.readouterr()
    for option, value, limit in (("--distance", "1001", "101"), ("--rounds", "5000", "1000")):
        assert main(["code", "surface", option, value]) == 2
        err = capsys.readouterr().err
        assert f"argument {option}: {value} is above the limit of {limit}" in err


def test_code_help_explains_distance_and_rounds(capsys):
    with pytest.raises(SystemExit):
        main(["code", "--help"])
    out = capsys.readouterr().out
    assert "--distance DISTANCE   code distance" in out and "at most 101" in out
    assert "--rounds ROUNDS       check rounds" in out


@pytest.mark.parametrize("text,message", [
    ("[" * 100000 + "]" * 100000, "lists nested too deeply"),
    ('{"command": "check", "n": ' + "9" * 5000 + "}", "a number too long"),
    ('{"command": "check", ', "baseline report is not JSON: Expecting property name"),
], ids=["deep", "long-number", "truncated"])
def test_baselines_that_cannot_be_read(tmp_path, capsys, text, message):
    baseline = tmp_path / "old.json"
    baseline.write_text(text)
    project = tmp_path / "project.yaml"
    project.write_text("embedcheck_project: 1\nname: p\nchips: [chip.yaml]\npatches: [p.yaml]\n")
    (tmp_path / "chip.yaml").write_text((ROOT / "tests/data/line5_zero_errors.yaml").read_text())
    (tmp_path / "p.yaml").write_text((ROOT / "tests/data/rep2_one_round.yaml").read_text())
    assert main(["check", str(project), "--baseline", str(baseline)]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1


@pytest.mark.parametrize("argv,message", [
    (["--region", "5-99999999999"],
     "--region: '5-99999999999': qubit numbers run from 0 to 999999"),
    (["--exclude-qubits", "0-999999,0-999999,3-8"],
     "--exclude-qubits: chip 'line5' has no qubit 5"),
    (["--monte-carlo", "99999999999999"], "argument --monte-carlo: 99999999999999 is above the "
                                          "limit of 10000000"),
    (["--processes", "1000000"], "argument --processes: 1000000 is above the limit of"),
])
def test_find_options_that_would_allocate_without_end(capsys, argv, message):
    # Issue 16's hunt over options: --region 5-99999999999 raised MemoryError (exit 3),
    # --exclude-qubits 1-1000000000 was killed for memory, --monte-carlo 10^14 crashed stim.
    chip = ROOT / "tests/data/line5_zero_errors.yaml"
    patch = ROOT / "tests/data/rep2_one_round.yaml"
    assert main(["find", str(chip), str(patch), *argv]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1


def test_code_refuses_a_patch_file_past_the_file_limit_before_writing_it(capsys, tmp_path):
    out = tmp_path / "big.yaml"
    assert main(["code", "surface", "--distance", "101", "--rounds", "1000", "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert ("code surface --distance 101 --rounds 1000: the patch file would be about" in err
            and "above the input file limit of 10 MB" in err and not out.exists())


def test_transpiler_seeds_are_non_negative(capsys, tmp_path):
    chip = ROOT / "tests/data/line5_zero_errors.yaml"
    patch = ROOT / "tests/data/rep2_one_round.yaml"
    assert main(["audit", str(chip), str(patch), "--pick", "1", "--seed", "-5"]) == 2
    assert "argument --seed: '-5' must be a whole number from 0" in capsys.readouterr().err
    (tmp_path / "chip.yaml").write_text(chip.read_text())
    (tmp_path / "p.yaml").write_text(patch.read_text())
    project = tmp_path / "project.yaml"
    project.write_text("embedcheck_project: 1\nname: s\nchips: [chip.yaml]\npatches: [p.yaml]\n"
                       "cross_check: {top: 1, seed: -3}\n")
    assert main(["check", str(project)]) == 2
    assert "project.yaml:5: cross_check.seed: -3 must be >= 0" in capsys.readouterr().err


@pytest.mark.parametrize("argv,message", [
    (["sweep", "samples/sweep.yaml", "--workers", "1000000"],
     "argument --workers: 1000000 is above the limit of"),
    (["check", "samples/project.yaml", "--cross-check-top", "-4"],
     "argument --cross-check-top: '-4' must be 0 or more"),
])
def test_counts_of_workers_and_cross_checks_are_bounded(capsys, argv, message):
    # --workers 10^6 would start a million processes; --cross-check-top -4 sliced [:-4].
    assert main([argv[0], str(ROOT / argv[1]), *argv[2:]]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1


@pytest.mark.parametrize("argv,message", [
    (["--distances", "3-2000000"], "--distances: 2000000 is above the limit of 101"),
    (["--distances", "3,x"], "--distances: 'x' is not a distance or range"),
    (["--max-distance", "999"], "argument --max-distance: 999 is above the limit of 101"),
    (["--rounds", "5000"], "argument --rounds: 5000 is above the limit of 1000"),
    (["--shots", "99999999999999"], "argument --shots: 99999999999999 is above the limit of"),
    (["--max-errors", "99999999999999"], "argument --max-errors: 99999999999999 is above the"),
    (["--seed", "-1"], "argument --seed: '-1' must be a whole number from 0 to 2^63 - 1"),
    (["--workers", "1000000"], "argument --workers: 1000000 is above the limit of"),
    (["--scales", ",".join(["1"] * 65)], "--scales: more than 64 scales"),
])
def test_forecast_options_are_bounded_before_any_work(capsys, tmp_path, argv, message):
    # The forecast samples every distance at every scale: each of its sizes is bounded like
    # find's and code's, and refused before a cluster starts or a samples file is made.
    chip = ROOT / "devices/demo_grid.yaml"
    assert main(["forecast", str(chip), "--family", "surface", "--serial",
                 "--samples", str(tmp_path / "s.sqlite"), *argv]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1
    assert not (tmp_path / "s.sqlite").exists()
