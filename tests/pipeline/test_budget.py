"""Budgets bound the whole run (issue 16, item 6): the search, the ranking after it, the
logical figures and the ranking over snapshots; placements are stored as one integer
array, not an object each. No timed assertions: a budget-bound run must say it is
incomplete, and what was left out is counted (bench/budget.py measures the time)."""
import json
import time

import jsonschema
import numpy as np

from embedcheck import Device, run_find
from embedcheck.cli import main
from embedcheck.io.patchfile import patch_from_family
from embedcheck.io.yamlfile import schema
from embedcheck.model.lattices import square_grid
from embedcheck.model.placement import Placement, PlacementRows
from embedcheck.report.data import find_dict
from embedcheck.report.text import render_find
from embedcheck.score.cost import rank_across_snapshots, rank_placements
from embedcheck.score.logical import rank_by_logical
from helpers import random_calibration


def test_budget_bound_find_on_a_big_grid_says_incomplete_and_stores_ints(tmp_path, capsys):
    # Before: --budget-s 5 --limit 1e12 on a 45 x 45 grid ran 54 s and took 5.9 GB.
    assert main(["generate", "square-grid", "--rows", "45", "--columns", "45",
                 "-o", str(tmp_path / "grid.yaml")]) == 0
    assert main(["code", "repetition", "--distance", "5", "--rounds", "1",
                 "-o", str(tmp_path / "rep.yaml")]) == 0
    capsys.readouterr()
    find = ["find", str(tmp_path / "grid.yaml"), str(tmp_path / "rep.yaml"),
            "--budget-s", "1", "--limit", str(10**12)]
    assert main(find) == 0
    text = " ".join(capsys.readouterr().out.split())
    # On a loaded machine the budget may run out in an earlier stage (a circuit alone):
    # any stage cut short says so.
    assert "INCOMPLETE" in text
    assert main(find + ["--format", "json"]) == 0
    report = json.loads(capsys.readouterr().out)
    jsonschema.Draft202012Validator(schema("find-report")).validate(report)
    assert report["complete"] is False
    # The same run through the API: every stored placement is one int32 row.
    device = Device.from_lattice(square_grid(45, 45), name="grid")
    patch = patch_from_family("repetition", distance=5, rounds=1)
    found = run_find([device], patch, limit=10**12, budget_s=1.0)
    rows = found.vetting.ranking.placements
    assert isinstance(rows, PlacementRows) and not found.vetting.complete
    assert rows.array.dtype == np.int32
    assert rows.array.nbytes == 4 * patch.num_qubits * len(rows)
    assert isinstance(found.vetting.search.placements, PlacementRows)


def test_placement_rows_read_as_placements():
    rows = PlacementRows([Placement((3, 1, 2)), Placement((0, 1, 2))])
    assert list(rows) == [Placement((3, 1, 2)), Placement((0, 1, 2))]
    assert rows[1:] == PlacementRows([[0, 1, 2]]) and Placement((0, 1, 2)) in rows
    assert Placement((9, 9, 9)) not in rows and rows.index(Placement((0, 1, 2))) == 1
    big = PlacementRows([[2**40, 1]])
    assert big.array.dtype == np.int64 and big[0] == Placement((2**40, 1))


def _ranked_patch():
    device = random_calibration(Device.from_lattice(square_grid(5, 5), name="g5"), seed=3)
    patch = patch_from_family("repetition", distance=3, rounds=1)
    from embedcheck import find_placements
    ranking = rank_placements(device, patch, find_placements(device, patch).placements)
    return device, patch, ranking


def test_a_passed_deadline_leaves_the_logical_ranking_to_the_listed_ones():
    device, patch, ranking = _ranked_patch()
    assert len(ranking.placements) > 20
    full = rank_by_logical(device, patch, ranking.placements, top=5)
    cut = rank_by_logical(device, patch, ranking.placements, top=5,
                          deadline=time.monotonic() - 1)
    assert full.unscored == 0 and len(full.placements) == len(ranking.placements)
    assert len(cut.placements) == 5 and cut.unscored == len(ranking.placements) - 5
    assert set(cut.placements) == set(ranking.placements[:5])   # best by the cost model


def test_a_passed_deadline_leaves_the_snapshot_ranking_to_the_first_chunk():
    device, patch, ranking = _ranked_patch()
    other = random_calibration(device, seed=4)
    cut = rank_across_snapshots([other, device], patch, ranking.placements, chunk=8,
                                deadline=time.monotonic() - 1)
    whole = rank_across_snapshots([other, device], patch, ranking.placements, chunk=8)
    assert len(cut.placements) == 8 and cut.unscored == len(ranking.placements) - 8
    assert whole.unscored == 0 and len(whole.placements) == len(ranking.placements)
    assert set(cut.placements) == set(ranking.placements[:8])
    # The report says the ranking over snapshots is incomplete, and by how much.
    found = run_find([other, device], patch, budget_s=None)
    d = find_dict(found)
    d["snapshots"]["unscored_placements"], d["snapshots"]["placements"] = 7, 8
    assert "INCOMPLETE: the time budget ran out after the best 8 by the newest snapshot; " \
           "7 more left out" in " ".join(render_find(d).split())


def test_check_cross_checks_only_while_the_budget_lasts(tmp_path, capsys, monkeypatch):
    import types

    import embedcheck.pipeline.checks as checks
    from helpers import DEMO_CHIP, FIXED_PATCH
    project = tmp_path / "project.yaml"
    project.write_text(f"embedcheck_project: 1\nname: budget\nchips: [{DEMO_CHIP}]\n"
                       f"patches: [{FIXED_PATCH}]\nrules:\n  min_placements: 1\n"
                       "cross_check: {top: 3}\n")
    out = tmp_path / "r.json"
    assert main(["check", str(project), "--json", str(out)]) == 0
    whole = json.loads(out.read_text())["results"][0]["cross_checked"]
    assert whole == {"placements": 3, "cut_by_budget": False}
    ticks = iter(range(0, 10**9, 1000))         # every reading of the clock: 1000 s later
    monkeypatch.setattr(checks, "time", types.SimpleNamespace(monotonic=lambda: next(ticks)))
    out.unlink()
    assert main(["check", str(project), "--json", str(out)]) == 0
    report = json.loads(out.read_text())
    jsonschema.Draft202012Validator(schema("check-report")).validate(report)
    assert report["results"][0]["cross_checked"] == {"placements": 0, "cut_by_budget": True}
    assert "cross-check with qiskit INCOMPLETE" in capsys.readouterr().out


def test_check_default_limit_is_finds(tmp_path):
    # Before: check kept 10,000 placements unless told, find 100,000, and nothing said so.
    from embedcheck.cli.app import build_parser
    from embedcheck.io.limits import SEARCH_LIMIT
    from embedcheck.io.projectfile import load_project
    from helpers import DEMO_CHIP, FIXED_PATCH
    project = tmp_path / "project.yaml"
    project.write_text(f"embedcheck_project: 1\nname: defaults\nchips: [{DEMO_CHIP}]\n"
                       f"patches: [{FIXED_PATCH}]\nrules:\n  min_placements: 1\n")
    find = build_parser().parse_args(["find", str(DEMO_CHIP), str(FIXED_PATCH)])
    assert load_project(project).limit == find.limit == SEARCH_LIMIT == 100_000
