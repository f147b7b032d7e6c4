"""What one training run leaves behind, built from a Trainer, and the outcome names.

``RunData`` is plain data (numbers, strings, NumPy arrays): it pickles, so a
cluster worker can send it back to the process that records it. The
adapter functions here are the one place that reads the trainer's records.

Selected epoch: the epoch whose parameters the run keeps. When the trainer
restores the best validation epoch's parameters it is that epoch; otherwise
the last one. The test loss reported for a run is the one at that epoch.
"""

import math
import os
import platform
import time
from dataclasses import dataclass, field

import numpy as np

from circuitlab.model import Circuit

REACHED_TARGET = "reached_target"
EARLY_STOPPED = "early_stopped"
RAN_EPOCHS = "ran_epochs"
DIVERGED = "diverged"
STOPPED_BY_USER = "stopped_by_user"
FAILED = "failed"

OUTCOMES: dict[str, str] = {
    REACHED_TARGET: "reached the target",
    EARLY_STOPPED: "early-stopped",
    RAN_EPOCHS: "ran its epochs",
    DIVERGED: "diverged",
    STOPPED_BY_USER: "stopped by the user",
    FAILED: "failed",
}

CURVE_COLUMNS = ("epoch", "loss", "validation_loss", "test_loss", "grad_norm", "learning_rate")


@dataclass
class RunData:
    """One run as it is recorded. ``curves`` maps each of ``CURVE_COLUMNS`` to a float array (NaN: none).

    ``final_parameters`` / ``best_parameters``: ``{"weights": [[source, target, w], ...],
    "biases": {unit: b}, "initial_states": {unit: s}}`` (learned initial states only);
    ``best_parameters`` are those at the lowest validation loss (None without validation data).
    """

    circuit_name: str
    circuit_hash: str
    settings: dict
    seed: int
    source: str                      # "cli", "api", "gui" or "sweep"
    outcome: str
    stopped_because: str = ""
    error: str = ""
    curves: dict[str, np.ndarray] = field(default_factory=dict)
    final_parameters: dict | None = None
    best_parameters: dict | None = None
    epochs: int = 0
    selected_epoch: int | None = None
    target_epoch: int | None = None
    final_loss: float | None = None
    final_validation_loss: float | None = None
    best_validation_loss: float | None = None
    best_epoch: int | None = None
    test_loss: float | None = None
    wall_time: float = 0.0
    machine: dict = field(default_factory=dict)
    file: str = ""
    task_key: str = ""
    sweep_id: int | None = None
    setting: dict = field(default_factory=dict)   # the swept values of this run ({} outside sweeps)


def machine_info() -> dict:
    """Where a run ran: host, platform, Python, CPUs, NumPy."""
    return {"host": platform.node(), "platform": platform.platform(), "python": platform.python_version(),
            "cpus": os.cpu_count(), "numpy": np.__version__}


def finite_or_none(x) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def outcome_of(stopped_because: str | None, diverged: bool, interrupted: bool = False) -> str:
    """The outcome name for a trainer's ``stopped_because`` text."""
    text = (stopped_because or "").lower()
    if diverged:
        return DIVERGED
    if interrupted or not text or text.startswith(("paused", "interrupted", "stopped by")):
        return STOPPED_BY_USER
    if text.startswith("reached the target"):
        return REACHED_TARGET
    if "early" in text or "no improvement" in text or "did not improve" in text:
        return EARLY_STOPPED
    return RAN_EPOCHS


def curves_of(records) -> dict[str, np.ndarray]:
    """The per-epoch columns of a list of engine ``EpochRecord`` s."""
    def col(get):
        return np.array([np.nan if (v := get(r)) is None else float(v) for r in records], dtype=float)
    return {"epoch": col(lambda r: r.epoch), "loss": col(lambda r: r.loss),
            "validation_loss": col(_validation), "test_loss": col(lambda r: getattr(r, "test_loss", None)),
            "grad_norm": col(lambda r: r.grad_norm), "learning_rate": col(lambda r: r.learning_rate)}


def _validation(record):
    # the engine's held-out loss is the validation loss until sequences carry roles
    if hasattr(record, "validation_loss"):
        return record.validation_loss
    return getattr(record, "held_out_loss", None)


