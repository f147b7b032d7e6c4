"""Write the example circuits in example_circuits/ (seeded, so every run writes the same files).

    python tools/make_examples.py            # write every example
    python tools/make_examples.py --check    # also train each one and report loss and time

Every scenario and every number of data here is invented for these
examples. Each circuit stores small seeded starting weights (the trainer's
own fan-in-scaled draw), so it trains from the file as it is; its
``training.target_loss`` is the loss it is meant to reach within
``training.epochs``, which ``tests/test_examples_train.py`` checks.
"""

import argparse
import sys
import time
from pathlib import Path

import numpy as np

from circuitlab.engine import Trainer
from circuitlab.model import Circuit, Sequence, TrainingSettings, Unit, UnitSchedule, save_circuit
from circuitlab.model.generators import delayed_copy, xor_of

ROOT = Path(__file__).resolve().parent.parent
OUT = ROOT / "example_circuits"
SPACING = 170.0  # canvas distance between neighbouring units


# ---------------------------------------------------------------- helpers
def column(names: list[str], x: float, **fields) -> list[Unit]:
    """Units stacked top to bottom at ``x``, centred on y = 0."""
    top = -SPACING * (len(names) - 1) / 2
    return [Unit(name=n, x=x, y=top + SPACING * i, **fields) for i, n in enumerate(names)]


def floats(values) -> list[float | None]:
    return [None if v is None else float(round(v, 4)) for v in values]


def blank_until(row: list, first: int) -> list:
    """``row`` with no value before step ``first``."""
    return [None if t < first else v for t, v in enumerate(row)]


def seeded_start(circuit: Circuit, seed: int) -> Circuit:
    """Store the trainer's seeded fan-in-scaled starting weights in ``circuit``."""
    trainer = Trainer(circuit)
    trainer.reinitialise(seed)
    trainer.write_back(circuit)
    circuit.trained = None
    for c in circuit.connections:
        c.weight = round(c.weight, 4)
    return circuit


# -------------------------------------------------------------- examples
def pattern_cleaner() -> Circuit:
    """Attractor: the whole state is given at step 0, the clean code is the target on the last steps."""
    # three codes at least five lamps apart, so two wrong lamps still leave the nearest code clear
    codes = {"left_on": [1, 1, 1, 1, 1, 0, 0, 0],
             "right_on": [0, 0, 0, 1, 1, 1, 1, 1],
             "ends_on": [1, 1, 1, 0, 0, 1, 1, 1]}
    names = [f"lamp{i}" for i in range(1, 9)]
    radius = 260.0
    units = [Unit(name=n, x=round(radius * np.sin(2 * np.pi * i / 8), 1),
                  y=round(-radius * np.cos(2 * np.pi * i / 8), 1)) for i, n in enumerate(names)]
    c = Circuit(
        name="pattern cleaner",
        description="Eight indicator lamps show one of three codes, but some readings are corrupted. "
        "The whole lamp state is given at step 0 and the circuit must settle on the nearest clean "
        "code within two steps and hold it for the last four; held-out starts have two wrong lamps "
        "or dim, noisy readings. Try: train, then show a held-out start and watch it settle.",
        units=units,
        schedule={n: UnitSchedule(clamp="initial", target="last", target_last=4) for n in names},
        training=TrainingSettings(optimizer="adam", learning_rate=0.05, epochs=1500,
                                  loss="cross_entropy", seed=11, target_loss=0.002))
    for a in names:
        for b in names:
            c.connect(a, b)
    length = 6
    rng = np.random.default_rng(11)

    def add(name, start, code, held_out=False):
        c.add_sequence(Sequence(
            name=name, length=length, held_out=held_out,
            clamps={n: floats([v] + [None] * length) for n, v in zip(names, start)},
            targets={n: floats([None] + [v] * length) for n, v in zip(names, code)}))

    for key, code in codes.items():
        add(f"{key}_clean", code, code)
        for flip in range(8):
            start = list(code)
            start[flip] = 1 - start[flip]
            add(f"{key}_flip{flip + 1}", start, code)
        pairs = [(a, b) for a in range(8) for b in range(a + 1, 8)]
        for n, k in enumerate(rng.permutation(len(pairs))[:12]):
            start = list(code)
            for lamp in pairs[k]:
                start[lamp] = 1 - start[lamp]
            add(f"{key}_two_wrong{n + 1}", start, code, held_out=n >= 9)
        start = np.clip(0.25 + 0.5 * np.array(code) + rng.normal(0, 0.1, 8), 0, 1)
        add(f"{key}_dim_noisy", start, code, held_out=True)
    return seeded_start(c, 101)


