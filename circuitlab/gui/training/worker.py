"""The training thread: a Trainer advancing epoch after epoch, sending snapshots to the views.

The worker owns a Trainer built from a copy of the document's circuit; the
GUI thread never computes gradients. Snapshots leave at most ``max_rate``
times a second, whatever the epoch rate, and carry only small NumPy arrays:
the parameters, the epoch records since the last snapshot, and, for the
chosen sequence, the activity and backward stacks plus the per-step
contributions of every connection over the training batch. Commands from the
GUI (run, pause, one epoch, new values, stop) go through a lock-protected
queue that the loop reads between epochs.
"""

import threading
import time
from collections import deque
from dataclasses import dataclass, field

import numpy as np
from PySide6.QtCore import QThread, Signal

from circuitlab.engine import EngineError, Trainer, backward, compile_circuit, forward
from circuitlab.gui.training.values import apply_parameters
from circuitlab.model import Circuit


DRAW_SHARE = 0.15  # the largest share of the time the window may spend drawing snapshots


@dataclass(frozen=True)
class Inspection:
    """What the views draw for the chosen sequence, at one set of parameters."""

    unit_names: list[str]
    sequence_name: str
    steps: int                   # the chosen sequence's length + 1 (steps 0..T)
    y: np.ndarray                # (steps, n) states
    net: np.ndarray              # (steps, n) net inputs
    e: np.ndarray                # (steps, n) dLoss/dy
    delta: np.ndarray            # (steps, n) dLoss/dnet
    clamp_mask: np.ndarray       # (steps, n)
    target_mask: np.ndarray      # (steps, n)
    target_values: np.ndarray    # (steps, n)
    connections: list[tuple[str, str]]
    contributions: np.ndarray    # (C, T+1) over the training batch: [k, t] = sum_s y_src(t-1) delta_tgt(t)
    gradient: np.ndarray         # (C,) the engine's dLoss/dw of each connection on the training batch


@dataclass(frozen=True)
class Snapshot:
    """The state of a run as sent to the GUI thread."""

    epoch: int
    unit_names: list[str]
    W: np.ndarray
    bias: np.ndarray
    init: np.ndarray
    records: tuple = ()
    inspection: Inspection | None = None
    epochs_per_second: float = 0.0
    running: bool = False
    finished: str | None = None     # the trainer's reason for stopping, if it stopped by itself
    diverged: str | None = None     # what went wrong, if the loss or the weights stopped being finite
    sequence_names: list[str] = field(default_factory=list)


