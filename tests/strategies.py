"""Hypothesis strategies for random circuits that the model accepts and finds no problem in.

``circuits()`` is the public entry point. Each generated circuit has distinct
unit names, at most one connection per ordered pair (self-loops included),
weights that respect the source unit's sign, consistent tie groups, a
schedule in which no cell is both clamped and targeted, and sequences that
hold a value wherever a unit is clamped or targeted, so ``find_problems``
returns nothing for it.
"""

import string

from hypothesis import strategies as st

from circuitlab.model import (Circuit, Connection, Sequence, TrainingRecord, TrainingSettings, Unit,
                              UnitSchedule, clamp_mask, target_mask)
from circuitlab.model.units import ACTIVATIONS

MODERATE = st.floats(min_value=-4.0, max_value=4.0, allow_nan=False, allow_infinity=False)
ANY_FINITE = st.floats(allow_nan=False, allow_infinity=False)
UNIT_FRACTION = st.floats(min_value=0.0, max_value=1.0)

_NAME_START = string.ascii_letters + "_"
_NAME_REST = string.ascii_letters + string.digits + "_.-"
unit_names = st.builds(lambda a, b: a + b, st.sampled_from(_NAME_START),
                       st.text(_NAME_REST, max_size=8))
"""Valid unit names (short, so that examples stay readable)."""

texts = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=30)
"""Free text that a file can hold: any Unicode except surrogates."""


@st.composite
def circuits(draw, max_units: int = 5, max_length: int = 6, max_sequences: int = 3,
             values: st.SearchStrategy[float] = MODERATE, loss: str | None = None) -> Circuit:
    """A random circuit with no semantic problems.

    ``values`` draws weights, biases, positions and data values (the default
    keeps them moderate for numerical tests; pass ``ANY_FINITE`` to probe the
    file format). ``loss`` fixes the training loss (``"squared"`` or
    ``"cross_entropy"``); by default it is drawn too.
    """
    loss = loss or draw(st.sampled_from(["squared", "cross_entropy"]))
    names = draw(st.lists(unit_names, min_size=1, max_size=max_units, unique=True))
    roles = {n: draw(st.sampled_from(["input", "hidden", "output"])) for n in names}

    circuit = Circuit(name=draw(texts), description=draw(texts),
                      training=draw(training_settings(loss)))
    for n in names:
        activation = "logistic" if (loss == "cross_entropy" and roles[n] == "output") else draw(
            st.sampled_from(ACTIVATIONS))
        initial_modes = ["fixed", "clamped"] if roles[n] == "input" else ["fixed", "learned", "clamped"]
        circuit.units.append(Unit(
            name=n, activation=activation, bias=draw(values), bias_trains=draw(st.booleans()),
            initial_mode=draw(st.sampled_from(initial_modes)),
            initial_value=draw(st.none() | values), sign=draw(st.sampled_from([None, "excitatory",
                                                                               "inhibitory"])),
            x=draw(values), y=draw(values)))

    pairs = [(s, t) for s in names for t in names]
    chosen = draw(st.lists(st.sampled_from(pairs), unique=True, max_size=min(len(pairs), 12)))
    for s, t in chosen:
        weight = abs(draw(values))
        sign = circuit.unit(s).sign
        if sign == "inhibitory" or (sign is None and draw(st.booleans())):
            weight = -weight
        circuit.connections.append(Connection(source=s, target=t, weight=weight,
                                              trains=draw(st.booleans())))
    _draw_ties(draw, circuit)

    for n in names:
        circuit.set_schedule(n, draw(_schedules(roles[n], circuit.unit(n).initial_mode, max_length)))
    seq_names = draw(st.lists(st.text(string.ascii_lowercase + string.digits, min_size=1, max_size=6),
                              max_size=max_sequences, unique=True))
    for name in seq_names:
        circuit.sequences.append(draw(_sequences(circuit, name, max_length, values, loss)))
    if draw(st.booleans()):
        circuit.trained = TrainingRecord(epochs=draw(st.integers(0, 10**6)), loss=draw(values),
                                         held_out_loss=draw(st.none() | values),
                                         stopped_because=draw(texts))
    return circuit


