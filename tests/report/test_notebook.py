"""The sample notebook, run headless by nbclient (the Jupyter project's own executor): every
result shows a short rich display, and the user's own inline plot after one of our drawings
still renders (our pictures never switch matplotlib's backend)."""
import pytest

from embedcheck import load_device, load_patch, run_find, view
from helpers import DEMO_CHIP, FIXED_PATCH, ROOT

NOTEBOOK = ROOT / "samples" / "tour.ipynb"


def test_the_sample_notebook_runs_and_shows_rich_output():
    nbformat = pytest.importorskip("nbformat")
    nbclient = pytest.importorskip("nbclient")
    notebook = nbformat.read(NOTEBOOK, as_version=4)
    nbclient.NotebookClient(notebook, timeout=300, kernel_name="python3",
                            resources={"metadata": {"path": str(NOTEBOOK.parent)}}).execute()
    code = [c for c in notebook.cells if c.cell_type == "code"]

    def data(cell):
        return {k: v for out in cell.outputs for k, v in out.get("data", {}).items()}
    chip, patch, found, placed, audit, drawing, own = (data(c) for c in code)
    assert "<svg" in chip["text/html"] and "demo-heavy-hex-87" in chip["text/html"]
    assert chip["text/plain"].startswith("Device('demo-heavy-hex-87': 87 qubits")
    assert "4 data, 2 flag, 1 ancilla" in patch["text/plain"]
    assert "every circuit swap-free" in found["text/html"] and "<svg" in found["text/html"]
    assert "a0=" in placed["text/plain"] and "<svg" in placed["image/svg+xml"]
    assert "every circuit swap-free" in audit["text/plain"]
    assert "image/png" in drawing
    assert "image/png" in own                 # the user's own plot, after ours, still shows


def test_reprs_are_one_line_and_short():
    chip, patch = load_device(DEMO_CHIP), load_patch(FIXED_PATCH)
    found = run_find([chip], patch)
    best = found.vetting.ranking.placements[0]
    for obj in (chip, patch, found, found.vetting, found.vetting.ranking, found.vetting.search,
                found.vetting.best_audit, best, view(chip, patch, best)):
        text = repr(obj)
        assert "\n" not in text and len(text) < 300, text
    assert repr(best) == f"Placement{tuple(best.physical)!r}"
