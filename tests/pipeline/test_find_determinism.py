"""Identical find runs give identical answers, budget-bound runs included (issue 16 item 3):
the work budget counts the matcher's own units, so a run stops at the same place whatever
the machine's load; placements an earlier stage found are kept; when the placements are
too many to list, find says it searched the best ones best first, with a proof or a gap.
The best-first search itself is held to ranking every map in tests/score and tests/place."""
import io
import json
import sys

import pytest

from embedcheck.cli import main
from embedcheck.cli.options import progress_printer
from embedcheck.io.patchfile import patch_from_family
from embedcheck.model.device import Device
from embedcheck.model.lattices import square_grid
from embedcheck.pipeline.vet import DEFAULT_BUDGET_WORK, vet_patch
from embedcheck.place.enumeration import Effort
from embedcheck.place.search import find_placements


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("grid")
    chip, patch = folder / "grid20.yaml", folder / "chipfit5.yaml"
    assert main(["generate", "square-grid", "--rows", "20", "--columns", "20",
                 "-o", str(chip)]) == 0
    assert main(["code", "heavy-hex-chipfit", "--distance", "5", "--rounds", "1",
                 "-o", str(patch)]) == 0
    return str(chip), str(patch)


def _find_json(files, capsys, *options):
    capsys.readouterr()
    code = main(["find", *files, "--format", "json", *options])
    out = json.loads(capsys.readouterr().out)
    out["search"].pop("elapsed_s")              # the one figure a clock gives
    return code, out


def test_find_twice_on_a_budget_bound_case_gives_the_same_report(files, capsys):
    # heavy-hex-chipfit d=5 on a 20x20 square grid: millions of placements, so the run
    # ends on its work budget (the case ended on seconds, with two verdicts).
    options = ("--limit", "1000000", "--budget-work", "3000000")
    first = _find_json(files, capsys, *options)
    second = _find_json(files, capsys, *options)
    assert first == second
    code, out = first
    assert code == 0 and out["search"]["stop_reason"] == "budget"
    assert not out["search"]["timed_out"] and out["search"]["work"] >= 3_000_000
    assert out["search"]["distinct_placements"] > 0 and out["all_swap_free"]
    best = out["best_first"]                    # too many to list: searched best first
    assert best is not None and best["top"] == 10 and best["work"] <= 3_000_000 + 10_000
    assert best["proven"] or best["gap_log"] is None or best["gap_log"] > 0


def test_the_text_report_says_which_budget_stopped_it_and_what_best_first_did(files, capsys):
    capsys.readouterr()
    main(["find", *files, "--limit", "1000000", "--budget-work", "1000000"])
    text = " ".join(capsys.readouterr().out.split())
    assert "the work budget (--budget-work) stopped the search" in text
    assert "searched best first" in text


def test_identical_calls_with_a_work_budget_stop_at_the_same_place_with_workers():
    device = Device.from_lattice(square_grid(20, 20), name="grid")
    patch = patch_from_family("heavy-hex-chipfit", distance=5, rounds=1)
    for processes in (1, 2):
        runs = [find_placements(device, patch, limit=None, max_work=600_000,
                                processes=processes) for _ in range(2)]
        assert runs[0].stop_reason == "budget" and not runs[0].timed_out
        assert runs[0].placements and runs[0].placements == runs[1].placements
        assert runs[0].work == runs[1].work >= 600_000


def test_a_placement_the_fits_alone_stage_found_is_kept_when_the_budget_is_spent():
    device = Device.from_lattice(square_grid(20, 20), name="grid")
    patch = patch_from_family("heavy-hex-chipfit", distance=5, rounds=1)
    alone = find_placements(device, patch, circuits=["round"], limit=1,
                            constraints=patch.constraints)
    assert len(alone.placements) == 1
    every = list(patch.circuits)
    # With no work left, the full search alone finds nothing (the second verdict)...
    starved = find_placements(device, patch, circuits=every, max_work=1,
                              constraints=patch.constraints)
    assert not starved.placements and starved.stop_reason == "budget"
    # ...so find, given the round's own work and one unit more (all the full search gets),
    # must keep what that stage found.
    vetting = vet_patch(device, patch, budget_work=alone.work + 1, budget_s=None)
    assert vetting.search.stop_reason == "budget"
    assert vetting.all_swap_free and alone.placements[0] in vetting.ranking.placements


def test_the_search_reports_its_effort_before_a_first_map():
    device = Device.from_lattice(square_grid(20, 20), name="grid")
    patch = patch_from_family("heavy-hex-chipfit", distance=5, rounds=1)
    maps: list[int] = []
    seen: list[tuple[int, int, int, int]] = []
    find_placements(device, patch, limit=None, max_work=300_000, progress=maps.append,
                    on_effort=lambda e: seen.append((len(maps), e.work, e.anchors,
                                                     e.anchors_total)))
    assert seen[0][0] == 0 and seen[0][1] > 0 and seen[0][2] >= 1   # effort, no map yet
    assert all(0 < s[3] <= 400 for s in seen) and seen[-1][1] >= 300_000
    assert all(b[1] <= a[1] and b[2] <= a[2] for b, a in zip(seen, seen[1:], strict=False))


def test_progress_on_a_terminal_prints_the_effort(monkeypatch):
    stream = io.StringIO()
    stream.isatty = lambda: True                         # type: ignore[method-assign]
    monkeypatch.setattr(sys, "stderr", stream)
    printer = progress_printer()
    effort = Effort()
    effort.work, effort.anchors, effort.anchors_total = 123_456, 3, 400
    printer.effort(effort)
    assert "searching: 0 maps so far, 1.23e+05 partial maps tried, anchors 3/400" in \
        stream.getvalue()


def test_the_command_line_default_is_the_pipeline_default():
    from embedcheck.cli import find as find_command
    assert find_command.DEFAULT_BUDGET_WORK == DEFAULT_BUDGET_WORK
