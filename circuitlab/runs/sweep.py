"""Parameter sweeps on dask.distributed: a grid of training settings times seeds, one task per run.

Without a scheduler address the sweep starts a ``LocalCluster`` of K worker
processes on this machine; with one (``tcp://HOST:PORT``) it uses that
existing cluster, whose workers need circuitlab installed.

Each task trains a fresh copy of the circuit: the swept settings applied
(validated by the file format's rules), the seed set, fresh weights drawn
with that seed (as ``train --reinit --seed S``), then trained. The task
sends its ``RunData`` back and the *client* records it: SQLite must not be
written from machines that may not share the disk, and a file on a network
share is not safe for SQLite's locking. A task that raises, and a task whose
worker is lost (after Dask's own retries), is recorded as ``failed`` and the
sweep goes on. ``resume`` skips every run whose task key (circuit content
hash, full settings, seed, epochs) already has a run that did not fail.

The summary, per setting (over its seeds): how many runs, how many failed,
the fraction that reached the target loss (failed and diverged runs count as
not reached), epochs to reach it among those that did (median, first and
third quartile, NumPy's linear percentiles), final and best validation loss
and the test loss at the selected epoch (mean and sample standard deviation
over the runs that have the value).
"""

import csv
import hashlib
import io
import itertools
import json
import math
import threading
import time
from dataclasses import dataclass, field, fields
from typing import Callable

import numpy as np
import pydantic

from circuitlab.model import Circuit, ModelError, TrainingSettings
from circuitlab.runs.content import content_hash
from circuitlab.runs.history import HistoryError, RunHistory
from circuitlab.runs.record import FAILED, REACHED_TARGET, RunData, machine_info

SETTING_PREFIX = "training."
SUMMARY_COLUMNS = ("runs", "failed", "reached_target_fraction", "epochs_to_target_median",
                   "epochs_to_target_q1", "epochs_to_target_q3", "final_validation_loss_mean",
                   "final_validation_loss_std", "best_validation_loss_mean", "best_validation_loss_std",
                   "test_loss_mean", "test_loss_std")
MAX_TASKS = 100_000


class SweepError(ModelError):
    """A sweep that cannot start (bad grid, bad value, no cluster); the message says why."""


# ---------------------------------------------------------------- the grid
def parse_value(text: str):
    """A value from the command line: a JSON number, true/false, none/null, or plain text."""
    text = text.strip()
    if text.lower() in ("none", "null"):
        return None
    try:
        return json.loads(text)
    except ValueError:
        return text


def parse_assignment(text: str) -> tuple[str, list]:
    """``training.learning_rate=0.01,0.03`` -> ("training.learning_rate", [0.01, 0.03])."""
    key, sep, values = text.partition("=")
    key = key.strip()
    if not sep or not values.strip():
        raise SweepError(f"--set {text}: write it as training.SETTING=VALUE[,VALUE...]")
    if not key.startswith(SETTING_PREFIX) or key[len(SETTING_PREFIX):] not in TrainingSettings.model_fields:
        known = ", ".join(SETTING_PREFIX + k for k in TrainingSettings.model_fields)
        raise SweepError(f"--set {text}: '{key}' is not a training setting (one of: {known})")
    out = [parse_value(v) for v in values.split(",")]
    if len(set(map(json.dumps, out))) != len(out):
        raise SweepError(f"--set {text}: a value is given twice")
    return key, out


def apply_settings(circuit: Circuit, setting: dict) -> Circuit:
    """A copy of ``circuit`` with ``setting`` ({"training.X": value}) applied and validated."""
    work = circuit.copy()
    doc = work.training.model_dump()
    for key, value in setting.items():
        doc[key[len(SETTING_PREFIX):]] = value
    try:
        work.training = TrainingSettings.model_validate(doc, strict=True)
    except pydantic.ValidationError as exc:
        shown = ", ".join(f"{k}={json.dumps(v)}" for k, v in setting.items())
        reasons = "; ".join(f"training.{'.'.join(map(str, e['loc']))}: {e['msg']}" for e in exc.errors())
        raise SweepError(f"{shown}: {reasons}") from None
    return work


def grid_settings(grid: dict[str, list]) -> list[dict]:
    """Every combination of the grid's values ({} alone for an empty grid)."""
    keys = list(grid)
    return [dict(zip(keys, combo)) for combo in itertools.product(*(grid[k] for k in keys))]


@dataclass
class Task:
    setting: dict
    seed: int
    key: str


@dataclass
class SweepPlan:
    """What a sweep will run: the validated grid times the seeds."""

    circuit: Circuit
    grid: dict[str, list]
    seeds: list[int]
    epochs: int | None = None
    file: str = ""
    circuit_hash: str = ""
    tasks: list[Task] = field(default_factory=list)

    @property
    def key(self) -> str:
        """Identifies the sweep (same circuit content, grid, seeds and epochs: the same sweep)."""
        return _digest({"hash": self.circuit_hash, "grid": self.grid, "seeds": self.seeds,
                        "epochs": self.epochs, "settings": self.circuit.training.model_dump(mode="json")})


