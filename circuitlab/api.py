"""circuitlab for scripts and notebooks: one verb per job, NumPy arrays out.

    from circuitlab import api
    circuit = api.load("latch.circuit.json")
    result = api.train(circuit, epochs=500)       # trains a copy; circuit is untouched
    run = api.run(result.circuit)                  # run.y[s, t, j]: state of unit j at step t
    grads = api.gradients(result.circuit)          # grads.W, grads.bias, grads.init, grads.e, grads.delta
    api.save(result.circuit, "latch-trained.circuit.json")

The loss everywhere is the mean over the target cells (of the sequences in
the batch) of the per-cell loss, squared error or cross-entropy as the
circuit's training settings say. Trained circuits are models: validate them
for any real use (for example before one controls something physical).
"""

import csv
import io
import os
import time
import warnings
from dataclasses import dataclass
from typing import Callable

import networkx as nx
import numpy as np

from circuitlab.engine import (Activity, Backward, Compiled, EngineError, EpochRecord, Parameters,
                               Trainer, backward, compile_circuit, contributions, forward)
from circuitlab.engine.gradcheck import DEFAULT_TOLERANCE, GradientCheck, gradient_check
from circuitlab.engine.unrolled import unrolled_graph
from circuitlab.model import Circuit, UnitSchedule, clamp_mask, load_circuit, save_circuit
from circuitlab.runs.recorder import RunRecorder

__all__ = ["EngineError", "GradientResult", "RunResult", "TrainingResult", "check_gradients",
           "gradients", "load", "run", "save", "train", "unroll",
           "fixed_points", "noise_robustness", "past_horizon", "predictions", "pulse_response",
           "standalone_python", "state_space"]


def load(path: str | os.PathLike) -> Circuit:
    """Read a circuit file (raises ``CircuitFileError`` naming each bad field)."""
    return load_circuit(path)


def save(circuit: Circuit, path: str | os.PathLike) -> None:
    """Write a circuit file atomically."""
    save_circuit(circuit, path)


# ----------------------------------------------------------------- training
@dataclass
class TrainingResult:
    """What ``train`` produced: the trained copy of the circuit and the learning curve."""

    circuit: Circuit
    history: list[EpochRecord]
    initial_loss: float
    final_loss: float
    held_out_loss: float | None
    stopped_because: str

    @property
    def epochs(self) -> int:
        """The number of epochs trained."""
        return len(self.history)

    def curve(self) -> dict[str, np.ndarray]:
        """The learning curve as arrays: epoch, loss, held_out_loss (NaN if none), grad_norm."""
        h = self.history
        return {"epoch": np.array([r.epoch for r in h]),
                "loss": np.array([r.loss for r in h]),
                "held_out_loss": np.array([np.nan if r.held_out_loss is None else r.held_out_loss for r in h]),
                "grad_norm": np.array([r.grad_norm for r in h]),
                "learning_rate": np.array([r.learning_rate for r in h])}


def train(circuit: Circuit, epochs: int | None = None, seed: int | None = None,
          reinitialise: bool = False, callback: Callable[[EpochRecord], None] | None = None,
          record: bool = True, db: str | os.PathLike | None = None) -> TrainingResult:
    """Train a copy of ``circuit`` with its training settings; ``circuit`` itself is not changed.

    ``epochs`` overrides the maximum number of epochs and ``seed`` the
    training seed; ``reinitialise`` draws fresh seeded fan-in-scaled weights
    first (ties, frozen values and signs respected). ``callback(record)``
    runs after each epoch. Training starts from the values the circuit holds.
    The run is recorded in the run history (``db``, default: the user's
    ``runs.sqlite``, see ``circuitlab.runs``) unless ``record`` is False; a
    history that cannot be written gives one warning and loses nothing.
    """
    if seed is not None and not 0 <= seed <= 2**32 - 1:
        raise EngineError(f"the seed must lie in 0..{2**32 - 1} (got {seed})")
    work = circuit.copy()
    if seed is not None:
        work.training.seed = seed
    trainer = Trainer(work, epochs=epochs)
    if reinitialise:
        trainer.reinitialise(work.training.seed)
    initial = trainer.loss()
    started, start_parameters = time.perf_counter(), trainer.parameters
    trainer.run(callback)
    RunRecorder(db, record, report=_warn).record_trainer(trainer, work, "api", started=started,
                                                         initial_parameters=start_parameters)
    trainer.write_back(work)
    return TrainingResult(work, trainer.history, initial, trainer.loss(), trainer.held_out_loss(),
                          trainer.stopped_because or "")


