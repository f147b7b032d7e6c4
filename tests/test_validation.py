"""Bad circuits, one fault each, and the exact message a user sees for it.

Faults the file structure catches come from the loader (``CircuitFileError``);
faults only the whole circuit reveals come from ``find_problems``. Either
way the message names the field path and the reason in plain words.
"""

import json
import math

import pytest

from circuitlab.model import (Circuit, CircuitFileError, Sequence, Unit, UnitSchedule, find_problems,
                              loads_circuit)
from circuitlab.model.fileformat import dumps_circuit

UNIT_NAME_RULE = "must be a unit name: 1-64 letters, digits, '_', '.' or '-', starting with a letter or '_'"


def base() -> Circuit:
    """in (clamped every step) -> h (tanh, self-loop) -> out (target at the final step)."""
    c = Circuit(name="base")
    c.add_unit(Unit(name="in"))
    c.add_unit(Unit(name="h", activation="tanh"))
    c.add_unit(Unit(name="out"))
    c.connect("in", "h", 0.5)
    c.connect("h", "h", 0.25)
    c.connect("h", "out", 1.0)
    c.set_schedule("in", UnitSchedule(clamp="every"))
    c.set_schedule("out", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s1", length=3, clamps={"in": [0.0, 1.0, 0.0, 1.0]},
                            targets={"out": [None, None, None, 1.0]}))
    return c


def problems(circuit_or_doc) -> list[str]:
    """What a user is told about a circuit (in memory) or a document (through the loader)."""
    if isinstance(circuit_or_doc, Circuit):
        return [str(p) for p in find_problems(circuit_or_doc)]
    try:
        circuit = loads_circuit(json.dumps(circuit_or_doc))
    except CircuitFileError as exc:
        return exc.problems
    return [str(p) for p in find_problems(circuit)]


def doc() -> dict:
    return json.loads(dumps_circuit(base()))


def edit(fn):
    """A case that edits the base document (a function of the parsed JSON)."""
    def make():
        d = doc()
        fn(d)
        return d
    return make


def change(fn):
    """A case that edits the base circuit in memory (as a script or the editor could)."""
    def make():
        c = base()
        fn(c)
        return c
    return make


def _set(d, path, value):
    *parents, last = path
    for p in parents:
        d = d[p]
    d[last] = value