def _digest(obj) -> str:
    return hashlib.sha256(json.dumps(obj, sort_keys=True, default=str).encode()).hexdigest()


def plan_sweep(circuit: Circuit, grid: dict[str, list], seeds: list[int], epochs: int | None = None,
               file: str = "") -> SweepPlan:
    """Validate every setting of the grid and make one task per (setting, seed)."""
    if not seeds:
        raise SweepError("a sweep needs at least one seed")
    if any(not 0 <= s <= 2**32 - 1 for s in seeds):
        raise SweepError("seeds must lie in 0..4294967295")
    if epochs is not None and epochs < 1:
        raise SweepError("the number of epochs must be at least 1")
    settings = grid_settings(grid)
    if len(settings) * len(seeds) > MAX_TASKS:
        raise SweepError(f"the sweep would run {len(settings) * len(seeds)} runs; at most {MAX_TASKS} are allowed")
    plan = SweepPlan(circuit, grid, list(seeds), epochs, file, content_hash(circuit))
    for setting in settings:
        base = apply_settings(circuit, setting)  # refuses a bad value before anything runs
        for seed in seeds:
            full = base.training.model_dump(mode="json") | {"seed": seed}
            key = _digest({"hash": plan.circuit_hash, "settings": full, "epochs": epochs, "start": "reinit"})
            plan.tasks.append(Task(setting, seed, key))
    return plan


# ---------------------------------------------------------------- the task
def train_task(circuit_json: str, setting: dict, seed: int, epochs: int | None) -> RunData:
    """One sweep run, on a worker: fresh weights from ``seed``, then train. Never raises for
    a training problem: a failure comes back as a ``failed`` RunData."""
    from circuitlab.engine import Trainer
    from circuitlab.runs.record import from_trainer

    started = time.perf_counter()
    circuit = Circuit.model_validate_json(circuit_json)
    digest = content_hash(circuit)
    try:
        work = apply_settings(circuit, setting)
        work.training.seed = seed
        trainer = Trainer(work, epochs=epochs)
        trainer.reinitialise(seed)
        initial = trainer.parameters
        trainer.run()
        return from_trainer(trainer, work, "sweep", circuit_hash=digest, seed=seed, started=started,
                            initial_parameters=initial)
    except Exception as exc:  # reported in the run's record; the sweep goes on
        return failed_run(circuit, digest, setting, seed, f"{type(exc).__name__}: {exc}",
                          time.perf_counter() - started, machine_info())


def failed_run(circuit: Circuit, digest: str, setting: dict, seed: int, error: str, wall_time: float = 0.0,
               machine: dict | None = None) -> RunData:
    try:
        settings = apply_settings(circuit, setting).training.model_dump(mode="json") | {"seed": seed}
    except SweepError:
        settings = circuit.training.model_dump(mode="json")
    return RunData(circuit_name=circuit.name, circuit_hash=digest, settings=settings, seed=seed,
                   source="sweep", outcome=FAILED, error=error, wall_time=wall_time, machine=machine or {})


# ----------------------------------------------------------- the summary
def _stats(values: list[float]) -> tuple[float | None, float | None]:
    vals = [v for v in values if v is not None and math.isfinite(v)]
    if not vals:
        return None, None
    return float(np.mean(vals)), (float(np.std(vals, ddof=1)) if len(vals) > 1 else None)


def summarise(settings: list[dict], runs: list[dict]) -> list[dict]:
    """One row per setting from runs (dicts with setting, outcome, target_epoch and the losses)."""
    rows = []
    for setting in settings:
        mine = [r for r in runs if r["setting"] == setting]
        reached = [r["target_epoch"] for r in mine if r["outcome"] == REACHED_TARGET and r["target_epoch"]]
        row = dict(setting)
        row["runs"] = len(mine)
        row["failed"] = sum(r["outcome"] == FAILED for r in mine)
        row["reached_target_fraction"] = len(reached) / len(mine) if mine else None
        q = np.percentile(reached, [50, 25, 75]) if reached else [None] * 3
        row["epochs_to_target_median"], row["epochs_to_target_q1"], row["epochs_to_target_q3"] = (
            None if v is None else float(v) for v in q)
        for name in ("final_validation_loss", "best_validation_loss", "test_loss"):
            row[f"{name}_mean"], row[f"{name}_std"] = _stats([r[name] for r in mine])
        rows.append(row)
    return rows