def _warn(message: str) -> None:
    warnings.warn(message, RuntimeWarning, stacklevel=3)


# --------------------------------------------------------------------- runs
@dataclass
class RunResult:
    """The activity of every unit at every step: ``y`` and ``net`` are (S, T+1, n).

    Steps past a sequence's own length are padding (``step_mask`` False).
    """

    unit_names: list[str]
    sequence_names: list[str]
    lengths: np.ndarray
    y: np.ndarray
    net: np.ndarray

    @property
    def step_mask(self) -> np.ndarray:
        """(S, T+1) bool: the step exists in that sequence (False on padding)."""
        return np.arange(self.y.shape[1])[None, :] <= self.lengths[:, None]

    def states(self, sequence: str) -> np.ndarray:
        """(length+1, n): the states of one sequence, padding cut off."""
        if sequence not in self.sequence_names:
            raise EngineError(f"there is no sequence named '{sequence}' in this run")
        s = self.sequence_names.index(sequence)
        return self.y[s, : self.lengths[s] + 1]

    def to_csv(self) -> str:
        """CSV text: one row per (sequence, step), one column per unit's state."""
        buffer = io.StringIO()
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(["sequence", "step", *self.unit_names])
        for s, name in enumerate(self.sequence_names):
            for t in range(self.lengths[s] + 1):
                writer.writerow([name, t, *(repr(float(v)) for v in self.y[s, t])])
        return buffer.getvalue()


def run(circuit: Circuit, sequence: str | None = None, steps: int | None = None,
        fill: float | None = None) -> RunResult:
    """Run the circuit on its sequences (or only ``sequence``) at its current values.

    ``steps`` runs each sequence for that many steps instead of its own
    length, for example past the training horizon; targets are then ignored.
    A unit clamped at a step past its data takes the value ``fill`` there
    (for example 0.0 for "no input"); without ``fill`` that is an error.
    """
    work = circuit
    if steps is not None:
        if steps < 1:
            raise EngineError("steps must be at least 1")
        if fill is not None and not np.isfinite(fill):
            raise EngineError("fill must be a finite number")
        work = _extended(circuit, steps, fill)
    comp = compile_circuit(work, None if sequence is None else [sequence])
    act = forward(comp, comp.parameters_from_circuit())
    return RunResult(comp.unit_names, comp.sequence_names, comp.lengths, act.y.copy(), act.net.copy())


def _extended(circuit: Circuit, steps: int, fill: float | None) -> Circuit:
    """A copy whose sequences run ``steps`` steps, with no targets, clamps past the data = ``fill``."""
    work = circuit.copy()
    work.schedule = {name: sched.model_copy(update={"target": "none"})
                     for name, sched in work.schedule.items()}
    work.schedule = {k: v for k, v in work.schedule.items() if v != UnitSchedule()}
    missing: dict[str, int] = {}  # unit clamped past the data -> how many sequences
    first: dict[str, int] = {}    # unit -> the first step without data
    for seq in work.sequences:
        old = seq.length
        seq.targets = {}
        seq.resize(steps)
        for unit in work.units:
            mask = clamp_mask(unit, work.schedule_for(unit.name), seq)
            row = seq.clamps.setdefault(unit.name, [None] * seq.steps)
            gaps = [t for t in range(old + 1, seq.steps) if mask[t] and row[t] is None]
            if gaps and fill is None:
                missing[unit.name] = missing.get(unit.name, 0) + 1
                first[unit.name] = min(first.get(unit.name, gaps[0]), gaps[0])
            for t in gaps if fill is not None else ():
                row[t] = float(fill)
            if all(v is None for v in row):
                del seq.clamps[unit.name]
    if missing:
        raise MissingFillError(missing, min(first.values()), steps)
    return work


