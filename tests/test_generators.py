"""Seeded generators: reproducible, and the targets agree with independent computations."""

import operator
from functools import reduce

import numpy as np
import pytest

from circuitlab.model import ModelError
from circuitlab.model.generators import (RowRecipe, delayed_copy, fill_sequences, generate_sequences,
                                         noise, parameters, pulses, random_binary, running_parity,
                                         sine_wave, square_wave, xor_of)


def rng(seed=3):
    return np.random.default_rng(seed)


def test_inputs_have_one_value_per_step_and_respect_their_parameters():
    assert len(random_binary(rng(), 20)) == 21
    assert set(random_binary(rng(), 50)) == {0.0, 1.0}
    assert random_binary(rng(), 10, p_one=0.0) == [0.0] * 11
    p = pulses(rng(), 30, count=3, width=2, height=2.0, earliest=5)
    assert p[:5] == [0.0] * 5 and 2 <= p.count(2.0) <= 6
    # sine: matches numpy's sine (numpy as the outside reference)
    s = sine_wave(rng(), 16, period=8, amplitude=2.0, offset=1.0)
    assert np.allclose(s, 1.0 + 2.0 * np.sin(2 * np.pi * np.arange(17) / 8))
    assert square_wave(rng(), 7, period=4, duty=0.5) == [1, 1, 0, 0, 1, 1, 0, 0]
    n = noise(rng(), 2000, mean=1.0, std=0.5, low=0.0)
    assert min(n) >= 0.0 and abs(float(np.mean(n)) - 1.0) < 0.05
    with pytest.raises(ModelError):
        random_binary(rng(), 5, p_one=2.0)


def test_targets_agree_with_independent_computations():
    a = random_binary(rng(1), 40)
    b = random_binary(rng(2), 40)
    assert delayed_copy([a], delay=2)[:2] == [None, None]
    assert delayed_copy([a], delay=2)[2:] == a[:-2]
    # running parity = cumulative sum mod 2 (common practice), shifted by the delay
    want = np.cumsum(np.array(a) + np.array(b)) % 2
    got = running_parity([a, b], delay=1)
    assert got[0] is None and got[1:] == [float(v) for v in want[:-1]]
    # xor via Python's operator.xor over the bits
    x = xor_of([a, b], delay=0)
    assert x == [float(reduce(operator.xor, (int(a[t]), int(b[t])))) for t in range(41)]


def test_same_seed_same_sequences_and_recipes_chain():
    recipes = [RowRecipe("in", "clamp", "random binary"),
               RowRecipe("out", "target", "delayed copy", {"delay": 1}, ["in"])]
    one = generate_sequences(recipes, count=4, length=10, seed=7, taken={"generated2"}, held_out=1)
    two = generate_sequences(recipes, count=4, length=10, seed=7, taken={"generated2"}, held_out=1)
    assert one == two
    assert [s.name for s in one] == ["generated1", "generated3", "generated4", "generated5"]
    assert [s.held_out for s in one] == [False, False, False, True]
    assert one[0].targets["out"][1:] == one[0].clamps["in"][:-1]
    assert generate_sequences(recipes, 4, 10, seed=8) != one
    filled = fill_sequences(one[:1], [RowRecipe("in", "clamp", "square wave", {"period": 2})], seed=0)
    assert filled[0].clamps["in"][:4] == [1.0, 0.0, 1.0, 0.0] and one[0].clamps["in"] != filled[0].clamps["in"]
    assert parameters("sine wave")["period"] == 8.0
    with pytest.raises(ModelError, match="needs at least one source"):
        generate_sequences([RowRecipe("o", "target", "xor")], 1, 5, seed=0)
