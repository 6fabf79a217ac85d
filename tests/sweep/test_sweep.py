"""Fleet sweeps: the same stored results on every executor, no row lost or doubled when a
worker dies or the run is interrupted, and one bad chip failing only its own units.

The chips are the invented fleet of `devices/fleet` (two snapshots of two chips); the
patch is the repetition code at distance 3, sampled and decoded (pymatching) on each
unit's two best placements: 4 ranking tasks and 8 sampling tasks.
"""
import json
import os
import signal

import jsonschema
import pytest

from embedcheck.cli import main
from embedcheck.engine import DaskExecutor, SerialExecutor
from embedcheck.io.sweepfile import load_sweep
from embedcheck.io.yamlfile import schema
from embedcheck.sweep import ResultStore, run_sweep, summarise
from helpers import FLEET_SWEEP_TASKS as TASKS
from helpers import stored_results


def test_serial_local_default_and_explicit_local_cluster_store_identical_results(sweep_file,
                                                                                tmp_path):
    from dask.distributed import LocalCluster
    sweep = load_sweep(sweep_file)
    with SerialExecutor() as run:
        serial = run_sweep(sweep, executor=run, database=str(tmp_path / "serial.sqlite"))
    with DaskExecutor(workers=2) as run:
        default = run_sweep(sweep, executor=run, database=str(tmp_path / "default.sqlite"))
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                      dashboard_address=None) as cluster, DaskExecutor(cluster=cluster) as run:
        explicit = run_sweep(sweep, executor=run, database=str(tmp_path / "explicit.sqlite"))
    assert serial.computed == default.computed == explicit.computed == TASKS
    reference = stored_results(tmp_path / "serial.sqlite")
    assert len(reference[0]) == 4 * 2 + 4 * 2          # fidelity rows + decoded rows
    assert stored_results(tmp_path / "default.sqlite") == reference
    assert stored_results(tmp_path / "explicit.sqlite") == reference


def test_a_worker_killed_mid_sweep_and_every_row_present_once(sweep_file, tmp_path):
    sweep = load_sweep(sweep_file)
    with SerialExecutor() as run:
        run_sweep(sweep, executor=run, database=str(tmp_path / "reference.sqlite"))
    killed = []
    with DaskExecutor(workers=2, retries=2) as run:
        pids = list(run.worker_pids.values())

        def kill_one(done, total):
            if not killed:                     # after the first stored task
                os.kill(pids[0], signal.SIGKILL)
                killed.append(pids[0])
        outcome = run_sweep(sweep, executor=run, database=str(tmp_path / "killed.sqlite"),
                            progress=kill_one)
        assert pids[0] not in run.worker_pids.values()      # the worker really died
    assert killed and outcome.ok and outcome.computed == TASKS
    assert stored_results(tmp_path / "killed.sqlite") == stored_results(
        tmp_path / "reference.sqlite")


def test_interrupted_sweep_resumes_without_computing_anything_twice(sweep_file, tmp_path):
    sweep = load_sweep(sweep_file)
    database = str(tmp_path / "resumed.sqlite")

    def interrupt(done, total):
        if done == 5:
            raise KeyboardInterrupt
    with SerialExecutor() as run, pytest.raises(KeyboardInterrupt):
        run_sweep(sweep, executor=run, database=database, progress=interrupt)
    assert len(ResultStore(database).done_tasks()) == 5      # every finished task kept
    with SerialExecutor() as run:
        resumed = run_sweep(sweep, executor=run, database=database)
    assert resumed.computed == TASKS - 5 and resumed.skipped == 5
    with SerialExecutor() as run:
        again = run_sweep(sweep, executor=run, database=database)
    assert again.computed == 0 and again.skipped == TASKS
    with SerialExecutor() as run:
        run_sweep(sweep, executor=run, database=str(tmp_path / "whole.sqlite"))
    assert stored_results(database) == stored_results(tmp_path / "whole.sqlite")


