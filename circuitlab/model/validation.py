"""Semantic checks of a circuit: what the file format's structure cannot say.

``find_problems`` returns every problem with a path, a plain message and,
where it concerns a cell of the schedule, the unit, sequence and step, so the
editor can mark it and training can refuse to start.
"""

import math
from dataclasses import dataclass

from circuitlab.model.circuit import Circuit
from circuitlab.model.errors import join_path
from circuitlab.model.schedule import clamp_mask, schedule_covers_step0, target_mask
from circuitlab.model.sequences import Sequence
from circuitlab.model.units import Unit


@dataclass(frozen=True)
class Problem:
    """One reason the circuit cannot be trained or run as it stands."""

    path: str
    message: str
    unit: str | None = None
    sequence: str | None = None
    step: int | None = None  # the first step concerned
    steps: tuple[int, ...] = ()  # every step concerned, for problems about cells

    def __str__(self) -> str:
        return f"{self.path}: {self.message}"


def find_problems(circuit: Circuit) -> list[Problem]:
    """All semantic problems of ``circuit``, in document order."""
    out: list[Problem] = []
    _check_units(circuit, out)
    _check_connections(circuit, out)
    _check_schedule(circuit, out)
    _check_sequences(circuit, out)
    return out


def _check_units(circuit: Circuit, out: list[Problem]) -> None:
    seen: set[str] = set()
    for i, u in enumerate(circuit.units):
        if u.name in seen:
            out.append(Problem(f"units[{i}].name", f"the name '{u.name}' is used by another unit", u.name))
        seen.add(u.name)
        for field in ("bias", "initial_value", "x", "y"):
            v = getattr(u, field)
            if v is not None and not math.isfinite(v):
                out.append(Problem(f"units[{i}].{field}", "must be a finite number", u.name))


def _check_connections(circuit: Circuit, out: list[Problem]) -> None:
    names = {u.name: u for u in circuit.units}  # one look-up table: circuits reach thousands of connections
    seen: set[tuple[str, str]] = set()
    for i, c in enumerate(circuit.connections):
        for end in ("source", "target"):
            name = getattr(c, end)
            if name not in names:
                out.append(Problem(f"connections[{i}].{end}", f"there is no unit named '{name}'"))
        if c.key in seen:
            out.append(Problem(f"connections[{i}]", f"{c.source} -> {c.target} is connected twice"))
        seen.add(c.key)
        if not math.isfinite(c.weight):
            out.append(Problem(f"connections[{i}].weight", "must be a finite number"))
        elif c.source in names:
            sign = names[c.source].sign
            if sign == "excitatory" and c.weight < 0:
                out.append(Problem(f"connections[{i}].weight",
                                   f"'{c.source}' is excitatory, so its weights must be >= 0"))
            if sign == "inhibitory" and c.weight > 0:
                out.append(Problem(f"connections[{i}].weight",
                                   f"'{c.source}' is inhibitory, so its weights must be <= 0"))
    for group, members in circuit.tie_groups().items():
        i = circuit.connections.index(members[0])
        if len({m.weight for m in members}) > 1:
            out.append(Problem(f"connections[{i}].tie", f"tie group '{group}': the weights differ, "
                               "but tied connections share one weight"))
        if len({m.trains for m in members}) > 1:
            out.append(Problem(f"connections[{i}].tie", f"tie group '{group}': some members train "
                               "and some are frozen, but tied connections share one parameter"))
        signs = {names[m.source].sign for m in members if m.source in names} - {None}
        if len(signs) > 1:
            out.append(Problem(f"connections[{i}].tie", f"tie group '{group}' joins excitatory "
                               "and inhibitory connections"))


def _check_schedule(circuit: Circuit, out: list[Problem]) -> None:
    names = set(circuit.unit_names())
    cross_entropy = circuit.training.loss == "cross_entropy"
    for name, sched in circuit.schedule.items():
        path = join_path("schedule", name)
        if name not in names:
            out.append(Problem(path, f"there is no unit named '{name}'"))
            continue
        unit = circuit.unit(name)
        if unit.initial_mode == "learned" and schedule_covers_step0(sched):
            out.append(Problem(f"{path}.clamp", f"'{name}' learns its initial state, so it cannot "
                               "also be clamped at step 0", name))
        if cross_entropy and sched.target != "none" and unit.activation != "logistic":
            out.append(Problem(f"{path}.target", f"'{name}' carries targets under cross-entropy, "
                               f"which needs a logistic unit (it is {unit.activation})", name))


