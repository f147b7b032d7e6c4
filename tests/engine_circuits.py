"""Random circuits for the engine tests: every activation, clamp and target mode, ties,
frozen values, learned initial states, sign constraints and both losses.

Each draw is checked with the model's ``find_problems``, so only circuits the
tool accepts are used.
"""

import numpy as np

from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, find_problems

ACTIVATIONS = ("logistic", "tanh", "linear", "relu")


def random_circuit(seed: int, max_units: int = 6, max_length: int = 7, max_sequences: int = 3,
                   loss: str | None = None, ties: bool = True, signs: bool = True) -> Circuit:
    rng = np.random.default_rng(seed)
    for _ in range(200):
        c = _draw(rng, max_units, max_length, max_sequences, loss, ties, signs)
        if not find_problems(c):
            return c
    raise AssertionError(f"no valid random circuit for seed {seed}")


def _draw(rng, max_units, max_length, max_sequences, loss, ties, signs) -> Circuit:
    c = Circuit(name="random")
    c.training.loss = loss or ("squared", "cross_entropy")[rng.integers(2)]
    ce = c.training.loss == "cross_entropy"
    n = int(rng.integers(2, max_units + 1))
    roles = ["output"] + [("input", "output", "hidden")[rng.integers(3)] for _ in range(n - 1)]
    rng.shuffle(roles)
    for k in range(n):
        act = ACTIVATIONS[rng.integers(4)]
        if roles[k] == "output" and ce:
            act = "logistic"
        mode = ("fixed", "learned", "clamped")[rng.integers(3)]
        sign = (None, None, "excitatory", "inhibitory")[rng.integers(4)] if signs else None
        c.add_unit(Unit(name=f"u{k}", activation=act, bias=float(rng.normal(0, 0.5)),
                        bias_trains=bool(rng.random() < 0.8), initial_mode=mode,
                        initial_value=float(rng.normal(0, 0.5)) if rng.random() < 0.5 else None,
                        sign=sign))
    names = c.unit_names()
    for i in names:
        for j in names:
            if rng.random() < 0.55:
                w = float(rng.normal(0, 0.9))
                s = c.unit(i).sign
                w = abs(w) if s == "excitatory" else -abs(w) if s == "inhibitory" else w
                c.connect(i, j, w, trains=bool(rng.random() < 0.85))
    if ties and len(c.connections) >= 2:
        for g in range(int(rng.integers(0, 3))):
            k = rng.choice(len(c.connections), size=min(len(c.connections), int(rng.integers(2, 4))),
                           replace=False)
            members = [c.connections[i] for i in k if c.connections[i].tie is None]
            if len({c.unit(m.source).sign for m in members}) == 1 and len(members) >= 2:
                c.tie([m.key for m in members], f"g{g}")
    for k, name in enumerate(names):
        unit = c.unit(name)
        role = roles[k]
        if role == "input":
            clamp = ("every", "steps", "given")[rng.integers(3)]
            if unit.initial_mode == "learned" and clamp == "every":
                clamp = "given"
            steps = [int(t) for t in rng.choice(max_length + 1, size=3, replace=False)]
            if unit.initial_mode == "learned":
                steps = [t for t in steps if t != 0]
            c.set_schedule(name, UnitSchedule(clamp=clamp, clamp_steps=sorted(steps)))
        elif role == "output":
            target = ("final", "last", "every", "steps", "given")[rng.integers(5)]
            clamp = "initial" if unit.initial_mode == "fixed" and rng.random() < 0.3 else "none"
            c.set_schedule(name, UnitSchedule(
                clamp=clamp, target=target, target_last=int(rng.integers(1, 4)),
                target_steps=sorted(int(t) for t in rng.choice(np.arange(1, max_length + 1), size=2,
                                                              replace=False))))
    for s in range(int(rng.integers(1, max_sequences + 1))):
        length = int(rng.integers(1, max_length + 1))
        seq = Sequence(name=f"s{s}", length=length, held_out=False)
        for unit in c.units:
            sched = c.schedule_for(unit.name)
            if sched.clamp != "none" or unit.initial_mode == "clamped":
                row = [float(rng.normal(0, 1)) for _ in range(length + 1)]
                if sched.clamp == "given":
                    row = [v if rng.random() < 0.6 else None for v in row]
                    if unit.initial_mode == "learned" and rng.random() < 0.5:
                        row[0] = None
                if unit.initial_mode == "clamped" and row[0] is None:
                    row[0] = 0.3
                if any(v is not None for v in row):
                    seq.clamps[unit.name] = row
            if sched.target != "none":
                if ce:
                    row = [float(rng.random()) for _ in range(length + 1)]
                else:
                    row = [float(rng.normal(0, 1)) for _ in range(length + 1)]
                row[0] = None
                if sched.target == "given":
                    row = [v if rng.random() < 0.5 else None for v in row]
                if any(v is not None for v in row):
                    seq.targets[unit.name] = row
        c.add_sequence(seq)
    return c