def two_step_echo() -> Circuit:
    """Delayed copy: one unit clamped at every step, the output targeted at every step it can know."""
    units = [*column(["sensor"], 0.0), *column(["relay"], SPACING), *column(["echo"], 2 * SPACING)]
    c = Circuit(
        name="two-step echo",
        description="A sensor line carries a random on/off stream; the 'echo' unit must repeat what "
        "the sensor read two steps earlier, so the bit has to wait one step in 'relay'. "
        "Try: train, then select relay -> echo to see its per-step contributions.",
        units=units,
        schedule={"sensor": UnitSchedule(clamp="every"), "echo": UnitSchedule(target="given")},
        training=TrainingSettings(optimizer="adam", learning_rate=0.1, epochs=800, loss="cross_entropy",
                                  seed=2, target_loss=0.01))
    for a, b in [("sensor", "relay"), ("relay", "echo"), ("sensor", "echo"), ("relay", "relay"),
                 ("echo", "echo")]:
        c.connect(a, b)
    rng = np.random.default_rng(2)
    for i in range(10):
        bits = [float(v) for v in rng.integers(0, 2, 13)]
        c.add_sequence(Sequence(name=f"stream{i + 1}", length=12, held_out=i >= 8,
                                clamps={"sensor": bits},
                                targets={"echo": delayed_copy([bits], delay=2)}))
    return seeded_start(c, 2)


def flip_detector() -> Circuit:
    """Temporal XOR: input clamped every step, the output flags a change of the input."""
    units = [*column(["line", "previous"], 0.0),
             *column(["same_high", "same_low", "mixed"], 1.2 * SPACING, activation="tanh"),
             *column(["flipped"], 2.4 * SPACING)]
    units[1].activation = "tanh"
    c = Circuit(
        name="flip detector",
        description="A binary line is clamped at every step; 'flipped' must report whether the line "
        "changed between the two readings before last (an exclusive-or across time), so 'previous' "
        "has to keep the older reading. Try: train, then compare the hidden units at a flip and on "
        "a steady line.",
        units=units,
        schedule={"line": UnitSchedule(clamp="every"), "flipped": UnitSchedule(target="given")},
        training=TrainingSettings(optimizer="adam", learning_rate=0.03, epochs=1500,
                                  loss="cross_entropy", seed=5, target_loss=0.01))
    for a, b in [("line", "previous"), ("line", "same_high"), ("line", "same_low"), ("line", "mixed"),
                 ("previous", "same_high"), ("previous", "same_low"), ("previous", "mixed"),
                 ("same_high", "flipped"), ("same_low", "flipped"), ("mixed", "flipped")]:
        c.connect(a, b)
    rng = np.random.default_rng(5)
    for i in range(12):
        bits = [float(v) for v in rng.integers(0, 2, 17)]
        previous = delayed_copy([bits], delay=1)
        flips = xor_of([bits, [0.0 if v is None else v for v in previous]], delay=2)
        c.add_sequence(Sequence(name=f"line{i + 1}", length=16, held_out=i >= 10,
                                clamps={"line": bits}, targets={"flipped": blank_until(flips, 3)}))
    return seeded_start(c, 5)


