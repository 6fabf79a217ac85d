"""Fuzzing: malformed chip, patch, OpenQASM, stim and project files never crash embedcheck.

`tests/io/malformed.py` breaks valid files in random (seeded) ways; each mutant goes
through `validate`, `show`, `find`, `audit`, `draw`, `repair` (YAML patches) and `check`
in worker processes with bounded memory and CPU time. Whatever the damage, the exit
code is an answer (0, or 1 from `check` when a rule fails) or bad input (2) with
exactly one line on stderr, never a bug of ours (3) or a traceback, and a refused
command writes nothing (no report, picture or patch file).

Each run fuzzes 60 mutants seeded by the date, so the files seen across days outnumber
any one run; `EMBEDCHECK_TEST_SEED=N` replays a day (a failure names it). For a bigger
run: `python tests/io/malformed.py --count 2000 --seed 1`.
"""
from __future__ import annotations

import collections
import datetime
import os
import tempfile
from pathlib import Path

from hostile_worker import run_jobs
from malformed import mutants

from helpers import ROOT

DAY_SEED = int(os.environ.get("EMBEDCHECK_TEST_SEED", datetime.date.today().toordinal()))
ALLOWED = {"validate": {0, 2}, "find": {0, 2}, "check": {0, 1, 2}, "show": {0, 2},
           "audit": {0, 2}, "draw": {0, 2}, "repair": {0, 2}}
COMMANDS = tuple(ALLOWED)
PROJECT = ("embedcheck_project: 1\nname: fuzz\nchips: [good_chip.yaml]\n"
           "patches: [good_patch.yaml]\n"
           "rules: {max_off_coupler_gates: 0, min_placements: 1}\ncross_check: {top: 0}\n"
           "search: {limit: 100, budget_s: 10}\n")


def seeds() -> dict[str, tuple[str, str, str]]:
    """Valid files to break: {name: (kind, suffix, text)}."""
    import stim
    experiment = stim.Circuit.generated("repetition_code:memory", distance=3, rounds=3,
                                        after_clifford_depolarization=0.01)
    read = lambda path: (ROOT / path).read_text()       # noqa: E731
    return {
        "chip_line": ("chip", ".yaml", read("tests/data/line5_zero_errors.yaml")),
        "chip_demo": ("chip", ".yaml", read("devices/demo_heavy_hex.yaml")),
        "patch_rep": ("patch", ".yaml", read("tests/data/rep2_one_round.yaml")),
        "patch_flagged": ("patch", ".yaml", read("samples/flagged_weight4_coupler_prep.yaml")),
        "qasm_round": ("patch", ".qasm", read("samples/flagged_weight4_round.qasm")),
        "stim_rep": ("patch", ".stim", str(experiment) + "\n"),
        "project": ("project", ".yaml", PROJECT),
    }


