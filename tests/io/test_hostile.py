"""The hostile-input corpus (tests/io/hostile/): every file is refused the same clean way.

Each case (a file, or a folder of chip snapshots) is run through `validate`, `find` and
`check` (a small project file pointing at it, with report paths): exit 2, exactly one
line on stderr naming what is wrong (the fragment in tests/io/hostile/EXPECTED), no
traceback, nothing on stdout, nothing written (no report, no picture, no temporary
file), every input byte-identical afterwards, and the secret-looking word planted in
some files never echoed. The big cases are written at test time.

All runs happen in two worker processes whose address space and CPU time are bounded
(`resource.setrlimit`), so a regression that eats memory or never ends fails here
instead of taking the machine with it. Nothing is asserted about time.

The four cases that take seconds rather than milliseconds to refuse (a chip file just
under 10 MB, a million operations, expressions nested thousands deep) go through `check`
only (the CI path: the project loader, the same chip and patch loaders `validate` and
`find` use, and four report paths that must stay unwritten); running them three times
would double the corpus's share of the suite's time for no new path.
"""
from __future__ import annotations

import json
import random
import shutil
from pathlib import Path

import pytest
from hostile_worker import run_jobs

CORPUS = Path(__file__).resolve().parent / "hostile"
CANARY = "hunter2-CANARY-7f3a"
KINDS = {"chip": "chip", "patch": "patch", "qasm": "patch", "stim": "patch",
         "project": "project"}
# Refused after seconds of honest reading, not milliseconds: through check only.
SLOW = {"chip/generated_near_limit.yaml", "qasm/broadcast_over_limit.qasm",
        "qasm/expression_long_chain.qasm", "qasm/expression_deep_parentheses.qasm"}


def expected() -> dict[str, str]:
    """relative path -> a fragment of the one-line error it must give."""
    out = {}
    for line in (CORPUS / "EXPECTED").read_text().splitlines():
        if line.strip() and not line.startswith("#"):
            path, fragment = line.split("\t", 1)
            out[path] = fragment
    return out


def cases() -> list[tuple[str, str]]:
    """(relative path, kind) of every case: committed entries and generated ones."""
    found = [(f"{folder}/{entry.name}", kind) for folder, kind in KINDS.items()
             for entry in sorted((CORPUS / folder).iterdir()) if not entry.name.startswith("_")]
    found += [(path, KINDS[path.split("/")[0]]) for path in GENERATED]
    return sorted(found)


# ---------------------------------------------------------------- big cases, written at test time

def _deep_flow(path: Path) -> None:
    path.write_text("embedcheck_chip: 1\nname: deep\nqubits: " + "[" * 20000 + "]" * 20000 + "\n")


def _deep_block(path: Path) -> None:
    lines = ["embedcheck_chip: 1", "name: deep", "description:"]
    lines += ["  " * (i + 1) + f"k{i}:" for i in range(3000)]
    path.write_text("\n".join(lines) + " 1\n")