def beat_keeper() -> Circuit:
    """Rhythm generator: no inputs at all; learned initial states start a strong-weak-weak beat."""
    timers = ["timer_a", "timer_b", "timer_c"]
    units = [*column(timers, 0.0, activation="tanh", initial_mode="learned"),
             *column(["beat"], 1.2 * SPACING)]
    c = Circuit(
        name="beat keeper",
        description="With no input at all, the circuit must drum a steady strong-weak-weak beat on "
        "'beat' (0.9, 0.2, 0.2, ...); the three timer units learn their own starting states. "
        "Try: train, then show the held-out 24-step sequence: does it keep time?",
        units=units,
        schedule={"beat": UnitSchedule(target="every")},
        training=TrainingSettings(optimizer="adam", learning_rate=0.05, epochs=1500, loss="squared",
                                  seed=7, target_loss=0.0002))
    for a in timers:
        for b in timers:
            c.connect(a, b)
        c.connect(a, "beat")
    for name, length, held_out in (("twelve_steps", 12, False), ("twenty_four_steps", 24, True)):
        pattern = [[0.9, 0.2, 0.2][(t - 1) % 3] for t in range(length + 1)]
        c.add_sequence(Sequence(name=name, length=length, held_out=held_out,
                                targets={"beat": floats(blank_until(pattern, 1))}))
    return seeded_start(c, 7)


def door_latch() -> Circuit:
    """Two-state memory: set and reset pulses clamped at every step, the latch targeted at every step."""
    units = [*column(["open_pulse", "close_pulse"], 0.0), *column(["latched_open"], 1.3 * SPACING)]
    units[2].initial_value = 0.0  # the door starts closed
    c = Circuit(
        name="door latch",
        description="Brief pulses on 'open_pulse' and 'close_pulse' must switch 'latched_open' on and "
        "off, and between pulses it must hold its state with nothing but its own feedback. "
        "Try: press Train and watch the latch learn to hold, then show the 40-step day9.",
        units=units,
        schedule={"open_pulse": UnitSchedule(clamp="every"), "close_pulse": UnitSchedule(clamp="every"),
                  "latched_open": UnitSchedule(target="every")},
        training=TrainingSettings(optimizer="adam", learning_rate=0.2, epochs=1500, loss="cross_entropy",
                                  seed=3, target_loss=0.01))
    for a, b in [("open_pulse", "latched_open"), ("close_pulse", "latched_open"),
                 ("latched_open", "latched_open")]:
        c.connect(a, b)
    rng = np.random.default_rng(3)
    for i, (length, held_out) in enumerate([(16, False)] * 8 + [(40, True)]):
        open_row, close_row = [0.0] * (length + 1), [0.0] * (length + 1)
        for t in range(length):  # no pulse at the last step: nothing is there to see it
            r = rng.random()
            if r < 0.12:
                open_row[t] = 1.0
            elif r < 0.24:
                close_row[t] = 1.0
        state, latched = 0.0, [None]
        for t in range(1, length + 1):
            state = 1.0 if open_row[t - 1] else 0.0 if close_row[t - 1] else state
            latched.append(state)
        c.add_sequence(Sequence(name=f"day{i + 1}", length=length, held_out=held_out,
                                clamps={"open_pulse": open_row, "close_pulse": close_row},
                                targets={"latched_open": latched}))
    return seeded_start(c, 3)


