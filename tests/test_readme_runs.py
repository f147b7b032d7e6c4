"""The README's worked examples run as written (common practice: documentation that is executed).

The "Training from the command line" block and the Python API snippet are
taken out of README.md and run in a scratch folder that holds a copy of
example_circuits/, so what a reader pastes is what was tested.
"""

import os
import re
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")


def section_block(title: str, lang: str) -> str:
    section = README.split(f"## {title}\n", 1)[1].split("\n## ", 1)[0]
    match = re.search(rf"^```{lang}\n(.*?)^```", section, re.S | re.M)
    assert match, f"README section '{title}' has no {lang} block"
    return match.group(1)


@pytest.fixture
def scratch(tmp_path, monkeypatch) -> Path:
    shutil.copytree(ROOT / "example_circuits", tmp_path / "example_circuits")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_command_line_training_block_runs(scratch):
    for line in section_block("Training from the command line", "bash").splitlines():
        args = shlex.split(line)
        assert args[0] == "circuitlab"
        done = subprocess.run([sys.executable, "-m", "circuitlab", *args[1:]], capture_output=True,
                              text=True, timeout=300, env={**os.environ, "COLUMNS": "100"})
        assert done.returncode == 0, f"{line}\n{done.stdout}\n{done.stderr}"
    assert (scratch / "latch-trained.circuit.json").is_file()
    header = (scratch / "curve.csv").read_text().splitlines()[0]
    assert header.startswith("epoch,loss")
    rows = (scratch / "activity.csv").read_text().splitlines()
    assert len(rows) > 200  # 200 steps past the start, for every sequence


def test_python_api_snippet_runs(scratch, capsys):
    code = section_block("Python API", "python")
    namespace: dict = {}
    exec(compile(code, "README.md (Python API)", "exec"), namespace)
    result, grads, per_step = namespace["result"], namespace["grads"], namespace["per_step"]
    # the snippet's own claim: the per-step contributions sum to the weight's gradient
    c = namespace["c"]
    i, j = grads.unit_names.index(c.source), grads.unit_names.index(c.target)
    assert per_step.sum() == pytest.approx(grads.W[i, j], rel=1e-12, abs=1e-15)
    assert result.final_loss < result.initial_loss
    assert (scratch / "latch-trained.circuit.json").is_file()