def _over_size(path: Path) -> None:
    with path.open("w") as out:
        out.write("embedcheck_chip: 1\nname: big\nqubits: 3\ndescription: >\n")
        line = "  " + "x" * 78 + "\n"
        out.write(line * (20 * 1024 * 1024 // len(line)))


def _near_limit(path: Path) -> None:
    """A chip file just under 10 MB with plain calibration and one bad value at its end."""
    rng = random.Random(16)
    n, columns = 48000, 200
    pairs = [(q, q + 1) for q in range(n - 1) if (q + 1) % columns]
    pairs += [(q, q + columns) for q in range(0, n - columns, 2)]
    lines = ["embedcheck_chip: 1", "name: near-limit", f"qubits: {n}", "couplers:"]
    lines += [f"  - [{a}, {b}]" for a, b in pairs]
    lines += ["calibration:", "  couplers:"]
    lines += [f"    - {{coupler: [{a}, {b}], two_qubit_error: {rng.random() * 0.02:.5f}, "
              f"duration_ns: 300}}" for a, b in pairs]
    lines += ["  qubits:"]
    lines += [f"    - {{qubit: {q}, readout_error: {rng.random() * 0.05:.5f}, t1_us: "
              f"{50 + rng.random() * 100:.2f}, t2_us: {50 + rng.random() * 40:.2f}}}"
              for q in range(n - 1)]
    lines += [f"    - {{qubit: {n - 1}, readout_error: 2.5}}"]
    text = "\n".join(lines) + "\n"
    assert 9 * 1024 * 1024 < len(text) < 10 * 1024 * 1024
    path.write_text(text)


def _many_statements(path: Path) -> None:
    path.write_text('OPENQASM 2.0;\ninclude "qelib1.inc";\nqreg q[1];\n' + "h q[0];\n" * 1_100_000)


def _many_targets(path: Path) -> None:
    path.write_text("H" + " 0" * 1_100_000 + "\n")


GENERATED = {"chip/generated_deep_flow.yaml": _deep_flow,
             "chip/generated_deep_block.yaml": _deep_block,
             "chip/generated_over_size.yaml": _over_size,
             "chip/generated_near_limit.yaml": _near_limit,
             "qasm/generated_many_statements.qasm": _many_statements,
             "stim/generated_many_targets.stim": _many_targets}


# ---------------------------------------------------------------- running everything once

COMMANDS = ("validate", "find", "check")


def runs_of(path: str) -> tuple[str, ...]:
    """The commands a case goes through."""
    return ("check",) if path in SLOW else COMMANDS


def _jobs(root: Path) -> list[dict]:
    good_chip = root / "_support" / "good_chip.yaml"
    good_patch = root / "_support" / "good_patch.yaml"
    jobs = []
    projects = root / "_projects"
    projects.mkdir()
    for path, kind in cases():
        case = root / path
        name = path.replace("/", "__")
        if "validate" in runs_of(path):
            jobs.append({"id": f"{path}|validate", "argv": ["validate", str(case)]})
        if kind == "project":
            jobs.append({"id": f"{path}|find", "argv": ["find", str(case), str(good_patch)]})
            jobs.append({"id": f"{path}|check", "argv": ["check", str(case)]})
            continue
        chip, patch = (case, good_patch) if kind == "chip" else (good_chip, case)
        if "find" in runs_of(path):
            jobs.append({"id": f"{path}|find", "argv": ["find", str(chip), str(patch),
                                                       "--draw",
                                                       str(root / "_out" / f"{name}.png")]})
        project = projects / f"{name}.yaml"
        project.write_text(
            "embedcheck_project: 1\nname: hostile\n"
            f"chips: [{json.dumps(str(chip))}]\npatches: [{json.dumps(str(patch))}]\n"
            f"reports: {{json: ../_out/{name}.json, markdown: ../_out/{name}.md, "
            f"junit: ../_out/{name}.xml, sarif: ../_out/{name}.sarif}}\n"
            "cross_check: {top: 0}\n")
        jobs.append({"id": f"{path}|check", "argv": ["check", str(project)]})
    return jobs


def _snapshot(root: Path) -> dict[str, bytes]:
    return {str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*"))
            if p.is_file()}


# One pytest worker runs the whole corpus (it starts two capped workers of its own): with
# `-n 2` and pytest-xdist's 'loadgroup' (pyproject's addopts) the module's tests stay
# together instead of each pytest worker running the corpus once.
pytestmark = pytest.mark.xdist_group("hostile-corpus")


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Every case through every command, once: (results by id, files before, files after)."""
    root = tmp_path_factory.mktemp("hostile") / "corpus"
    shutil.copytree(CORPUS, root, symlinks=True)
    for path, writer in GENERATED.items():
        writer(root / path)
    jobs = _jobs(root)
    before = _snapshot(root)
    # The slow cases first, so that the two workers share them.
    order = sorted(jobs, key=lambda job: job["id"].split("|")[0] not in SLOW)
    results, workers = run_jobs(order, root.parent)
    return {"results": results, "before": before, "after": _snapshot(root), "root": root,
            "workers": workers, "jobs": jobs}


def test_the_corpus_has_at_least_60_cases():
    assert len(cases()) >= 60
    assert set(expected()) == {path for path, _ in cases()}      # every case says what it expects


@pytest.mark.parametrize("path,kind,command", [(path, kind, command) for path, kind in cases()
                                                for command in runs_of(path)])
def test_refused_in_one_line_with_exit_2(runs, path, kind, command):
    result = runs["results"].get(f"{path}|{command}")
    stopped = [(w["returncode"], w["stderr"][-2000:]) for w in runs["workers"]]
    assert result is not None, ("a worker stopped before this run (killed by its memory or "
                                f"time limit?): {stopped}")
    err = result["err"]
    assert result["code"] == 2, err
    assert result["out"] == "", result["out"]
    assert err.count("\n") == 1 and err.startswith("embedcheck: error: "), err
    assert "Traceback" not in err and "internal error" not in err
    assert CANARY not in err + result["out"]                    # never the text of a file
    # The reason is the file's own, except for a project file given to validate or find,
    # which take chip and patch files (they say so).
    if kind == "project" and command != "check":
        return
    assert expected()[path] in err, err


def test_nothing_written_and_every_input_unchanged(runs):
    before, after = runs["before"], runs["after"]
    assert sorted(after) == sorted(before)        # no report, picture or temporary file
    changed = [path for path in before if before[path] != after[path]]
    assert changed == []