class TrainingWorker(QThread):
    """Runs a Trainer in its own thread. All public methods are safe to call from the GUI thread."""

    snapshot_ready = Signal(object)   # Snapshot
    failed = Signal(str)              # the trainer could not be built or raised

    def __init__(self, circuit: Circuit, sequence: str | None = None, max_rate: float = 30.0,
                 epoch_limit: int | None = None, parent=None):
        super().__init__(parent)
        self._circuit = circuit.copy()
        self._sequence = sequence
        self._interval = 1.0 / max_rate
        self._limit = epoch_limit
        self._lock = threading.Condition()
        self._commands: deque = deque()
        self._running = False
        self._steps = 0
        self._acked = True
        self._max_rate = max_rate
        self.trainer: Trainer | None = None

    # ------------------------------------------------------- GUI-side commands
    def _send(self, *command) -> None:
        with self._lock:
            self._commands.append(command)
            self._lock.notify()

    def resume(self) -> None:
        """Train until paused, stopped, finished or diverged."""
        self._send("run")

    def pause(self) -> None:
        self._send("pause")

    def step(self) -> None:
        """Train exactly one more epoch, then pause."""
        self._send("step")

    def stop(self) -> None:
        """End the thread after the current epoch (a last snapshot is sent)."""
        self._send("stop")

    def update_values(self, circuit: Circuit) -> None:
        """New property values (weights, biases, settings) from the next epoch on."""
        self._send("values", circuit.copy())

    def choose_sequence(self, name: str) -> None:
        self._send("sequence", name)

    def acknowledge(self, cost: float) -> None:
        """The GUI has drawn the last snapshot, which took it ``cost`` seconds.

        The worker waits for this before training on, so drawing never competes
        with training for the interpreter lock (the window stays responsive), and
        it spaces snapshots so drawing takes at most DRAW_SHARE of the time.
        """
        with self._lock:
            self._acked = True
            self._interval = max(1.0 / self._max_rate, cost * (1.0 - DRAW_SHARE) / DRAW_SHARE)
            self._lock.notify()

    # ------------------------------------------------------------ the thread
    def run(self) -> None:
        try:
            self._setup()
            self._loop()
        except (EngineError, ValueError, FloatingPointError) as exc:
            self.failed.emit(str(exc))

    def _setup(self) -> None:
        self.trainer = Trainer(self._circuit)
        full = compile_circuit(self._circuit)
        self._names = list(full.unit_names)
        self._sequences = list(full.sequence_names)
        train_idx = [i for i, h in enumerate(full.held_out) if not h] or list(range(full.n_sequences))
        self._train = full.subset(train_idx)
        self._conn_names = [(self._names[a], self._names[b]) for a, b in full.connections]
        self._src = full.connections[:, 0] if len(full.connections) else np.zeros(0, int)
        self._tgt = full.connections[:, 1] if len(full.connections) else np.zeros(0, int)
        if self._sequence not in self._sequences:
            self._sequence = self._sequences[0] if self._sequences else None
        self._pending: list = []
        self._rate_mark = (time.perf_counter(), 0)
        self._rate = 0.0
        self._emit()

    def _loop(self) -> None:
        trainer = self.trainer
        last_emit = time.perf_counter()
        while True:
            with self._lock:
                while not self._commands and not (self._running or self._steps):
                    self._lock.wait()
                commands = list(self._commands)
                self._commands.clear()
            want_snapshot = False
            for cmd in commands:
                kind = cmd[0]
                if kind == "run":
                    self._running, self._steps = True, 0
                    self._rate_mark = (time.perf_counter(), self._epoch())
                elif kind == "pause":
                    self._running, self._steps, want_snapshot = False, 0, True
                elif kind == "step":
                    self._steps += 1
                elif kind == "stop":
                    self._running, self._steps = False, 0
                    self._emit()
                    return
                elif kind == "values":
                    self._circuit = cmd[1]
                    trainer.update_values(self._circuit)
                    want_snapshot = True
                elif kind == "sequence":
                    self._sequence, want_snapshot = cmd[1], True
            if self._running or self._steps:
                if self._train_one():
                    continue  # diverged: already reported
                stepping = self._steps > 0
                if stepping:
                    self._steps -= 1
                done = trainer.done or (self._limit is not None and self._epoch() >= self._limit)
                if done:
                    self._running, self._steps = False, 0
                    self._emit(finished=trainer.stopped_because or (
                        f"reached {self._limit} epochs" if self._limit is not None else None))
                    last_emit = time.perf_counter()
                    continue
                now = time.perf_counter()
                if (stepping and not self._steps) or now - last_emit >= self._interval:
                    self._emit()
                    with self._lock:  # let the GUI draw it undisturbed (bounded, never a deadlock)
                        self._lock.wait_for(lambda: self._acked or self._commands, timeout=0.5)
                    last_emit = time.perf_counter()
            elif want_snapshot:
                self._emit()
                last_emit = time.perf_counter()

    def _epoch(self) -> int:
        return self.trainer.history[-1].epoch if self.trainer.history else 0

    def _train_one(self) -> bool:
        """One epoch; on a non-finite result restore the last finite values. True if it diverged."""
        trainer = self.trainer
        with np.errstate(all="ignore"):  # overflow is detected below and reported in words
            rec = trainer.epoch()
        params = trainer.parameters
        if rec.finite and np.isfinite(rec.loss) and params.all_finite():
            self._pending.append(rec)
            return False
        # the trainer has already put back the last parameters with a finite loss; the circuit
        # takes them too, and update_values lets training go on (say with a lower learning rate)
        good = params
        restored = self._circuit.copy()
        apply_parameters(restored, self._names, good.W, good.bias, good.init)
        trainer.update_values(restored)
        self._running, self._steps = False, 0
        what = "not a number (NaN)" if np.isnan(rec.loss) or not params.all_finite() else "infinite"
        s = self._circuit.training
        hint = [f"lower the learning rate (now {s.learning_rate:g})"]
        if s.clip_norm is None:
            hint.append("turn on gradient clipping")
        else:
            hint.append(f"clip the gradient norm lower (now {s.clip_norm:g})")
        self._emit(diverged=f"Training diverged at epoch {rec.epoch}: the loss or the weights became "
                            f"{what}. The weights from the last finite epoch were restored. "
                            f"Try to {' or '.join(hint)}.")
        return True

    def _emit(self, finished: str | None = None, diverged: str | None = None) -> None:
        p = self.trainer.parameters
        now, epoch = time.perf_counter(), self._epoch()
        t0, e0 = self._rate_mark
        if now - t0 >= 0.5 and self._running:
            self._rate = (epoch - e0) / (now - t0)
            self._rate_mark = (now, epoch)
        records, self._pending = tuple(self._pending), []
        inspection = self._inspect() if np.isfinite(p.W).all() else None
        with self._lock:
            self._acked = False
        self.snapshot_ready.emit(Snapshot(
            epoch=epoch, unit_names=self._names, W=p.W.copy(), bias=p.bias.copy(), init=p.init.copy(),
            records=records, inspection=inspection, epochs_per_second=self._rate,
            running=self._running or self._steps > 0, finished=finished, diverged=diverged,
            sequence_names=self._sequences))

    def _inspect(self) -> Inspection | None:
        if self._sequence is None:
            return None
        settings = self._circuit.training
        with np.errstate(all="ignore"):  # near divergence the views may show huge values; no warnings
            compiled, act, back = self.trainer.inspect(self._sequence)
            params = self.trainer.parameters
            tact = forward(self._train, params)
            _, grads, tback = backward(self._train, params, tact, loss=settings.loss,
                                       truncation=settings.truncation)
        k = self._steps_of(compiled)
        y, d = tact.y_tm, tback.delta_tm
        contrib = np.zeros((len(self._src), y.shape[0]))
        if y.shape[0] > 1 and len(self._src):
            # copy t of connection a->b contributes y_a(t-1) * delta_b(t), summed over sequences
            contrib[:, 1:] = np.einsum("tsc,tsc->ct", y[:-1][:, :, self._src], d[1:][:, :, self._tgt])
        return Inspection(
            unit_names=self._names, sequence_name=self._sequence, steps=k,
            y=act.y[0, :k].copy(), net=act.net[0, :k].copy(), e=back.e[0, :k].copy(),
            delta=back.delta[0, :k].copy(), clamp_mask=compiled.clamp_mask[0, :k].copy(),
            target_mask=compiled.target_mask[0, :k].copy(),
            target_values=compiled.target_values[0, :k].copy(),
            connections=self._conn_names, contributions=contrib,
            gradient=grads.W[self._src, self._tgt].copy())

    @staticmethod
    def _steps_of(compiled) -> int:
        return int(compiled.lengths[0]) + 1
