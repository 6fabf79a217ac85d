"""Doctests run at the repository root, so that module examples can name the bundled demo
files (devices/, samples/) by their relative paths, wherever pytest is started from."""
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent


@pytest.fixture(autouse=True)
def _doctests_at_the_repository_root(request, monkeypatch):
    if isinstance(request.node, pytest.DoctestItem):
        monkeypatch.chdir(ROOT)
