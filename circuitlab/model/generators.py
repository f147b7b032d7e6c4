"""Seeded generators for common input and target families.

Each generator is a small function returning the values of one row for
steps 0..length (``length + 1`` entries, ``None`` where there is no value).
Input generators take a ``numpy.random.Generator`` as ``rng`` (unused by the
deterministic ones); target generators compute their row from source rows of
the same sequence (usually clamped inputs).

``generate_sequences`` and ``fill_sequences`` apply a list of ``RowRecipe``
with one seed, so the same recipe and seed always give the same data.
"""

import inspect
import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from circuitlab.model.errors import ModelError
from circuitlab.model.sequences import Sequence, Values


# ------------------------------------------------------------------ inputs
def random_binary(rng: np.random.Generator, length: int, p_one: float = 0.5) -> Values:
    """Independent 0/1 values, each 1 with probability ``p_one``."""
    _check(0.0 <= p_one <= 1.0, "p_one must lie in [0, 1]")
    return [float(v) for v in (rng.random(length + 1) < p_one)]


def pulses(rng: np.random.Generator, length: int, count: int = 1, width: int = 1,
           height: float = 1.0, baseline: float = 0.0, earliest: int = 1) -> Values:
    """``count`` pulses of ``width`` steps at ``height``, starting at distinct random
    steps from ``earliest`` on (pulses may overlap); ``baseline`` elsewhere."""
    _check(count >= 0 and width >= 1, "count must be >= 0 and width >= 1")
    _check(0 <= earliest <= length, "earliest must lie in 0..length")
    row = [float(baseline)] * (length + 1)
    slots = length + 1 - earliest
    starts = rng.choice(slots, size=min(count, slots), replace=False) + earliest if count else []
    for s in starts:
        for t in range(int(s), min(int(s) + width, length + 1)):
            row[t] = float(height)
    return row


def sine_wave(rng: np.random.Generator, length: int, period: float = 8.0, amplitude: float = 0.5,
              offset: float = 0.5, phase: float = 0.0, random_phase: bool = False) -> Values:
    """``offset + amplitude * sin(2 pi (t / period) + phase)``; with ``random_phase``
    a uniform random phase is added, so each sequence starts elsewhere in the cycle."""
    _check(period > 0, "period must be > 0")
    extra = rng.uniform(0, 2 * math.pi) if random_phase else 0.0
    return [offset + amplitude * math.sin(2 * math.pi * t / period + phase + extra)
            for t in range(length + 1)]


def square_wave(rng: np.random.Generator, length: int, period: int = 8, duty: float = 0.5,
                low: float = 0.0, high: float = 1.0, shift: int = 0) -> Values:
    """``high`` for the first ``duty`` fraction of each ``period`` steps, ``low`` for the rest;
    ``shift`` delays the wave by that many steps."""
    _check(period >= 1 and 0.0 <= duty <= 1.0, "period must be >= 1 and duty in [0, 1]")
    on = round(duty * period)
    return [float(high) if (t - shift) % period < on else float(low) for t in range(length + 1)]


def noise(rng: np.random.Generator, length: int, mean: float = 0.0, std: float = 0.1,
          low: float | None = None, high: float | None = None) -> Values:
    """Independent Gaussian values, cut to [low, high] where those are given."""
    _check(std >= 0, "std must be >= 0")
    v = rng.normal(mean, std, length + 1)
    if low is not None or high is not None:
        v = np.clip(v, low, high)
    return [float(x) for x in v]


# ----------------------------------------------------------------- targets
def delayed_copy(sources: list[Values], delay: int = 1, gain: float = 1.0,
                 offset: float = 0.0) -> Values:
    """``offset + gain * source(t - delay)`` (one source); no value where t - delay has none."""
    _check(len(sources) == 1, "delayed_copy takes exactly one source")
    _check(delay >= 0, "delay must be >= 0")
    src = sources[0]
    return [None if t - delay < 0 or src[t - delay] is None else offset + gain * src[t - delay]
            for t in range(len(src))]


def running_parity(sources: list[Values], delay: int = 1) -> Values:
    """1 if an odd number of ones has been seen in the sources over steps 0..t - delay, else 0.

    Source values are read as bits (> 0.5 is one). No value before the first
    step that can have seen a source, or after a step where a source has none.
    """
    _check(len(sources) >= 1 and delay >= 0, "running_parity needs sources and delay >= 0")
    steps = len(sources[0])
    out: Values = [None] * steps
    parity, known = 0, True
    for s in range(steps):
        bits = [row[s] for row in sources]
        known = known and all(b is not None for b in bits)
        if known:
            parity ^= sum(b > 0.5 for b in bits) % 2
        if s + delay < steps and known:
            out[s + delay] = float(parity)
    return out