class MissingFillError(EngineError):
    """Running past the data where units are clamped, with no value given for them there.

    ``units`` maps each such unit to the number of sequences it lacks data in.
    """

    def __init__(self, units: dict[str, int], first_step: int, steps: int):
        self.units = dict(units)
        names = ", ".join(f"'{u}'" for u in units)
        worst = max(units.values())
        super().__init__(f"{names} {'is' if len(units) == 1 else 'are'} clamped past the end of the "
                         f"data when running {steps} steps (steps {first_step}-{steps}, in {worst} "
                         f"sequence{'s' if worst > 1 else ''}); give the value there with fill=VALUE")


# ---------------------------------------------------------------- gradients
@dataclass
class GradientResult:
    """The loss, its raw gradients and the backward stacks at the circuit's current values.

    ``W[i, j]``, ``bias[j]``, ``init[j]``: dLoss/d(value) (raw: a tied
    connection's own share; ``theta_gradient`` sums tie groups and leaves
    out frozen values, labelled by ``theta_labels``). ``y``, ``e`` = dLoss/dy
    and ``delta`` = dLoss/dnet are (S, T+1, n).
    """

    loss: float
    grads: Parameters
    compiled: Compiled
    activity: Activity
    backward: Backward

    @property
    def unit_names(self) -> list[str]:
        """The units in the order of the arrays' unit axes."""
        return list(self.compiled.unit_names)

    @property
    def W(self) -> np.ndarray:
        """(n, n): dLoss/dw for each connection i -> j (0 where there is none)."""
        return self.grads.W

    @property
    def bias(self) -> np.ndarray:
        """(n,): dLoss/db for each unit."""
        return self.grads.bias

    @property
    def init(self) -> np.ndarray:
        """(n,): dLoss/dy(0) for each unit, summed over the sequences where it is not clamped at 0."""
        return self.grads.init

    @property
    def theta_gradient(self) -> np.ndarray:
        """The gradient training follows: one entry per trainable parameter (see ``theta_labels``)."""
        return self.compiled.pack_gradient(self.grads)

    @property
    def theta_labels(self) -> list[str]:
        """A plain label for each entry of ``theta_gradient``."""
        return list(self.compiled.param_labels)

    @property
    def y(self) -> np.ndarray:
        """(S, T+1, n): every unit's state at every step."""
        return self.activity.y

    @property
    def e(self) -> np.ndarray:
        """(S, T+1, n): dLoss/dy, 0 where a unit is clamped and on padding."""
        return self.backward.e

    @property
    def delta(self) -> np.ndarray:
        """(S, T+1, n): dLoss/dnet, 0 where a unit is clamped, at step 0 and on padding."""
        return self.backward.delta

    def contributions(self, source: str, target: str, per_sequence: bool = False) -> np.ndarray:
        """Per-step terms y_source(t-1) * delta_target(t); they sum to ``W[source, target]``."""
        return contributions(self.compiled, self.activity, self.backward, source, target, per_sequence)


def gradients(circuit: Circuit, sequence: str | None = None, loss: str | None = None,
              truncation: int | None = None) -> GradientResult:
    """BPTT at the circuit's current values over all its sequences (or one).

    ``loss`` defaults to the circuit's training loss; ``truncation`` to none
    (the exact gradient).
    """
    comp = compile_circuit(circuit, None if sequence is None else [sequence])
    params = comp.parameters_from_circuit()
    act = forward(comp, params)
    value, grads, back = backward(comp, params, act, loss=loss or comp.loss, truncation=truncation)
    return GradientResult(value, grads, comp, act, back)