def summary_csv(grid: dict, summary: list[dict]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    columns = list(grid) + list(SUMMARY_COLUMNS)
    writer.writerow(columns)
    for row in summary:
        writer.writerow(["" if row.get(c) is None else row[c] for c in columns])
    return buffer.getvalue()


def _as_row(data: RunData) -> dict:
    return {f.name: getattr(data, f.name) for f in fields(RunData) if f.name != "curves"}


# -------------------------------------------------------------- running
@dataclass
class Progress:
    """How far a sweep is: shown by the CLI's bar and the editor's dialog."""

    total: int
    finished: int = 0
    failed: int = 0
    skipped: int = 0
    started: float = field(default_factory=time.perf_counter)

    @property
    def remaining_seconds(self) -> float | None:
        done = self.finished + self.failed
        if not done:
            return None
        rate = (time.perf_counter() - self.started) / done
        return rate * (self.total - done)


@dataclass
class SweepResult:
    sweep_id: int | None
    summary: list[dict]
    runs: list[dict]              # one per task (the newest recorded or received), without curves
    ran: int                      # tasks run now (the others were skipped by resume)
    history_error: str | None = None


def run_sweep(plan: SweepPlan, history: RunHistory | None, workers: int = 2, scheduler: str | None = None,
              resume: bool = False, on_progress: Callable[[Progress, RunData | None], None] | None = None,
              cancel: threading.Event | None = None, client=None) -> SweepResult:
    """Run ``plan`` on Dask and record every run in ``history`` (None: record nothing).

    ``client``: an existing ``distributed.Client`` (tests); otherwise one is made
    for ``scheduler`` or for a new LocalCluster of ``workers`` processes.
    ``on_progress(progress, run)`` is called after each run (from this thread).
    A history that fails is reported in ``history_error``; the results are
    still returned (and written where the caller says).
    """
    history_error = None
    sweep_id = None
    skip: set[str] = set()
    keys = [t.key for t in plan.tasks]
    if history is not None:
        try:
            sweep_id = history.start_sweep(plan.key, plan.circuit.name, plan.circuit_hash, plan.grid, plan.seeds,
                                           plan.file, resume=resume)
            if resume:
                skip = history.task_keys_done(keys)
        except HistoryError as exc:
            history_error, history = str(exc), None
    todo = [t for t in plan.tasks if t.key not in skip]
    progress = Progress(total=len(todo), skipped=len(plan.tasks) - len(todo))
    received: dict[str, dict] = {}
    if on_progress:
        on_progress(progress, None)
    if todo:
        history_error = _run_tasks(plan, todo, history, sweep_id, workers, scheduler, progress, on_progress,
                                   cancel, client, received) or history_error
    stored = []
    if history is not None and skip:
        try:
            stored = history.runs_for_keys([k for k in keys if k in skip])
        except HistoryError as exc:
            history_error = history_error or str(exc)
    by_key = {r["task_key"]: r for r in stored} | received
    runs = [by_key[k] for k in keys if k in by_key]
    summary = summarise(grid_settings(plan.grid), runs)
    if history is not None and sweep_id is not None:
        try:
            history.save_sweep_summary(sweep_id, summary)
        except HistoryError as exc:
            history_error = history_error or str(exc)
    return SweepResult(sweep_id, summary, runs, len(todo), history_error)


def _run_tasks(plan, todo, history, sweep_id, workers, scheduler, progress, on_progress, cancel, client,
               received) -> str | None:
    from distributed import Client, LocalCluster, as_completed

    own_cluster = own_client = None
    try:
        if client is None:
            if scheduler:
                own_client = Client(scheduler, timeout="20s")
            else:
                own_cluster = LocalCluster(n_workers=max(1, workers), threads_per_worker=1, processes=True,
                                           dashboard_address=None, silence_logs=40)
                own_client = Client(own_cluster)
            client = own_client
    except (OSError, TimeoutError, ValueError) as exc:
        _close(own_client, own_cluster)
        where = scheduler or "a local cluster"
        raise SweepError(f"cannot reach {where}: {exc}") from None
    circuit_json = plan.circuit.model_dump_json()
    history_error = None
    try:
        shared = client.scatter(circuit_json, broadcast=True)
        futures = {}
        for task in todo:
            f = client.submit(train_task, shared, task.setting, task.seed, plan.epochs, pure=False,
                              key=f"circuitlab-run-{task.key[:16]}-{time.time_ns()}")
            futures[f] = task
        for future in as_completed(futures):
            task = futures[future]
            if cancel is not None and cancel.is_set():
                client.cancel(list(futures))
                break
            try:
                data = future.result()
            except Exception as exc:  # a lost worker (KilledWorker) or a task that could not start
                data = failed_run(plan.circuit, plan.circuit_hash, task.setting, task.seed,
                                  f"{type(exc).__name__}: {exc}")
            data.source, data.file = "sweep", plan.file
            data.task_key, data.sweep_id, data.setting = task.key, sweep_id, dict(task.setting)
            if history is not None:
                try:
                    data_id = history.add_run(data)
                except HistoryError as exc:
                    history_error = history_error or str(exc)
                    data_id = None
            else:
                data_id = None
            row = _as_row(data)
            row["uid"] = data_id
            received[task.key] = row
            if data.outcome == FAILED:
                progress.failed += 1
            else:
                progress.finished += 1
            if on_progress:
                on_progress(progress, data)
    finally:
        _close(own_client, own_cluster)
    return history_error


def _close(client, cluster) -> None:
    for thing in (client, cluster):
        if thing is not None:
            try:
                thing.close()
            except Exception:  # closing a cluster that is already gone
                pass