def xor_of(sources: list[Values], delay: int = 1) -> Values:
    """The XOR (sum mod 2) of the source bits at step t - delay (> 0.5 is one)."""
    _check(len(sources) >= 1 and delay >= 0, "xor_of needs sources and delay >= 0")
    steps = len(sources[0])
    out: Values = [None] * steps
    for s in range(steps - delay):
        bits = [row[s] for row in sources]
        if all(b is not None for b in bits):
            out[s + delay] = float(sum(b > 0.5 for b in bits) % 2)
    return out


INPUT_GENERATORS: dict[str, Callable[..., Values]] = {
    "random binary": random_binary, "pulses": pulses, "sine wave": sine_wave,
    "square wave": square_wave, "noise": noise,
}
TARGET_GENERATORS: dict[str, Callable[..., Values]] = {
    "delayed copy": delayed_copy, "running parity": running_parity, "xor": xor_of,
}
GENERATORS = {**INPUT_GENERATORS, **TARGET_GENERATORS}


def parameters(name: str) -> dict[str, object]:
    """The named parameters of generator ``name`` with their defaults (for forms)."""
    sig = inspect.signature(GENERATORS[name])
    return {p: v.default for p, v in sig.parameters.items() if p not in ("rng", "length", "sources")}


@dataclass
class RowRecipe:
    """Fill the ``layer`` ("clamp" or "target") row of ``unit`` with generator ``generator``.

    Target generators read the clamp rows of ``sources`` in the same sequence
    (recipes run in order, so generate the inputs first).
    """

    unit: str
    layer: str
    generator: str
    params: dict = field(default_factory=dict)
    sources: list[str] = field(default_factory=list)


def apply_recipes(sequence: Sequence, recipes: list[RowRecipe], rng: np.random.Generator) -> None:
    """Replace the rows named by ``recipes`` in ``sequence`` (in place)."""
    for r in recipes:
        if r.layer not in ("clamp", "target"):
            raise ModelError(f"layer must be 'clamp' or 'target', not '{r.layer}'")
        if r.generator in INPUT_GENERATORS:
            row = INPUT_GENERATORS[r.generator](rng, sequence.length, **r.params)
        elif r.generator in TARGET_GENERATORS:
            if not r.sources:
                raise ModelError(f"'{r.generator}' for {r.unit} needs at least one source unit")
            rows = [sequence.clamps.get(s) or [None] * sequence.steps for s in r.sources]
            row = TARGET_GENERATORS[r.generator](rows, **r.params)
        else:
            raise ModelError(f"there is no generator named '{r.generator}'")
        rows_of = sequence.clamps if r.layer == "clamp" else sequence.targets
        if all(v is None for v in row):
            rows_of.pop(r.unit, None)
        else:
            rows_of[r.unit] = row


def generate_sequences(recipes: list[RowRecipe], count: int, length: int, seed: int,
                       stem: str = "generated", taken: set[str] | frozenset = frozenset(),
                       held_out: int = 0) -> list[Sequence]:
    """``count`` new sequences of ``length`` steps built by ``recipes``, named ``stem1``,
    ``stem2``... (skipping names in ``taken``); the last ``held_out`` are marked held out."""
    _check(count >= 1 and 0 <= held_out <= count, "count must be >= 1 and held_out in 0..count")
    rng = np.random.default_rng(seed)
    out, i = [], 0
    while len(out) < count:
        i += 1
        name = f"{stem}{i}"
        if name in taken:
            continue
        seq = Sequence(name=name, length=length, held_out=len(out) >= count - held_out)
        apply_recipes(seq, recipes, rng)
        out.append(seq)
    return out


def fill_sequences(sequences: list[Sequence], recipes: list[RowRecipe], seed: int) -> list[Sequence]:
    """Copies of ``sequences`` with the recipes' rows replaced (the originals are untouched)."""
    rng = np.random.default_rng(seed)
    out = []
    for s in sequences:
        seq = s.model_copy(deep=True)
        apply_recipes(seq, recipes, rng)
        out.append(seq)
    return out


def _check(ok: bool, message: str) -> None:
    if not ok:
        raise ModelError(message)
