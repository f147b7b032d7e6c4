"""The training controller: the state machine behind Train, Pause, One epoch, Stop and Re-initialise.

States: ``ready`` (a paused worker holds a freshly compiled trainer and has
sent the views its first snapshot), ``running`` and ``paused``. ``idle``
means there is no worker (the circuit has problems, or no sequences).

Undo: snapshots write the latest weights into the document's circuit for
live display without undo steps; when a run pauses, stops, finishes or
diverges, one command "Train N epochs" holding the values before and after
is pushed, so Undo takes the circuit back to where that run started.

Edits while training: a change of structure, schedule or sequences pauses
and recompiles (a new worker continues the epoch count and the curves); a
change of values or settings is sent to the trainer and applies from the
next epoch.
"""

import time

from PySide6.QtCore import QCoreApplication, QObject, QTimer, Signal

from circuitlab.engine import EngineError, Trainer
from circuitlab.gui.document import Document
from circuitlab.gui.training.values import TrainCommand, apply_parameters, capture_values
from circuitlab.gui.training.worker import Snapshot, TrainingWorker
from circuitlab.model import find_problems

IDLE, READY, RUNNING, PAUSED = "idle", "ready", "running", "paused"


class TrainingController(QObject):
    """Owns the worker thread and turns its snapshots into document values and view updates."""

    state_changed = Signal(str)
    updated = Signal(object, tuple, bool)   # (latest Snapshot, epoch records since the last update, new run)
    message = Signal(str, bool)             # (plain text for the user, is it a warning)

    def __init__(self, document: Document, refresh_weights=None, max_rate: float = 30.0, parent=None):
        super().__init__(parent)
        self.document = document
        self.refresh_weights = refresh_weights or (lambda: None)
        self.max_rate = max_rate
        self.worker: TrainingWorker | None = None
        self.state = IDLE
        self.sequence: str | None = None
        self.snapshot: Snapshot | None = None
        self.epoch_offset = 0        # epochs of this run done by earlier workers (before a recompile)
        self.run_epochs = 0          # epochs shown on the curves for the current run
        self.epoch_limit: int | None = None
        self._run_start = None       # Values before the epochs not yet committed as an undo step
        self._committed_epoch = 0
        self._pending_records: list = []
        self._pending: Snapshot | None = None
        self._new_run = True
        self._own_edit = False
        self._apply_timer = QTimer(self)
        self._apply_timer.setSingleShot(True)
        self._apply_timer.timeout.connect(self._apply)
        self._prepare_timer = QTimer(self)
        self._prepare_timer.setSingleShot(True)
        self._prepare_timer.timeout.connect(self._prepare_now)
        self._resume_state: str | None = None
        self._finished = False       # the worker's trainer stopped by itself (epochs done, target loss)
        document.structure_changed.connect(self._structure_edited)
        document.data_changed.connect(self._structure_edited)
        document.values_changed.connect(self._values_edited)
        document.settings_changed.connect(self._values_edited)
        document.replaced.connect(self._replaced)

    # ------------------------------------------------------------ commands
    def train(self) -> bool:
        """Train until paused, stopped, finished or diverged. False (and a message) if it cannot start."""
        if self.state == RUNNING:
            return True
        if not self._ready_to_train():
            return False
        self._begin_epochs()
        self.worker.resume()
        self._set_state(RUNNING)
        return True

    def step(self) -> bool:
        """Train one epoch, then pause."""
        if self.state == RUNNING:
            self.pause()
        if not self._ready_to_train():
            return False
        self._begin_epochs()
        self.worker.step()
        self._set_state(PAUSED)
        return True

    def pause(self) -> None:
        if self.state == RUNNING and self.worker is not None:
            self.worker.pause()
            self._set_state(PAUSED)

    def stop(self) -> None:
        """End the run: commit it as one undo step; the next Train starts a new run."""
        if self.worker is None:
            return
        self._end_worker()
        self._commit()
        self._new_run = True
        self.epoch_offset = 0
        self._set_state(IDLE)
        self.prepare()

    def reinitialise(self) -> None:
        """Fresh seeded weights (the settings' seed), as one undoable step; ends the current run."""
        circuit = self.document.circuit
        if find_problems(circuit):
            self._refuse()
            return
        self.stop()
        try:
            trainer = Trainer(circuit.copy())
        except EngineError as exc:
            self.message.emit(f"Cannot re-initialise: {exc}", True)
            return
        seed = circuit.training.seed
        trainer.reinitialise(seed)
        before = capture_values(circuit)
        fresh = circuit.copy()
        p = trainer.parameters
        apply_parameters(fresh, list(trainer.compiled.unit_names), p.W, p.bias, p.init)
        fresh.trained = None
        self.document.push(TrainCommand(self.document, f"Re-initialise weights (seed {seed})",
                                        before, capture_values(fresh)))
        self.message.emit(f"Weights re-initialised with seed {seed}.", False)

    def choose_sequence(self, name: str) -> None:
        self.sequence = name
        if self.worker is not None:
            self.worker.choose_sequence(name)

    def prepare(self) -> None:
        """Compile the circuit in a paused worker so the views show it (no-op if it has problems)."""
        if self.worker is not None or find_problems(self.document.circuit):
            return
        self._start_worker()

    def shutdown(self) -> None:
        """Stop the thread (window closing); the trained values stay in the document."""
        self._prepare_timer.stop()  # a pending prepare would start a thread after the window closed
        if self.worker is not None:
            self._end_worker()
            self._commit()
        self._set_state(IDLE)

    # ------------------------------------------------------------ internals
    def _ready_to_train(self) -> bool:
        if find_problems(self.document.circuit):
            self._refuse()
            return False
        if self._finished and self.worker is not None:
            # a finished trainer takes no more epochs: go on with a fresh one (the curves continue)
            self._end_worker()
        if self.worker is None:
            self._start_worker()
        return self.worker is not None

    def _refuse(self) -> None:
        problems = find_problems(self.document.circuit)
        shown = "\n".join(f"  - {p}" for p in problems[:12])
        more = f"\n  ... and {len(problems) - 12} more" if len(problems) > 12 else ""
        self.message.emit(f"Training cannot start; the circuit has {len(problems)} "
                          f"problem{'s' if len(problems) != 1 else ''}:\n{shown}{more}", True)

    def _begin_epochs(self) -> None:
        if self._run_start is None:
            self._run_start = capture_values(self.document.circuit)
        if self._new_run:
            self._new_run = False
            self.run_epochs = 0
            self._pending_records.clear()
            self.updated.emit(self.snapshot, (), True) if self.snapshot is not None else None

    def _start_worker(self) -> None:
        worker = TrainingWorker(self.document.circuit, self.sequence, self.max_rate,
                                epoch_limit=self.epoch_limit)
        worker.snapshot_ready.connect(self._received)
        worker.failed.connect(lambda text, w=worker: self._failed(w, text))
        self.worker = worker
        self._committed_epoch = 0
        self._finished = False
        worker.start()
        if self.state == IDLE:
            self._set_state(READY)

    def _end_worker(self) -> None:
        worker, self.worker = self.worker, None
        worker.snapshot_ready.disconnect(self._received)
        worker.stop()
        worker.wait()
        # the thread's final snapshot may still be queued: take it now so no epoch is lost
        self._drain(worker)

    def _drain(self, worker: TrainingWorker) -> None:
        if worker.trainer is not None and worker.trainer.history:
            last = worker.trainer.history[-1].epoch
            if self.snapshot is None or last != self.snapshot.epoch:
                p = worker.trainer.parameters
                if p.all_finite():
                    self._write_values(list(worker.trainer.compiled.unit_names), p.W, p.bias, p.init)
            self.epoch_offset += last
            self._committed_epoch = 0

    def _received(self, snap: Snapshot) -> None:
        """A snapshot from the worker thread (queued): coalesce, then apply once the loop is free."""
        self._pending_records.extend(snap.records)
        self._pending = snap
        if not self._apply_timer.isActive():
            self._apply_timer.start(0)

    def _apply(self) -> None:
        snap, self._pending = self._pending, None
        if snap is None:
            return
        started = time.perf_counter()
        try:
            self._show(snap)
        finally:
            if self.worker is not None:
                # paint now (scene updates are queued calls that post the repaint), then let the
                # worker go on: drawing and training never contend for the interpreter lock
                for _ in range(2):
                    QCoreApplication.sendPostedEvents()
                self.worker.acknowledge(time.perf_counter() - started)

    def _show(self, snap: Snapshot) -> None:
        records, self._pending_records = tuple(self._pending_records), []
        if self.epoch_offset:
            records = tuple(_shifted(r, self.epoch_offset) for r in records)
        self.run_epochs = self.epoch_offset + snap.epoch
        self.snapshot = snap
        if snap.epoch:
            self._write_values(snap.unit_names, snap.W, snap.bias, snap.init)
        self.updated.emit(snap, records, False)
        self._finished = self._finished or bool(snap.finished)
        if snap.diverged:
            self.message.emit(snap.diverged, True)
            self._commit()
            self._set_state(PAUSED)
        elif snap.finished and self.state == RUNNING:
            self.message.emit(f"Training finished: {snap.finished}.", False)
            self._commit()
            self._set_state(PAUSED)
        elif not snap.running and self.state in (RUNNING, PAUSED) and snap.epoch > self._committed_epoch:
            self._commit()
            if self.state == RUNNING:
                self._set_state(PAUSED)

    def _write_values(self, names, W, bias, init) -> None:
        apply_parameters(self.document.circuit, names, W, bias, init)
        self.refresh_weights()

    def _commit(self) -> None:
        """Push the epochs since the last commit as one undo step."""
        start, self._run_start = self._run_start, None
        if start is None:
            return
        epoch = self.snapshot.epoch if self.snapshot is not None and self.worker is not None else 0
        n = epoch - self._committed_epoch if self.worker is not None else self.run_epochs
        self._committed_epoch = epoch
        after = capture_values(self.document.circuit)
        if n <= 0 or after == start:
            return
        self._own_edit = True
        try:
            self.document.push(TrainCommand(self.document, f"Train {n} epoch{'s' if n != 1 else ''}",
                                            start, after))
        finally:
            self._own_edit = False

    def _failed(self, worker: TrainingWorker, text: str) -> None:
        if worker is not self.worker:
            return  # an earlier worker, already ended
        if self.state in (RUNNING, PAUSED):  # a worker compiled only to show the views fails quietly
            self.message.emit(f"Training cannot go on: {text}", True)
        self.worker = None
        worker.wait()
        self._commit()
        self._set_state(IDLE)

    def settle(self) -> None:
        """Pause a running run and push its epochs as an undo step now, so a question about
        unsaved work (New, Open, Close) sees them; the run can go on with Train."""
        if self.state == RUNNING:
            self._pause_and_recompile()

    def _pause_and_recompile(self) -> bool:
        """End the worker, commit its epochs, compile anew; True if a run was going."""
        was = self.state
        if self.worker is not None:
            self._end_worker()
            self._commit()
        self._set_state(IDLE)
        self._prepare_soon()
        if was == RUNNING:
            self._resume_state = PAUSED
        return was == RUNNING

    def _structure_edited(self) -> None:
        if self._own_edit:
            return
        if self._pause_and_recompile():
            self.message.emit("The circuit's structure changed: training paused and the circuit "
                              "was recompiled. Press Train to continue.", False)

    def _values_edited(self) -> None:
        if self._own_edit:
            return
        if self.worker is not None:
            self.worker.update_values(self.document.circuit)
        elif self.state == IDLE:
            self._prepare_soon()

    def _prepare_soon(self) -> None:
        """Recompile once the current burst of edits is over (one worker, not one per signal)."""
        if not self._prepare_timer.isActive():
            self._prepare_timer.start(0)

    def _prepare_now(self) -> None:
        self.prepare()
        if self._resume_state is not None and self.worker is not None:
            self._set_state(self._resume_state)
        self._resume_state = None

    def _replaced(self) -> None:
        if self.worker is not None:
            self._end_worker()
        self._run_start = None
        self._resume_state = None  # a run paused just before (New, Open) does not carry over
        self._new_run = True
        self.epoch_offset = 0
        self.snapshot = None
        self._set_state(IDLE)
        self._prepare_soon()

    def _set_state(self, state: str) -> None:
        if state == IDLE and self.worker is not None:
            state = READY
        if state != self.state:
            self.state = state
            self.state_changed.emit(state)


def _shifted(record, offset: int):
    """An epoch record renumbered to continue the run across a recompile."""
    from dataclasses import replace
    return replace(record, epoch=record.epoch + offset)
