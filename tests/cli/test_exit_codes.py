"""Exit codes for every command and every patch source (issue 16, item 5): input problems
2, findings 0 (1 only where a command is asked to be strict or a CI rule fails), bugs of
ours 3; always one line on stderr, never a traceback."""
import shutil

import pytest
import stim

import embedcheck.cli.app as app
from embedcheck.cli import main
from helpers import DEMO_CHIP, DEMO_PATCH, ROOT

ROUND = ROOT / "samples" / "flagged_weight4_round.qasm"


@pytest.fixture()
def sources(tmp_path):
    """A good and a broken patch of each source kind: YAML (with an OpenQASM file),
    OpenQASM alone, stim (one of stim's own generated circuits)."""
    shutil.copy(DEMO_PATCH, tmp_path / "patch.yaml")
    shutil.copy(ROUND, tmp_path)
    shutil.copy(ROUND, tmp_path / "round.qasm")
    circuit = stim.Circuit.generated("repetition_code:memory", distance=3, rounds=2)
    (tmp_path / "rep.stim").write_text(str(circuit.without_noise()))
    (tmp_path / "bad.yaml").write_text((tmp_path / "patch.yaml").read_text()
                                       .replace("embedcheck_patch: 1", "embedcheck_patch: 9"))
    (tmp_path / "bad.qasm").write_text("OPENQASM 2.0;\nqreg q[2];\ncx q[0] q[1];\n")
    (tmp_path / "bad.stim").write_text("H 0\nCX 0 1\nM 0 1\nNOT_A_GATE 3\n")
    return tmp_path


def _commands(chip, patch, tmp):
    return {"validate": ["validate", patch], "show": ["show", patch],
            "find": ["find", chip, patch], "audit": ["audit", chip, patch, "--pick", "1"],
            "draw": ["draw", chip, patch, "-o", str(tmp / "picture.png")]}


def _one_line(err):
    assert err.count("\n") == 1 and "Traceback" not in err, err


@pytest.mark.parametrize("good,bad", [("patch.yaml", "bad.yaml"), ("round.qasm", "bad.qasm"),
                                      ("rep.stim", "bad.stim")])
def test_every_command_and_patch_source_exits_0_or_2(sources, capsys, good, bad):
    for name, argv in _commands(str(DEMO_CHIP), str(sources / good), sources).items():
        assert main([str(a) for a in argv]) == 0, (name, good)
        (sources / "picture.png").unlink(missing_ok=True)
        capsys.readouterr()
    for name, argv in _commands(str(DEMO_CHIP), str(sources / bad), sources).items():
        assert main([str(a) for a in argv]) == 2, (name, bad)
        err = capsys.readouterr().err
        _one_line(err)
        assert bad in err, (name, err)
        assert not (sources / "picture.png").exists()


@pytest.mark.parametrize("good,bad,verdict", [("patch.yaml", "bad.yaml", 1),
                                              ("round.qasm", "bad.qasm", 0),
                                              ("rep.stim", "bad.stim", 0)])
def test_check_on_every_patch_source_exits_0_1_or_2(sources, capsys, good, bad, verdict):
    for patch, code in ((good, verdict), (bad, 2)):
        project = sources / f"project_{patch}.yaml"
        project.write_text(f"embedcheck_project: 1\nname: codes\nchips: [{DEMO_CHIP}]\n"
                           f"patches: [{patch}]\nrules:\n  max_off_coupler_gates: 0\n"
                           f"reports: {{json: report_{patch}.json}}\n")
        assert main(["check", str(project), "--cross-check-top", "0"]) == code, patch
        err = capsys.readouterr().err
        if code == 2:
            _one_line(err)
            assert bad in err and not (sources / f"report_{patch}.json").exists()
        else:
            assert (sources / f"report_{patch}.json").exists()


@pytest.mark.parametrize("option", [["--router-estimate"], ["--write-qasm", "out"]])
def test_stim_patch_with_openqasm_only_audit_options_is_an_input_problem(sources, capsys,
                                                                           option):
    # Before: exit 3 ("internal error").
    (sources / "out").mkdir()
    argv = ["audit", str(DEMO_CHIP), str(sources / "rep.stim"), "--pick", "1", *option]
    argv = [str(sources / a) if a == "out" else a for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    _one_line(err)
    assert "needs OpenQASM circuits" in err and "stim file" in err
    assert not any((sources / "out").iterdir())


def test_repair_findings_exit_0_or_1_under_strict(sources, capsys):
    # Before: a repair that found no rewrite exited 1 (and earlier 2) with no way to ask.
    far_apart = "d0=0,d1=2,d2=4,d3=6,f0=8,f1=10,a0=12"      # no coupler among them
    out = sources / "fixed.yaml"
    argv = ["repair", str(DEMO_CHIP), str(sources / "patch.yaml"), "--placement", far_apart,
            "-o", str(out)]
    assert main(argv) == 0
    assert "no rewrite of 'prep' fits this placement" in capsys.readouterr().out
    assert main(argv + ["--strict"]) == 1
    assert not out.exists() and not (sources / "fixed_prep.qasm").exists()


def test_repair_finding_every_rewrite_lowers_the_fault_distance(sources, capsys, monkeypatch):
    # The finding itself needs a patch whose every rewrite loses distance; the exit code
    # depends only on it being a finding, so the rewrite step reports one here.
    import embedcheck.repair.rewrite as rewrite
    from embedcheck.repair.result import Repair
    finding = ("every rewrite of 'prep' lowers the circuit-level fault distance (cat: 3 -> 2); "
               "keep the original")
    monkeypatch.setattr(rewrite, "repair_preparation",
                        lambda *a, **k: Repair(circuit="prep", method="", repaired=False,
                                               finding=finding))
    argv = ["repair", str(DEMO_CHIP), str(sources / "patch.yaml"), "-o",
            str(sources / "fixed.yaml"), "--format", "json"]
    assert main(argv) == 0
    assert "lowers the circuit-level fault distance" in capsys.readouterr().out
    assert main(argv + ["--strict"]) == 1
    assert not (sources / "fixed.yaml").exists()


@pytest.mark.parametrize("command", [c.__name__.rsplit(".", 1)[1] for c in app.COMMANDS])
def test_a_bug_of_ours_in_any_command_exits_3_with_one_line(command, capsys, monkeypatch):
    module = next(c for c in app.COMMANDS if c.__name__.endswith("." + command))

    def broken(args):
        raise ZeroDivisionError("a planted bug\nover two lines")
    monkeypatch.setattr(module, "run", broken)
    argv = {"find": ["find", "c", "p"], "draw": ["draw", "c", "p", "-o", "x.png"],
            "audit": ["audit", "c", "p", "--pick", "1"], "validate": ["validate", "x"],
            "check": ["check", "p"], "repair": ["repair", "c", "p", "-o", "o"],
            "code": ["code", "surface"], "show": ["show", "x"],
            "generate": ["generate", "line", "--size", "3"], "sweep": ["sweep", "s"],
            "forecast": ["forecast", "c", "--family", "surface"]}[command]
    assert main(argv) == 3
    err = capsys.readouterr().err
    _one_line(err)
    assert "internal error: ZeroDivisionError: a planted bug over two lines" in err


def test_a_bug_deep_in_the_search_exits_3(capsys, monkeypatch):
    import embedcheck.pipeline.vet as vet

    def broken(*args, **kwargs):
        raise KeyError("planted")
    monkeypatch.setattr(vet, "find_placements", broken)
    assert main(["find", str(DEMO_CHIP), str(DEMO_PATCH)]) == 3
    _one_line(capsys.readouterr().err)