def parameters_by_name(unit_names, connections, params, circuit: Circuit) -> dict:
    """Engine parameters (unit order ``unit_names``, connection index pairs) keyed by unit names."""
    learned = {u.name for u in circuit.units if u.initial_mode == "learned"}
    return {"weights": [[unit_names[i], unit_names[j], float(params.W[i, j])] for i, j in connections],
            "biases": {name: float(params.bias[k]) for k, name in enumerate(unit_names)},
            "initial_states": {name: float(params.init[k]) for k, name in enumerate(unit_names)
                               if name in learned}}


def summarise_curves(data: RunData) -> None:
    """Fill the summary numbers of ``data`` from its curves (validation, test, selected epoch)."""
    c = data.curves
    data.epochs = int(c["epoch"].size)
    val = c.get("validation_loss", np.zeros(0))
    finite = np.isfinite(val)
    if finite.any():
        best = int(np.nanargmin(np.where(finite, val, np.nan)))
        data.best_validation_loss = float(val[best])
        data.best_epoch = int(c["epoch"][best])
    if data.selected_epoch is None and data.epochs:
        data.selected_epoch = int(c["epoch"][-1])
    if data.selected_epoch is not None and data.epochs:
        at = np.flatnonzero(c["epoch"] == data.selected_epoch)
        if at.size and data.test_loss is None:
            data.test_loss = finite_or_none(float(c["test_loss"][at[0]]))
        if at.size and data.final_validation_loss is None:
            data.final_validation_loss = finite_or_none(float(val[at[0]]))


def from_trainer(trainer, circuit: Circuit, source: str, *, circuit_hash: str, seed: int | None = None,
                 started: float | None = None, interrupted: bool = False, initial_parameters=None,
                 file: str = "") -> RunData:
    """A ``RunData`` for a finished (or interrupted) ``engine.Trainer`` run on ``circuit``.

    ``started`` is the ``time.perf_counter()`` at the start; ``initial_parameters``
    the parameters training started from (for the best epoch when it is epoch 1).
    """
    history = trainer.history
    diverged = bool(history) and not history[-1].finite
    comp = trainer.compiled
    names = list(comp.unit_names)
    conns = [tuple(map(int, p)) for p in comp.connections]
    data = RunData(
        circuit_name=circuit.name, circuit_hash=circuit_hash,
        settings=trainer.settings.model_dump(mode="json"),
        seed=int(trainer.settings.seed if seed is None else seed), source=source,
        outcome=outcome_of(trainer.stopped_because, diverged, interrupted),
        stopped_because=trainer.stopped_because or "", curves=curves_of(history),
        final_parameters=parameters_by_name(names, conns, trainer.parameters, circuit),
        wall_time=0.0 if started is None else time.perf_counter() - started, machine=machine_info(),
        file=file)
    kept = getattr(trainer, "selected_epoch", None)
    data.selected_epoch = int(kept) if kept is not None else None
    if data.outcome == REACHED_TARGET and history:
        data.target_epoch = int(history[-1].epoch)
    # measured at the parameters the run keeps (those of the selected epoch)
    data.final_loss = finite_or_none(_call(trainer, "loss"))
    validation = "validation_loss" if hasattr(trainer, "validation_loss") else "held_out_loss"
    data.final_validation_loss = finite_or_none(_call(trainer, validation))
    data.test_loss = finite_or_none(_call(trainer, "test_loss")) if hasattr(trainer, "test_loss") else None
    summarise_curves(data)
    data.best_parameters = _best_parameters(trainer, data, names, conns, circuit, initial_parameters)
    if data.final_validation_loss is not None and (data.best_validation_loss is None
                                                   or data.final_validation_loss < data.best_validation_loss):
        # the parameters training ended with were measured after the last epoch's curve point
        data.best_validation_loss, data.best_epoch = data.final_validation_loss, data.epochs
        data.best_parameters = data.final_parameters
    return data


def _call(trainer, name):
    try:
        return getattr(trainer, name)()
    except Exception:  # a loss that cannot be computed is simply not recorded
        return None


def _best_parameters(trainer, data: RunData, names, conns, circuit, initial) -> dict | None:
    if data.best_epoch is None:
        return None
    best = getattr(trainer, "best_parameters", None)
    if best is not None and not callable(best):
        return parameters_by_name(names, conns, best, circuit)
    # the validation loss of epoch k is measured at the parameters epoch k starts from,
    # which are those epoch k-1 ended with (or the initial ones for epoch 1)
    index = {r.epoch: r for r in trainer.history}
    before = index.get(data.best_epoch - 1)
    params = before.parameters if before is not None else initial
    return None if params is None else parameters_by_name(names, conns, params, circuit)