CASES = [
    # --- caught by the loader: structure and types
    ("weight is text", edit(lambda d: _set(d, ["connections", 0, "weight"], "heavy")),
     "connections[0].weight: must be a number"),
    ("weight is a boolean", edit(lambda d: _set(d, ["connections", 2, "weight"], True)),
     "connections[2].weight: must be a number"),
    ("unknown activation", edit(lambda d: _set(d, ["units", 1, "activation"], "sigmoid")),
     "units[1].activation: must be 'logistic', 'tanh', 'linear' or 'relu'"),
    ("bad unit name", edit(lambda d: _set(d, ["units", 0, "name"], "2 in")),
     f"units[0].name: {UNIT_NAME_RULE}"),
    ("unit without name", edit(lambda d: d["units"][0].pop("name")), "units[0].name: is required"),
    ("unknown unit field", edit(lambda d: _set(d, ["units", 2, "colour"], "red")),
     "units[2].colour: is not a field of this format"),
    ("trains is text", edit(lambda d: _set(d, ["connections", 1, "trains"], "yes")),
     "connections[1].trains: must be true or false"),
    ("sequence of length 0", edit(lambda d: _set(d, ["sequences", 0, "length"], 0)),
     "sequences[0].length: must be 1 or more"),
    ("fractional length", edit(lambda d: _set(d, ["sequences", 0, "length"], 2.5)),
     "sequences[0].length: must be a whole number"),
    ("zero learning rate", edit(lambda d: _set(d, ["training", "learning_rate"], 0)),
     "training.learning_rate: must be greater than 0"),
    ("momentum of one", edit(lambda d: _set(d, ["training", "momentum"], 1)),
     "training.momentum: must be less than 1"),
    ("unknown optimizer", edit(lambda d: _set(d, ["training", "optimizer"], "lbfgs")),
     "training.optimizer: must be 'sgd' or 'adam'"),
    ("negative seed", edit(lambda d: _set(d, ["training", "seed"], -1)), "training.seed: must be 0 or more"),
    ("unknown clamp mode", edit(lambda d: _set(d, ["schedule", "in", "clamp"], "sometimes")),
     "schedule.in.clamp: must be 'none', 'initial', 'every', 'steps' or 'given'"),
    ("negative clamp step", edit(lambda d: _set(d, ["schedule", "in", "clamp_steps"], [-1])),
     "schedule.in.clamp_steps[0]: must be 0 or more"),
    ("clamp value is text", edit(lambda d: _set(d, ["sequences", 0, "clamps", "in", 2], "x")),
     "sequences[0].clamps.in[2]: must be a number"),
    ("name too long", edit(lambda d: _set(d, ["name"], "n" * 201)), "name: must have at most 200 characters"),
    ("sequences not a list", edit(lambda d: _set(d, ["sequences"], {})), "sequences: must be a list"),
    ("row keyed by a bad name", edit(lambda d: _set(d, ["sequences", 0, "clamps", "bad name"], [1])),
     f'sequences[0].clamps["bad name"] (a key): {UNIT_NAME_RULE}'),
    ("schedule keyed by a bad name", edit(lambda d: _set(d, ["schedule", "line\nbreak"], {})),
     f'schedule["line\\nbreak"] (a key): {UNIT_NAME_RULE}'),
    ("trained without loss", edit(lambda d: _set(d, ["trained"], {"epochs": 3})), "trained.loss: is required"),
    ("infinite weight in file", edit(lambda d: _set(d, ["connections", 0, "weight"], float("inf"))),
     "(file): is not valid JSON: Infinity is not a number JSON allows"),
    # --- found by semantic validation
    ("connection to an unknown unit", edit(lambda d: d["connections"].append(
        {"source": "h", "target": "ghost"})), "connections[3].target: there is no unit named 'ghost'"),
    ("duplicate connection", edit(lambda d: d["connections"].append({"source": "h", "target": "h"})),
     "connections[3]: h -> h is connected twice"),
    ("duplicate unit name", edit(lambda d: d["units"].append({"name": "h"})),
     "units[3].name: the name 'h' is used by another unit"),
    ("clamped and targeted", edit(lambda d: _set(d, ["schedule", "out", "clamp"], "every")),
     "sequences[0]: unit 'out' is both clamped and targeted at step 3"),
    ("clamped every step, values missing", edit(lambda d: _set(
        d, ["sequences", 0, "clamps", "in"], [0.0, None, None, 1.0])),
     "sequences[0].clamps.in: 'in' is clamped at steps 1-2, but the sequence has no value there"),
    ("clamped every step, no row at all", edit(lambda d: d["sequences"][0]["clamps"].pop("in")),
     "sequences[0].clamps.in: 'in' is clamped at steps 0-3, but the sequence has no value there"),
    ("target value missing", edit(lambda d: d["sequences"][0].pop("targets")),
     "sequences[0].targets.out: 'out' carries a target at step 3, but the sequence has no value there"),
    ("cross-entropy target outside [0, 1]", edit(lambda d: (
        _set(d, ["training", "loss"], "cross_entropy"), _set(d, ["sequences", 0, "targets", "out", 3], 1.5))),
     "sequences[0].targets.out: cross-entropy targets must lie in [0, 1], but 'out' has 1.5 at step 3"),
    ("cross-entropy on a tanh unit", edit(lambda d: (
        _set(d, ["training", "loss"], "cross_entropy"), _set(d, ["units", 2, "activation"], "tanh"))),
     "schedule.out.target: 'out' carries targets under cross-entropy, which needs a logistic unit "
     "(it is tanh)"),
    ("row of the wrong length", edit(lambda d: _set(d, ["sequences", 0, "clamps", "in"], [0.0, 1.0, 0.0])),
     "sequences[0].clamps.in: has 3 values but the sequence has 4 steps (0..3)"),
    ("target at step 0", edit(lambda d: _set(d, ["sequences", 0, "targets", "out", 0], 0.5)),
     "sequences[0].targets.out[0]: step 0 is the initial state and cannot carry a target"),
    ("learned initial state clamped at 0", edit(lambda d: (
        _set(d, ["units", 1, "initial_mode"], "learned"), _set(d, ["schedule", "h"], {"clamp": "initial"}))),
     "schedule.h.clamp: 'h' learns its initial state, so it cannot also be clamped at step 0"),
    ("schedule for an unknown unit", edit(lambda d: _set(d, ["schedule", "ghost"], {"clamp": "every"})),
     "schedule.ghost: there is no unit named 'ghost'"),
    ("excitatory unit with negative weight", edit(lambda d: (
        _set(d, ["units", 0, "sign"], "excitatory"), _set(d, ["connections", 0, "weight"], -0.5))),
     "connections[0].weight: 'in' is excitatory, so its weights must be >= 0"),
    ("tied weights differ", edit(lambda d: (
        _set(d, ["connections", 0, "tie"], "g"), _set(d, ["connections", 1, "tie"], "g"))),
     "connections[0].tie: tie group 'g': the weights differ, but tied connections share one weight"),
    ("two sequences with one name", edit(lambda d: d["sequences"].append(dict(d["sequences"][0]))),
     "sequences[1].name: the name 's1' is used by another sequence"),
    ("NaN in data (set by a script)", change(lambda c: c.sequences[0].clamps["in"].__setitem__(1, math.nan)),
     "sequences[0].clamps.in[1]: must be a finite number"),
    ("infinite bias (set by a script)", change(lambda c: setattr(c.unit("h"), "bias", -math.inf)),
     "units[1].bias: must be a finite number"),
    ("infinite weight (set by a script)", change(lambda c: setattr(c.connections[2], "weight", math.inf)),
     "connections[2].weight: must be a finite number"),
]