def tank_balancer() -> Circuit:
    """Tied weights: a symmetric two-tank circuit whose mirror-image connections share one weight."""
    units = [*column(["level_a", "level_b"], 0.0), *column(["drain_a", "drain_b"], 1.4 * SPACING)]
    c = Circuit(
        name="tank balancer",
        description="Two level gauges read two connected tanks, noisily, for six steps; by the last "
        "two steps the drain of the fuller tank must be open and the other closed. Mirror-image "
        "connections are tied, so the circuit treats both tanks alike by construction. Try: train "
        "and check that each tied pair keeps one shared weight.",
        units=units,
        schedule={"level_a": UnitSchedule(clamp="every"), "level_b": UnitSchedule(clamp="every"),
                  "drain_a": UnitSchedule(target="last", target_last=2),
                  "drain_b": UnitSchedule(target="last", target_last=2)},
        training=TrainingSettings(optimizer="adam", learning_rate=0.1, epochs=1000, loss="cross_entropy",
                                  seed=4, target_loss=0.01))
    pairs = {"same_tank": [("level_a", "drain_a"), ("level_b", "drain_b")],
             "other_tank": [("level_a", "drain_b"), ("level_b", "drain_a")],
             "rivalry": [("drain_a", "drain_b"), ("drain_b", "drain_a")],
             "self_hold": [("drain_a", "drain_a"), ("drain_b", "drain_b")]}
    for group, members in pairs.items():
        for a, b in members:
            c.connect(a, b)
        c.tie(members, group)
    rng = np.random.default_rng(4)
    length = 6
    for i in range(14):
        base = rng.uniform(0.2, 0.6)
        gap = rng.uniform(0.15, 0.35) * (1 if i % 2 == 0 else -1)
        level_a = np.clip(base + gap + rng.normal(0, 0.05, length + 1), 0, 1)
        level_b = np.clip(base + rng.normal(0, 0.05, length + 1), 0, 1)
        a_fuller = float(level_a.mean() > level_b.mean())
        early = [None] * (length - 1)  # targets only at the last two steps
        c.add_sequence(Sequence(
            name=f"reading{i + 1}", length=length, held_out=i >= 12,
            clamps={"level_a": floats(level_a), "level_b": floats(level_b)},
            targets={"drain_a": early + [a_fuller] * 2,
                     "drain_b": early + [1.0 - a_fuller] * 2}))
    return seeded_start(c, 4)


def onset_detector() -> Circuit:
    """Sign constraints: an excitatory and an inhibitory unit turn a sustained input into an onset pulse."""
    units = [*column(["stimulus"], 0.0, sign="excitatory"),
             Unit(name="excite", sign="excitatory", initial_value=0.0, x=1.3 * SPACING, y=-SPACING / 2),
             Unit(name="inhibit", sign="inhibitory", initial_value=0.0, x=1.3 * SPACING, y=SPACING / 2)]
    c = Circuit(
        name="onset detector",
        description="A stimulus switches on and stays on for a while; the excitatory unit 'excite' "
        "must fire once, one step after each onset, and then fall silent while the stimulus lasts. "
        "Its weights may only excite and those of 'inhibit' only inhibit. Try: train, then watch "
        "'inhibit' arrive one step late and cut the response short.",
        units=units,
        schedule={"stimulus": UnitSchedule(clamp="every"), "excite": UnitSchedule(target="every")},
        training=TrainingSettings(optimizer="adam", learning_rate=0.2, epochs=1500, loss="cross_entropy",
                                  seed=6, target_loss=0.01))
    for a, b in [("stimulus", "excite"), ("stimulus", "inhibit"), ("excite", "inhibit"),
                 ("inhibit", "excite"), ("excite", "excite")]:
        c.connect(a, b)
    rng = np.random.default_rng(6)
    length = 20
    for i in range(8):
        row, on = [], bool(rng.integers(0, 2))
        while len(row) < length + 1:
            row += [float(on)] * int(rng.integers(2, 6))
            on = not on
        row = row[:length + 1]
        onset = [None] + [float(row[t - 1] == 1.0 and (t < 2 or row[t - 2] == 0.0))
                          for t in range(1, length + 1)]
        c.add_sequence(Sequence(name=f"stimulus{i + 1}", length=length, held_out=i >= 7,
                                clamps={"stimulus": row}, targets={"excite": onset}))
    return seeded_start(c, 6)