def fuzz(count: int, seed: int, commands=COMMANDS, folder: str | None = None) -> list[dict]:
    """Write `count` mutants, run them, and return one record per run."""
    work = Path(folder or tempfile.mkdtemp(prefix="embedcheck-fuzz-"))
    work.mkdir(parents=True, exist_ok=True)
    (work / "out").mkdir(exist_ok=True)
    (work / "good_chip.yaml").write_text((ROOT / "tests/data/line5_zero_errors.yaml").read_text())
    (work / "good_patch.yaml").write_text((ROOT / "tests/data/rep2_one_round.yaml").read_text())
    (work / "flagged_weight4_round.qasm").write_text(
        (ROOT / "samples/flagged_weight4_round.qasm").read_text())
    jobs, reports = [], {}
    for m in mutants(seeds(), count, seed):
        path = work / f"{m.name}{m.suffix}"
        path.write_bytes(m.data)
        base = {"mutant": m.name}
        if "validate" in commands and m.kind != "project":
            jobs.append({**base, "id": f"{m.name}|validate", "argv": ["validate", str(path)]})
        if "find" in commands and m.kind != "project":
            chip, patch = (path, work / "good_patch.yaml") if m.kind == "chip" else \
                (work / "good_chip.yaml", path)
            jobs.append({**base, "id": f"{m.name}|find",
                         "argv": ["find", str(chip), str(patch), "--budget-s", "10"]})
        chip, patch = (path, work / "good_patch.yaml") if m.kind == "chip" else \
            (work / "good_chip.yaml", path)
        if "show" in commands and m.kind != "project":
            jobs.append({**base, "id": f"{m.name}|show", "argv": ["show", str(path)]})
        if "audit" in commands and m.kind != "project":
            jobs.append({**base, "id": f"{m.name}|audit",
                         "argv": ["audit", str(chip), str(patch), "--pick", "1"]})
        if "draw" in commands and m.kind != "project":
            picture = work / "out" / f"{m.name}.png"
            jobs.append({**base, "id": f"{m.name}|draw",
                         "argv": ["draw", str(chip), str(patch), "-o", str(picture)]})
            reports[f"{m.name}|draw"] = picture
        if "repair" in commands and m.kind == "patch" and m.suffix == ".yaml":
            fixed = work / "out" / f"{m.name}.fixed.yaml"
            jobs.append({**base, "id": f"{m.name}|repair",
                         "argv": ["repair", str(work / "good_chip.yaml"), str(path), "-o",
                                  str(fixed)]})
            reports[f"{m.name}|repair"] = fixed
        if "check" in commands:
            report = work / "out" / f"{m.name}.json"
            project = path
            if m.kind != "project":
                project = work / f"{m.name}.project.yaml"
                key = "chips" if m.kind == "chip" else "patches"
                project.write_text(PROJECT.replace(f"{key}: [good_{m.kind}.yaml]",
                                                   f"{key}: [{path.name}]"))
            jobs.append({**base, "id": f"{m.name}|check",
                         "argv": ["check", str(project), "--json", str(report)]})
            reports[f"{m.name}|check"] = report
    done, _ = run_jobs(jobs, work)
    records = []
    for job in jobs:
        result = done.get(job["id"], {"code": "did not run (worker stopped)", "err": "",
                                      "out": ""})
        command = job["argv"][0]
        record = {"id": job["id"], "command": command, "code": result["code"],
                  "err": result["err"], "problem": None}
        err = result["err"]
        if result["code"] not in ALLOWED[command]:
            record["problem"] = f"exit {result['code']}"
        elif result["code"] == 2 and (err.count("\n") != 1
                                      or not err.startswith("embedcheck: error: ")):
            record["problem"] = "not one line"
        elif "Traceback" in err or "internal error" in err:
            record["problem"] = "traceback"
        elif result["code"] == 2 and job["id"] in reports and reports[job["id"]].exists():
            record["problem"] = "wrote a file although refused"
        records.append(record)
    return records


def summary(records: list[dict]) -> str:
    """Exit codes per command, and every problem found."""
    lines = []
    by = collections.Counter((r["command"], r["code"]) for r in records)
    for (command, code), n in sorted(by.items(), key=str):
        lines.append(f"{command:8} exit {code}: {n}")
    problems = [r for r in records if r["problem"]]
    lines.append(f"{len(records)} runs, {len(problems)} problem(s)")
    lines += [f"  {r['id']}: {r['problem']}: {r['err'].strip()[:300]}" for r in problems]
    return "\n".join(lines)


def test_malformed_files_exit_0_1_or_2_never_3(tmp_path):
    records = fuzz(60, seed=DAY_SEED, folder=str(tmp_path))
    assert len(records) >= 300 and {r["command"] for r in records} == set(COMMANDS)
    problems = [r for r in records if r["problem"]]
    assert not problems, f"EMBEDCHECK_TEST_SEED={DAY_SEED} replays this:\n{summary(records)}"
    codes = collections.Counter(r["code"] for r in records)
    assert codes[2] > len(records) // 3          # the mutations do break most files
