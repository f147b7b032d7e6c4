"""Shared test set-up: Qt runs offscreen, and the example circuits are easy to find."""

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


@pytest.fixture
def examples_dir() -> Path:
    return ROOT / "example_circuits"


@pytest.fixture(autouse=True)
def _private_run_history(tmp_path_factory, monkeypatch):
    """Runs recorded by a test go to a file of its own, never to the user's history."""
    monkeypatch.setenv("CIRCUITLAB_RUNS_DB", str(tmp_path_factory.mktemp("history") / "runs.sqlite"))