def _check_sequences(circuit: Circuit, out: list[Problem]) -> None:
    names = set(circuit.unit_names())
    cross_entropy = circuit.training.loss == "cross_entropy"
    seen: set[str] = set()
    for si, seq in enumerate(circuit.sequences):
        base = f"sequences[{si}]"
        if seq.name in seen:
            out.append(Problem(f"{base}.name", f"the name '{seq.name}' is used by another sequence",
                               sequence=seq.name))
        seen.add(seq.name)
        rows_ok = True
        for kind, rows in (("clamps", seq.clamps), ("targets", seq.targets)):
            for name, row in rows.items():
                path = join_path(f"{base}.{kind}", name)
                if name not in names:
                    out.append(Problem(path, f"there is no unit named '{name}'", sequence=seq.name))
                    rows_ok = False
                elif len(row) != seq.steps:
                    out.append(Problem(path, f"has {len(row)} values but the sequence has "
                                       f"{seq.steps} steps (0..{seq.length})", name, seq.name))
                    rows_ok = False
                bad = [t for t, v in enumerate(row) if v is not None and not math.isfinite(v)]
                if bad:
                    out.append(Problem(f"{path}[{bad[0]}]", "must be a finite number"
                                       + (f" (and so must {_steps_text(bad[1:])})" if len(bad) > 1 else ""),
                                       name, seq.name, bad[0], tuple(bad)))
        if not rows_ok:
            continue
        for unit in circuit.units:
            _check_cells(circuit, unit, si, seq, cross_entropy, out)


def _check_cells(circuit: Circuit, unit: Unit, si: int, seq: Sequence, cross_entropy: bool,
                 out: list[Problem]) -> None:
    """One problem per unit, sequence and kind, listing every step it concerns."""
    base = f"sequences[{si}]"
    name = unit.name
    sched = circuit.schedule_for(name)
    cmask = clamp_mask(unit, sched, seq)
    tmask = target_mask(unit, sched, seq)
    steps = range(seq.steps)
    both = [t for t in steps if cmask[t] and tmask[t]]
    no_clamp = [t for t in steps if cmask[t] and seq.clamp_value(name, t) is None]
    no_target = [t for t in steps if tmask[t] and seq.target_value(name, t) is None]
    if both:
        out.append(Problem(base, f"unit '{name}' is both clamped and targeted at {_steps_text(both)}",
                           name, seq.name, both[0], tuple(both)))
    if no_clamp:
        out.append(Problem(join_path(f"{base}.clamps", name), f"'{name}' is clamped at {_steps_text(no_clamp)}, "
                           "but the sequence has no value there", name, seq.name, no_clamp[0],
                           tuple(no_clamp)))
    if no_target:
        out.append(Problem(join_path(f"{base}.targets", name), f"'{name}' carries a target at "
                           f"{_steps_text(no_target)}, but the sequence has no value there",
                           name, seq.name, no_target[0], tuple(no_target)))
    if cross_entropy:
        outside = [t for t in steps if tmask[t] and seq.target_value(name, t) is not None
                   and not 0.0 <= seq.target_value(name, t) <= 1.0]
        if outside:
            d = seq.target_value(name, outside[0])
            out.append(Problem(join_path(f"{base}.targets", name), f"cross-entropy targets must lie in [0, 1], "
                               f"but '{name}' has {d:g} at step {outside[0]}"
                               + (f" (outside at {_steps_text(outside)})" if len(outside) > 1 else ""),
                               name, seq.name, outside[0], tuple(outside)))
    if seq.target_value(name, 0) is not None:
        out.append(Problem(join_path(join_path(f"{base}.targets", name), 0), "step 0 is the initial state "
                           "and cannot carry a target", name, seq.name, 0, (0,)))


def _steps_text(steps: list[int]) -> str:
    """``step 3``, ``steps 0-5`` or ``steps 1, 3, 5-7``."""
    runs: list[list[int]] = []
    for t in steps:
        if runs and t == runs[-1][1] + 1:
            runs[-1][1] = t
        else:
            runs.append([t, t])
    parts = [str(a) if a == b else f"{a}-{b}" for a, b in runs]
    return ("step " if len(steps) == 1 else "steps ") + ", ".join(parts)
