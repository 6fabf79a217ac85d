"""The small fleet sweep the sweep tests share (see test_sweep.py for what it holds)."""
import shutil

import pytest

from helpers import FLEET


@pytest.fixture()
def sweep_file(tmp_path):
    for chip in ("fleet-hex-a", "fleet-hex-b"):
        (tmp_path / chip).mkdir()
        for day in ("2026-11-23", "2026-11-24"):
            shutil.copy(FLEET / chip / f"{day}.yaml", tmp_path / chip / f"{day}.yaml")
    path = tmp_path / "sweep.yaml"
    path.write_text("embedcheck_sweep: 1\nname: test\nchips: [fleet-hex-a, fleet-hex-b]\n"
                    "patches: [{family: repetition, distances: [3], rounds: 2}]\n"
                    "figures: [fidelity_product, decoded]\ntop: 2\n"
                    "sampling: {shots: 3000, max_errors: 1000, seed: 5}\n")
    return path

