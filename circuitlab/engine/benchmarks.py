"""The engine's suite for ``circuitlab bench``: forward/backward time and training speed.

Circuits are built here from a seed (random dense-ish connectivity, a fifth
of the units clamped to data every step, a fifth carrying targets every
step, logistic and tanh units alternating), so the figures do not depend on
any file.
"""

import time

import numpy as np

from circuitlab.engine.backward import backward
from circuitlab.engine.compile import compile_circuit
from circuitlab.engine.forward import forward
from circuitlab.engine.trainer import Trainer
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule


def benchmark_circuit(n: int, steps: int, sequences: int, density: float = 0.3, seed: int = 0) -> Circuit:
    rng = np.random.default_rng(seed)
    c = Circuit(name=f"bench {n}x{steps}x{sequences}")
    for k in range(n):
        c.add_unit(Unit(name=f"u{k}", activation=("logistic", "tanh")[k % 2]))
    for i in range(n):
        for j in range(n):
            if rng.random() < density:
                c.connect(f"u{i}", f"u{j}", float(rng.normal(0, 1 / np.sqrt(density * n))))
    k = max(1, n // 5)
    inputs = [f"u{i}" for i in range(k)]
    outputs = [f"u{i}" for i in range(k, 2 * k)]
    for name in inputs:
        c.set_schedule(name, UnitSchedule(clamp="every"))
    for name in outputs:
        c.set_schedule(name, UnitSchedule(target="every"))
    for s in range(sequences):
        c.add_sequence(Sequence(
            name=f"s{s}", length=steps,
            clamps={u: [float(v) for v in rng.random(steps + 1)] for u in inputs},
            targets={u: [None] + [float(v) for v in rng.random(steps)] for u in outputs}))
    c.training.epochs = 10**6
    return c


def best_of(fn, repeats: int) -> float:
    """The shortest of ``repeats`` timings of ``fn()``, in seconds (the least disturbed run)."""
    best = float("inf")
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def run() -> list[dict]:
    out = []
    comp = compile_circuit(benchmark_circuit(50, 200, 16))
    params = comp.parameters_from_circuit()
    act = forward(comp, params)
    t_fwd = best_of(lambda: forward(comp, params), 10)
    t_bwd = best_of(lambda: backward(comp, params, act), 10)
    out.append({"name": "forward, 50 units x 200 steps x 16 seq.", "value": t_fwd * 1e3,
                "unit": "ms", "goal": "< 10 ms"})
    out.append({"name": "backward (BPTT), 50 units x 200 steps x 16 seq.", "value": t_bwd * 1e3,
                "unit": "ms", "goal": "< 20 ms"})
    out.append({"name": "forward + backward, 50 units x 200 steps x 16 seq.",
                "value": (t_fwd + t_bwd) * 1e3, "unit": "ms", "goal": "< 30 ms"})
    for n, steps, seqs, goal in ((5, 20, 8, "> 1000/s"), (20, 50, 16, "> 300/s"), (50, 200, 16, "> 30/s")):
        trainer = Trainer(benchmark_circuit(n, steps, seqs))
        trainer.epoch()  # warm-up
        epochs = 0
        t = time.perf_counter()
        while time.perf_counter() - t < 1.0:
            trainer.epoch()
            epochs += 1
        rate = epochs / (time.perf_counter() - t)
        out.append({"name": f"epochs, {n} units x {steps} steps x {seqs} seq.",
                    "value": rate, "unit": "/s", "goal": goal})
    return out