def heading_holder() -> Circuit:
    """Multi-state memory: four cue lines clamped at every step, four heading units targeted at every step."""
    directions = ["north", "east", "south", "west"]
    cues, headings = [f"cue_{d}" for d in directions], [f"heading_{d}" for d in directions]
    units = [*column(cues, 0.0), *column(headings, 1.4 * SPACING, initial_value=0.0)]
    c = Circuit(
        name="heading holder",
        description="A brief cue on one of four lines names a new direction of travel; exactly one "
        "heading unit, the last cued one, must stay on until the next cue (before the first cue, "
        "none is on). Try: train, then show the 40-step held-out trip and watch the heading hold.",
        units=units,
        schedule={**{n: UnitSchedule(clamp="every") for n in cues},
                  **{n: UnitSchedule(target="every") for n in headings}},
        training=TrainingSettings(optimizer="adam", learning_rate=0.1, epochs=1500, loss="cross_entropy",
                                  seed=8, target_loss=0.01))
    for h in headings:
        for source in cues + headings:
            c.connect(source, h)
    rng = np.random.default_rng(8)
    for i, (length, held_out) in enumerate([(20, False)] * 10 + [(40, True)]):
        cue_rows = {n: [0.0] * (length + 1) for n in cues}
        for t in range(length):
            if rng.random() < 0.2:
                cue_rows[cues[int(rng.integers(0, 4))]][t] = 1.0
        current, rows = None, {n: [None] for n in headings}
        for t in range(1, length + 1):
            cued = [k for k, n in enumerate(cues) if cue_rows[n][t - 1]]
            current = cued[0] if cued else current
            for k, n in enumerate(headings):
                rows[n].append(float(current == k))
        c.add_sequence(Sequence(name=f"trip{i + 1}", length=length, held_out=held_out,
                                clamps=cue_rows, targets=rows))
    return seeded_start(c, 8)


EXAMPLES = {
    "pattern_cleaner": pattern_cleaner,
    "two_step_echo": two_step_echo,
    "flip_detector": flip_detector,
    "beat_keeper": beat_keeper,
    "set_reset_latch": door_latch,
    "heading_holder": heading_holder,
    "tank_balancer": tank_balancer,
    "onset_detector": onset_detector,
}


def train_check(circuit: Circuit) -> dict:
    """Train ``circuit`` as stored: final loss, epochs, seconds, the held-out loss and the
    largest miss |y - d| over the training and the held-out target cells."""
    start = time.perf_counter()
    trainer = Trainer(circuit)
    trainer.run()
    seconds = time.perf_counter() - start
    comp, act, _ = trainer.inspect()
    miss = np.where(comp.target_mask, np.abs(act.y - comp.target_values), 0.0).max(axis=(1, 2))
    held = comp.held_out
    return {"loss": trainer.history[-1].loss, "epochs": trainer.epochs_done, "seconds": seconds,
            "held_out_loss": trainer.held_out_loss(), "miss": float(miss[~held].max()),
            "held_out_miss": float(miss[held].max()) if held.any() else None}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="train each example and report")
    parser.add_argument("names", nargs="*", help="only these examples (default: all)")
    args = parser.parse_args(argv)
    ok = True
    for name in args.names or EXAMPLES:
        circuit = EXAMPLES[name]()
        path = OUT / f"{name}.circuit.json"
        save_circuit(circuit, path)
        line = f"wrote {path.relative_to(ROOT)}"
        if args.check:
            r = train_check(circuit)
            target = circuit.training.target_loss
            ok = ok and r["loss"] <= target
            line += (f"\n  loss {r['loss']:.4g} (target {target:g}) after {r['epochs']} epochs, "
                     f"{r['seconds']:.2f} s; largest miss {r['miss']:.3f}")
            if r["held_out_loss"] is not None:
                line += f"; held out: loss {r['held_out_loss']:.4g}, largest miss {r['held_out_miss']:.3f}"
            line += "" if r["loss"] <= target else "  MISSED"
        print(line)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
