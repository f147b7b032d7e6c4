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