def test_the_base_circuit_has_no_problem():
    assert problems(doc()) == []


@pytest.mark.parametrize("make, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_each_fault_is_named_with_its_field_and_reason(make, expected):
    found = problems(make())
    assert expected in found, found


def test_cases_are_distinct_and_plain():
    messages = [c[2] for c in CASES]
    assert len(CASES) >= 20 and len(set(messages)) == len(messages)
    for m in messages:
        assert ": " in m
        assert "\n" not in m  # one problem, one line
        for jargon in ("Input should", "pydantic", "ValidationError", "type=", "dict", "[key]"):
            assert jargon not in m, m


def test_a_unit_name_with_a_dot_is_quoted_in_paths():
    c = base()
    c.rename_unit("in", "layer.1")
    c.sequences[0].clamps["layer.1"][2] = None
    assert problems(c) == ['sequences[0].clamps["layer.1"]: \'layer.1\' is clamped at step 2, '
                           "but the sequence has no value there"]


def test_cell_problems_carry_unit_sequence_and_steps():
    c = base()
    c.sequences[0].clamps["in"] = [0.0, None, None, 1.0]
    (p,) = find_problems(c)
    assert (p.unit, p.sequence, p.step, p.steps) == ("in", "s1", 1, (1, 2))


def test_scattered_steps_are_listed_compactly():
    c = base()
    c.set_schedule("in", UnitSchedule(clamp="every"))
    c.sequences[0].resize(9)
    c.sequences[0].clamps["in"] = [0.0, None, 1.0, None, None, None, 1.0, None, 0.0, 1.0]
    (p,) = [p for p in find_problems(c) if p.unit == "in"]
    assert p.message == "'in' is clamped at steps 1, 3-5, 7, but the sequence has no value there"
