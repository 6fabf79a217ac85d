"""Every file a command writes is announced on stderr ('wrote FILE: what'), one line each,
after the all-or-nothing commit; stdout stays clean JSON with --format json."""
import json

from embedcheck.cli import main
from helpers import DEMO_CHIP, DEMO_PATCH, ROOT


def _run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def _announced(err):
    return [line for line in err.splitlines() if line.startswith("wrote ")]


def test_find_and_audit_announce_each_file_on_stderr(capsys, tmp_path):
    page, drawing = tmp_path / "find.html", tmp_path / "best.svg"
    code, out, err = _run(capsys, "find", DEMO_CHIP, DEMO_PATCH, "--html", page, "--draw",
                          drawing, "--format", "json")
    assert code == 0 and json.loads(out)["command"] == "find"
    lines = _announced(err)
    assert len(lines) == 2 and page.exists() and drawing.exists()
    assert any(line.startswith(f"wrote {page}: ") for line in lines)
    assert any(line.startswith(f"wrote {drawing}: ") for line in lines)
    page = tmp_path / "audit.html"
    code, out, err = _run(capsys, "audit", DEMO_CHIP, DEMO_PATCH, "--pick", "1", "--html", page)
    assert code == 0 and _announced(err) == [f"wrote {page}: the HTML report"]
    assert f"wrote {page}" not in out


def test_check_announces_every_report_and_nothing_when_input_is_bad(capsys, tmp_path):
    project = ROOT / "samples" / "project.yaml"
    reports = {kind: tmp_path / f"r.{suffix}" for kind, suffix in
               (("json", "json"), ("markdown", "md"), ("junit", "xml"), ("sarif", "sarif"),
                ("html", "html"))}
    args = [a for kind, path in reports.items() for a in (f"--{kind}", path)]
    code, out, err = _run(capsys, "check", project, *args, "--cross-check-top", "0",
                          "--format", "json")
    json.loads(out)
    lines = _announced(err)
    assert len(lines) == 5
    for path in reports.values():
        assert path.exists() and sum(line.startswith(f"wrote {path}: ") for line in lines) == 1
    # A bad input: the commit never happens, so nothing is announced.
    missing = tmp_path / "nowhere" / "r.json"
    code, _, err = _run(capsys, "check", project, "--json", missing)
    assert code == 2 and _announced(err) == []