def test_a_malformed_chip_fails_its_own_units_and_the_rest_complete(sweep_file, tmp_path,
                                                                    capsys):
    bad = tmp_path / "broken.yaml"
    bad.write_text("embedcheck_chip: 1\nname: broken\nqubits: [0, 1]\ncouplers: [[0, 7]]\n")
    sweep_file.write_text(sweep_file.read_text().replace(
        "chips: [fleet-hex-a, fleet-hex-b]", "chips: [fleet-hex-a, broken.yaml]"))
    assert main(["sweep", str(sweep_file), "--serial", "--workers", "2"]) == 2
    assert "--serial runs no workers" in capsys.readouterr().err
    code = main(["sweep", str(sweep_file), "--serial", "--format", "json"])
    assert code == 1
    database = tmp_path / "sweep.sqlite"
    units = {u["chip"]: u for u in ResultStore(str(database)).units()}
    assert units["broken"]["status"] == "failed"
    assert "broken.yaml" in units["broken"]["error"] and "qubit 7" in units["broken"]["error"]
    assert units["fleet-hex-a"]["status"] == "done"
    summary = summarise(ResultStore(str(database)))
    assert summary["failed"] and summary["patches"][0]["snapshots"][0]["best"]["chip"] \
        == "fleet-hex-a"


def test_cli_report_files_and_bad_sweep_files(sweep_file, tmp_path, capsys):
    out = tmp_path / "report.md"
    picture = tmp_path / "best.svg"
    assert main(["sweep", str(sweep_file), "--serial", "--markdown", str(out),
                 "--picture", str(picture)]) == 0
    text, err = capsys.readouterr()
    assert [line for line in err.splitlines() if line.startswith("wrote ")] == [
        f"wrote {out}: the sweep report as Markdown", f"wrote {picture}: the sweep drawn"]
    assert "repetition d=3: ranked by decoded logical error" in text
    assert out.read_text().startswith("## embedcheck sweep: test")
    assert picture.read_text().lstrip().startswith("<?xml")
    # A rerun resumes: nothing computed again; the JSON follows its shipped schema.
    assert main(["sweep", str(sweep_file), "--serial"]) == 0
    assert f"0 task(s) computed, {TASKS} already stored" in capsys.readouterr().out
    assert main(["sweep", str(sweep_file), "--report-only", "--format", "json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    jsonschema.validate(payload, schema("sweep-report"))
    assert payload["run"] is None and payload["units"] == 4
    # Bad sweep files: one line, exit 2.
    sweep_file.write_text(sweep_file.read_text().replace("top: 2", "tops: 2"))
    assert main(["sweep", str(sweep_file), "--serial"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "unknown key 'tops'" in err
    # The database never lands on an input.
    sweep_file.write_text(sweep_file.read_text().replace("tops: 2", "top: 2"))
    assert main(["sweep", str(sweep_file), "--serial", "--database", str(sweep_file)]) == 2
    assert "will not write over an input file" in capsys.readouterr().err


def test_sampling_that_cannot_say_anything_is_skipped_and_the_report_says_why(
        sweep_file, tmp_path, capsys):
    # The fixed demo patch's observable is a parity of its detectors: no fault flips it
    # unseen, so sampled 'decoded' would be 0 errors on every placement. No sampling task
    # runs; each unit records why, and the report says why it ranks by the fidelity product.
    from helpers import FIXED_PATCH
    for name in (FIXED_PATCH.name, "flagged_weight4_round.qasm"):
        (tmp_path / name).write_text((FIXED_PATCH.parent / name).read_text())
    sweep_file.write_text(sweep_file.read_text().replace(
        "patches: [{family: repetition, distances: [3], rounds: 2}]",
        f"patches: [{FIXED_PATCH.name}]"))
    markdown = tmp_path / "report.md"
    assert main(["sweep", str(sweep_file), "--serial", "--markdown", str(markdown)]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert "ranked by fidelity product" in text and "why: decoded not sampled" in text
    assert "Why: decoded not sampled" in " ".join(markdown.read_text().split())
    store = ResultStore(str(tmp_path / "sweep.sqlite"))
    try:
        units = store.units()
        assert len(units) == 4 and all("parity of the detectors" in u["note"] for u in units)
        assert not [r for r in store.results() if r["figure"] == "decoded"]
        assert not [t for t in store.done_tasks() if t.startswith("sample:")]
    finally:
        store.close()
    assert main(["sweep", str(sweep_file), "--serial", "--format", "json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    jsonschema.validate(payload, schema("sweep-report"))
    assert payload["run"]["computed"] == 0 and payload["run"]["skipped"] == 4    # resumed
    (patch,) = payload["patches"]
    assert patch["figure"] == "fidelity_product"
    assert patch["ranking_note"].startswith("decoded not sampled") and "(4 unit(s))" in \
        patch["ranking_note"]
