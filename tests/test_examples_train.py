"""Every example circuit trains to its stated target, and the examples cover every way of giving data.

An example's stated target is its ``training.target_loss``: ``circuitlab
train FILE --json`` must report a final loss at or below it within the
file's own number of epochs, from the starting weights stored in the file.
"""

import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import pytest

from circuitlab.cli import main
from circuitlab.model import load_circuit

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


def load_make_examples():
    spec = importlib.util.spec_from_file_location("make_examples", ROOT / "tools" / "make_examples.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_example_trains_to_its_target(capsys, path):
    circuit = load_circuit(path)
    target = circuit.training.target_loss
    assert target is not None, "an example states its target as training.target_loss"
    assert main(["train", str(path), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["ok"] and report["written"] == []
    assert report["final_loss"] <= target < report["initial_loss"]
    assert report["epochs"] <= circuit.training.epochs
    assert report["stopped_because"].startswith("reached the target loss")


def test_the_real_command_trains_an_example():
    path = ROOT / "example_circuits" / "set_reset_latch.circuit.json"
    done = subprocess.run([sys.executable, "-m", "circuitlab", "train", str(path), "--json"],
                          capture_output=True, text=True, timeout=120, cwd=ROOT)
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout)
    assert report["final_loss"] <= load_circuit(path).training.target_loss


def test_files_are_what_the_generator_writes():
    make = load_make_examples()
    assert sorted(f"{name}.circuit.json" for name in make.EXAMPLES) == [p.name for p in EXAMPLES]
    for path in EXAMPLES:
        assert make.EXAMPLES[path.name.removesuffix(".circuit.json")]() == load_circuit(path), \
            f"{path.name} differs from tools/make_examples.py: run it again"


def test_every_example_has_a_short_description_with_a_hint():
    for path in EXAMPLES:
        c = load_circuit(path)
        text, _, hint = c.description.partition("Try:")
        assert hint.strip(), f"{path.name}: no 'Try:' hint"
        assert 1 <= text.count(". ") + 1 <= 4 and len(c.description) < 500, path.name


def test_examples_cover_every_way_of_giving_inputs_and_targets():
    circuits = [load_circuit(p) for p in EXAMPLES]

    def scheds(c):
        return [c.schedule_for(u.name) for u in c.units]

    def has(pred):
        return any(pred(c) for c in circuits)

    # whole initial state given, targets on the last steps (pattern completion into an attractor)
    assert has(lambda c: all(s.clamp == "initial" for s in scheds(c))
               and any(s.target == "last" and s.target_last > 1 for s in scheds(c)))
    # a subset clamped at every step, an output targeted at every step (or every step it can know)
    assert has(lambda c: 0 < sum(s.clamp == "every" for s in scheds(c)) < len(c.units)
               and any(s.target in ("every", "given") for s in scheds(c)))
    # no input at all, learned initial states
    assert has(lambda c: all(s.clamp == "none" for s in scheds(c))
               and any(u.initial_mode == "learned" for u in c.units))
    # tied weights, and sign constraints of both kinds
    assert has(lambda c: len(c.tie_groups()) > 0)
    assert has(lambda c: {u.sign for u in c.units} >= {"excitatory", "inhibitory"})
    # held-out sequences where generalisation is the point
    assert sum(any(s.held_out for s in c.sequences) for c in circuits) >= 5