def check_gradients(circuit: Circuit, tolerance: float = DEFAULT_TOLERANCE, rtrl: bool = True) -> GradientCheck:
    """Compare BPTT with finite differences and RTRL at the circuit's values (see engine.gradcheck).

    Raises ``EngineError`` when no sequence has a target cell: every gradient
    is then zero and their agreement would prove nothing.
    """
    comp = compile_circuit(circuit)
    if comp.target_cells == 0:
        raise EngineError("there is nothing to check: no sequence has a target cell "
                          "(or there are no sequences), so every gradient is zero")
    return gradient_check(comp, comp.parameters_from_circuit(), comp.loss, tolerance, rtrl)


def unroll(circuit: Circuit, steps: int | None = None) -> nx.DiGraph:
    """The unrolled network over steps 0..steps (default: the longest sequence) as a networkx graph."""
    if steps is not None and steps < 0:
        raise EngineError(f"steps must be at least 0 (got {steps})")
    return unrolled_graph(circuit, steps)


# ----------------------------------------------------------------- analysis
def _compiled(circuit: Circuit):
    comp = compile_circuit(circuit)
    return comp, comp.parameters_from_circuit()


def past_horizon(circuit: Circuit, factor: int = 4, clamps: str | float = "hold", tolerance: float = 0.1,
                 sequences: str = "training"):
    """Run the sequences ``factor`` times their length; ``.y`` arrays and ``.verdicts`` records
    ("settles", "oscillates" with its period, "leaves") per target unit (engine.analysis.horizon)."""
    from circuitlab.engine.analysis import past_horizon as run_past
    return run_past(*_compiled(circuit), factor, clamps, tolerance, sequences)


def fixed_points(circuit: Circuit, held: dict[str, float] | None = None, starts: int = 64, seed: int = 0):
    """Fixed points with the input units held (at 0 unless ``held`` says otherwise): each with its
    state, Jacobian, eigenvalues, stability and time constant; ``.as_record()`` for plain data."""
    from circuitlab.engine.analysis import fixed_points_of
    return fixed_points_of(*_compiled(circuit), held, starts, seed)


def noise_robustness(circuit: Circuit, levels=(0.0, 0.01, 0.05, 0.1), where: str = "states", repeats: int = 5,
                     seed: int = 0, sequences: str = "training"):
    """The loss with Gaussian noise of each size at every step (``.sigmas``, ``.means``, ``.spreads``)."""
    from circuitlab.engine.analysis import noise_curve
    return noise_curve(*_compiled(circuit), levels, where, repeats, seed, sequences)


def pulse_response(circuit: Circuit, sequence: str, unit: str, step: int, size: float = 0.1, factor: int = 1):
    """The difference a pulse added to ``unit`` at ``step`` makes to every state (``.response``)."""
    from circuitlab.engine.analysis import pulse_response as pulse
    return pulse(*_compiled(circuit), sequence, unit, step, size, factor)


def state_space(circuit: Circuit, components: int = 3, sequences: str = "all"):
    """PCA of the free units' trajectories: ``.trajectories``, ``.explained``, ``.directions``."""
    from circuitlab.engine.analysis import state_space as pca
    return pca(*_compiled(circuit), components, sequences)


def predictions(circuit: Circuit, sequences: str = "all", tolerance: float = 0.1):
    """Per target cell: output, target, error, cell loss (arrays); ``.per_sequence()``, ``.per_unit()``."""
    from circuitlab.engine.analysis import predictions as predict
    return predict(*_compiled(circuit), sequences, tolerance=tolerance)


def standalone_python(circuit: Circuit, module: str = "circuit_forward") -> str:
    """The text of a NumPy-only Python file that reproduces the circuit's forward pass."""
    from circuitlab.engine.standalone import standalone_source
    return standalone_source(*_compiled(circuit), circuit.name, module)
