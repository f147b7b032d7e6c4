"""The exported standalone file reproduces the engine's forward pass without circuitlab."""

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from circuitlab import api
from circuitlab.engine import compile_circuit, forward
from circuitlab.engine.standalone import standalone_source
from tests.engine_circuits import random_circuit

NUMPY_HOME = str(Path(np.__file__).resolve().parents[1])

RUNNER = """
import json, sys
sys.path[:0] = [{numpy_home!r}, "."]  # NumPy, and the exported file in this clean folder
try:
    import circuitlab
    sys.exit("circuitlab must not be importable here")
except ImportError:
    pass
import circuit_forward as m
print(json.dumps({{name: m.run_sequence(name).tolist() for name in m.SEQUENCES}}))
"""


def run_isolated(tmp_path: Path, source: str) -> dict:
    """Run the file in a fresh interpreter: isolated mode, no site packages, a clean folder and env."""
    (tmp_path / "circuit_forward.py").write_text(source, encoding="utf-8")
    env = {"PATH": os.environ.get("PATH", "")}
    out = subprocess.run([sys.executable, "-I", "-S", "-c", RUNNER.format(numpy_home=NUMPY_HOME)],
                         cwd=tmp_path, env=env, capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_standalone_file_reproduces_the_activity_stack(tmp_path, seed):
    circuit = random_circuit(seed)
    comp = compile_circuit(circuit)
    params = comp.parameters_from_circuit()
    y = forward(comp, params).y
    got = run_isolated(tmp_path, standalone_source(comp, params, circuit.name))
    assert list(got) == comp.sequence_names
    for s, name in enumerate(comp.sequence_names):
        # The engine's own forward pass is the reference (the update in docs/mathematics.md); agreement to 1e-12.
        assert np.abs(np.array(got[name]) - y[s, : comp.lengths[s] + 1]).max() <= 1e-12


def test_standalone_file_of_a_trained_example(tmp_path, examples_dir):
    trained = api.train(api.load(examples_dir / "set_reset_latch.circuit.json")).circuit
    comp = compile_circuit(trained)
    params = comp.parameters_from_circuit()
    got = run_isolated(tmp_path, standalone_source(comp, params, trained.name))
    run = api.run(trained)
    for name in run.sequence_names:
        assert np.abs(np.array(got[name]) - run.states(name)).max() <= 1e-12