def _draw_ties(draw, circuit: Circuit) -> None:
    """Tie some connections whose sources have one sign; members take the first's weight and trains."""
    for group in range(draw(st.integers(0, 2))):
        members = draw(st.lists(st.sampled_from(circuit.connections), unique_by=id, min_size=2,
                                max_size=4)) if len(circuit.connections) >= 2 else []
        members = [m for m in members if m.tie is None]
        signs = {circuit.unit(m.source).sign for m in members} - {None}
        if len(members) < 2 or len(signs) > 1:
            continue
        # a signed member leads, so the shared weight respects that sign
        first = min(members, key=lambda m: circuit.unit(m.source).sign is None)
        for m in members:
            m.tie, m.weight, m.trains = f"tie{group}", first.weight, first.trains


@st.composite
def _schedules(draw, role: str, initial_mode: str, max_length: int) -> UnitSchedule:
    """Inputs are clamped (never targeted); outputs are targeted (clamped at most at step 0)."""
    steps = st.lists(st.integers(1, max_length), unique=True, max_size=3)
    if role == "input":
        clamp = draw(st.sampled_from(["initial", "every", "steps", "given"]))
        clamp_steps = draw(st.lists(st.integers(0, max_length), unique=True, min_size=1, max_size=3)) \
            if clamp == "steps" else []
        return UnitSchedule(clamp=clamp, clamp_steps=clamp_steps)
    # a learned initial state may not be clamped at step 0
    clamp = "none" if initial_mode == "learned" else draw(st.sampled_from(["none", "initial"]))
    if role == "hidden":
        return UnitSchedule(clamp=clamp)
    target = draw(st.sampled_from(["final", "last", "every", "steps", "given"]))
    return UnitSchedule(clamp=clamp, target=target,
                        target_steps=draw(steps) if target == "steps" else [],
                        target_last=draw(st.integers(1, max_length)) if target == "last" else 1)


@st.composite
def _sequences(draw, circuit: Circuit, name: str, max_length: int,
               values: st.SearchStrategy[float], loss: str) -> Sequence:
    seq = Sequence(name=name, length=draw(st.integers(1, max_length)), held_out=draw(st.booleans()))
    target_values = UNIT_FRACTION if loss == "cross_entropy" else values
    for unit in circuit.units:
        sched = circuit.schedule_for(unit.name)
        if sched.clamp == "given":  # the data decide the cells; step 0 too if the unit is clamped there
            row = [draw(st.none() | values) for _ in range(seq.steps)]
            if unit.initial_mode == "clamped" and row[0] is None:
                row[0] = draw(values)
            seq.clamps[unit.name] = row
        else:
            mask = clamp_mask(unit, sched, seq)
            if any(mask):
                seq.clamps[unit.name] = [draw(values) if m else None for m in mask]
        if sched.target == "given":
            seq.targets[unit.name] = [None] + [draw(st.none() | target_values) for _ in range(seq.length)]
        elif sched.target != "none":
            mask = target_mask(unit, sched, seq)
            if any(mask):
                seq.targets[unit.name] = [draw(target_values) if m else None for m in mask]
    for rows in (seq.clamps, seq.targets):  # an all-empty row is stored as no row
        for unit in [u for u, row in rows.items() if all(v is None for v in row)]:
            del rows[unit]
    return seq


@st.composite
def training_settings(draw, loss: str | None = None) -> TrainingSettings:
    """Random but valid training settings."""
    return TrainingSettings(
        optimizer=draw(st.sampled_from(["sgd", "adam"])),
        learning_rate=draw(st.floats(1e-6, 10.0)),
        momentum=draw(st.floats(0.0, 0.99)),
        epochs=draw(st.integers(1, 10**6)),
        batch_size=draw(st.integers(0, 64)),
        loss=loss or draw(st.sampled_from(["squared", "cross_entropy"])),
        seed=draw(st.integers(0, 2**32 - 1)),
        clip_norm=draw(st.none() | st.floats(0.01, 100.0)),
        truncation=draw(st.none() | st.integers(1, 50)),
    )
