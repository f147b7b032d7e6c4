"""The script API (circuitlab.api): documented, and clear about bad arguments."""

import inspect
from pathlib import Path

import pytest

from circuitlab import api
from circuitlab.engine import EngineError, Trainer

EXAMPLE = Path(__file__).resolve().parents[1] / "example_circuits" / "set_reset_latch.circuit.json"


def test_every_public_function_class_and_member_has_a_docstring():
    missing = []
    for name in api.__all__:
        obj = getattr(api, name)
        if not inspect.getdoc(obj):
            missing.append(name)
        if inspect.isclass(obj) and obj.__module__ == api.__name__:
            for member, value in vars(obj).items():
                if not member.startswith("_") and callable(getattr(value, "fget", value)) \
                        and not inspect.getdoc(value):
                    missing.append(f"{name}.{member}")
    assert not missing, missing


@pytest.fixture(scope="module")
def latch():
    return api.load(EXAMPLE)


BAD_CALLS = [
    # (call, words the EngineError must hold)
    (lambda c: api.train(c, epochs=0), "epochs must be at least 1"),
    (lambda c: api.train(c, epochs=-5), "epochs must be at least 1"),
    (lambda c: api.train(c, seed=-1), "seed must lie in"),
    (lambda c: api.train(c, seed=2**32), "seed must lie in"),
    (lambda c: Trainer(c, epochs=0), "epochs must be at least 1"),
    (lambda c: api.run(c, sequence="ghost"), "no sequence named 'ghost'"),
    (lambda c: api.run(c, steps=0), "steps must be at least 1"),
    (lambda c: api.run(c, steps=30, fill=float("nan")), "fill must be a finite number"),
    (lambda c: api.run(c).states("ghost"), "no sequence named 'ghost'"),
    (lambda c: api.gradients(c, sequence="ghost"), "no sequence named 'ghost'"),
    (lambda c: api.gradients(c, loss="absolute"), "unknown loss"),
    (lambda c: api.gradients(c, truncation=0), "truncation must be at least 1"),
    (lambda c: api.gradients(c).contributions("open_pulse", "close_pulse"), "no connection"),
    (lambda c: api.unroll(c, steps=-1), "steps must be at least 0"),
]


@pytest.mark.parametrize("call, words", BAD_CALLS, ids=[w for _, w in BAD_CALLS])
def test_bad_arguments_raise_engine_error_naming_the_problem(latch, call, words):
    with pytest.raises(EngineError, match=words):
        call(latch)


def test_train_with_an_epoch_count_trains_exactly_that_many(latch):
    result = api.train(latch, epochs=3)
    assert result.epochs == 3 and result.stopped_because.startswith("ran the set number of epochs (3)")
