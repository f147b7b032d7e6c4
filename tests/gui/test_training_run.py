"""Training in the main window: the buttons, the worker thread, live updates, undo, divergence."""

import time

import numpy as np
import pytest
from PySide6.QtCore import QElapsedTimer, Qt, QTimer

from circuitlab.engine import backward, compile_circuit, forward
from circuitlab.gui.training.controller import PAUSED, READY, RUNNING
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, load_circuit


@pytest.fixture
def long_latch(examples_dir):
    """The latch example with its early stop switched off, so a run lasts until stopped."""
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    circuit.training = circuit.training.model_copy(update={"target_loss": None, "epochs": 1_000_000})
    return circuit


class GapMeter:
    """The longest gap between ticks of a 5 ms timer: how long the event loop was ever blocked."""

    def __init__(self):
        self.clock = QElapsedTimer()
        self.timer = QTimer()
        self.timer.setInterval(5)
        self.timer.timeout.connect(self._tick)
        self.longest = 0.0
        self._last = None

    def start(self):
        self.clock.start()
        self._last = self.clock.nsecsElapsed()
        self.timer.start()

    def _tick(self):
        now = self.clock.nsecsElapsed()
        self.longest = max(self.longest, (now - self._last) / 1e9)
        self._last = now

    def stop(self):
        self.timer.stop()


def test_train_pause_step_stop_and_undo(qtbot, make_main_window, long_latch):
    win = make_main_window(long_latch)
    t = win.training
    qtbot.waitUntil(lambda: t.controller.state == READY and t.controller.snapshot is not None)
    start_weights = [c.weight for c in win.document.circuit.connections]
    meter = GapMeter()
    meter.start()
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    assert t.controller.state == RUNNING
    # the loss falls while the window keeps drawing
    qtbot.waitUntil(lambda: t.curves.epochs >= 60, timeout=20_000)
    meter.stop()
    losses = t.curves.column("loss")
    assert losses[-1] < 0.9 * losses[0]
    updates = t.views.updates
    assert 2 <= updates <= 1 + 40 * (time.perf_counter() - 0)  # snapshots arrive, never one per epoch
    assert updates < t.curves.epochs  # throttled: fewer view updates than epochs
    assert meter.longest < 0.25, f"the event loop was blocked for {meter.longest:.3f} s"
    # the canvas's model shows the weights changing live, without an undo step per snapshot
    assert [c.weight for c in win.document.circuit.connections] != start_weights
    assert win.document.undo_stack.count() == 0

    qtbot.mouseClick(t.panel.buttons["pause"], Qt.LeftButton)
    qtbot.waitUntil(lambda: not t.controller.snapshot.running)
    assert t.controller.state == PAUSED
    paused_at = t.controller.run_epochs
    qtbot.wait(200)
    assert t.controller.run_epochs == paused_at  # nothing trains while paused
    assert win.document.undo_stack.count() == 1
    assert win.document.undo_stack.text(0) == f"Train {paused_at} epochs"

    qtbot.mouseClick(t.panel.buttons["step"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.run_epochs == paused_at + 1)
    qtbot.waitUntil(lambda: t.curves.epochs == paused_at + 1)
    assert t.controller.state == PAUSED

    qtbot.mouseClick(t.panel.buttons["stop"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.state == READY)
    stack = win.document.undo_stack
    assert stack.text(stack.count() - 1) == "Train 1 epoch"
    trained = [c.weight for c in win.document.circuit.connections]
    while stack.canUndo():
        stack.undo()
    assert [c.weight for c in win.document.circuit.connections] == start_weights
    stack.redo()
    stack.redo()
    assert [c.weight for c in win.document.circuit.connections] == trained


def test_views_follow_the_engine_and_contributions_sum_to_its_gradient(qtbot, make_main_window, long_latch):
    win = make_main_window(long_latch)
    t = win.training
    qtbot.mouseClick(t.panel.buttons["step"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.snapshot is not None and t.controller.snapshot.epoch == 1)
    # select a connection on the canvas: all its copies light up, and its contributions are shown
    win.canvas.circuit_scene.select(connections=[("latched_open", "latched_open")])
    steps = t.unrolled.steps
    assert t.unrolled.selected_connection == ("latched_open", "latched_open")
    assert t.unrolled.highlighted_segments() == steps - 1
    # the engine's own gradient on the training sequences, computed here independently
    circuit = win.document.circuit
    full = compile_circuit(circuit)
    train = full.subset([i for i, h in enumerate(full.held_out) if not h])
    params = train.parameters_from_circuit()
    _, grads, _ = backward(train, params, forward(train, params), loss=circuit.training.loss)
    j = train.unit_index("latched_open")
    # BPTT: the copies' contributions sum to the shared weight's gradient (docs/mathematics.md, "Backpropagation through time";
    # source: Rumelhart, Hinton and Williams, 1986, cited from memory)
    assert t.contributions.total == pytest.approx(grads.W[j, j], rel=1e-9, abs=1e-13)
    assert t.contributions.gradient == pytest.approx(grads.W[j, j], rel=1e-9, abs=1e-13)
    # the activity stack shows the chosen sequence's states as the engine computes them
    act = forward(full, params)
    s = full.sequence_index(t.panel.sequence.currentText())
    np.testing.assert_allclose(t.activity.shown(), act.y[s, :t.activity.shape[0]], rtol=1e-12)
    # choosing another sequence redraws both views for it
    t.panel.sequence.setCurrentText("day9")
    qtbot.waitUntil(lambda: t.activity.shape[0] == 41)
    assert t.unrolled.steps == 41


def _exploding() -> Circuit:
    """A linear unit feeding itself with gain 3: plain gradient descent at rate 50 overflows."""
    steps = 30
    return Circuit(
        units=[Unit(name="drive", activation="linear"), Unit(name="out", activation="linear")],
        connections=[{"source": "drive", "target": "out", "weight": 1.0},
                     {"source": "out", "target": "out", "weight": 3.0}],
        schedule={"drive": UnitSchedule(clamp="every"), "out": UnitSchedule(target="every")},
        sequences=[Sequence(name="s", length=steps, clamps={"drive": [1.0] * (steps + 1)},
                            targets={"out": [None] + [0.5] * steps})],
        training={"optimizer": "sgd", "learning_rate": 50.0, "momentum": 0.0, "epochs": 1000})


def test_divergence_is_stopped_restored_and_explained(qtbot, make_main_window):
    win = make_main_window(_exploding())
    t = win.training
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.state == PAUSED, timeout=10_000)
    text = t.panel.notice.text()
    assert t.panel.notice.isVisible()
    assert "diverged" in text and "learning rate (now 50)" in text and "clipping" in text
    weights = [c.weight for c in win.document.circuit.connections]
    assert all(np.isfinite(weights))
    assert np.isfinite(t.curves.column("loss")).all()  # the non-finite epoch is not plotted
    # with the suggested remedy, training goes on from the restored weights
    t.panel.settings.learning_rate.setValue(1e-4)
    epochs = t.controller.run_epochs
    qtbot.mouseClick(t.panel.buttons["step"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.run_epochs == epochs + 1)
    assert np.isfinite(t.curves.column("loss")[-1])


def test_training_refuses_a_circuit_with_problems(qtbot, make_main_window, long_latch):
    long_latch.sequences[0].clamps.pop("open_pulse")  # clamped every step, but no values
    win = make_main_window(long_latch)
    t = win.training
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    assert t.controller.state != RUNNING and t.controller.worker is None
    assert "cannot start" in t.panel.notice.text() and "open_pulse" in t.panel.notice.text()
    assert win.document.undo_stack.count() == 0  # nothing was changed
    # once the problem is gone, training starts and the refusal no longer shows
    win.document.undo_stack.push(_clamp_values(win.document, "open_pulse"))
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    assert t.controller.state == RUNNING
    assert t.panel.notice.isHidden()


def _clamp_values(document, unit):
    """An undo step that gives every sequence zeros for ``unit``'s clamp."""
    from circuitlab.gui.commands.sequence_edits import ReplaceSequences
    seqs = [s.model_copy(update={"clamps": {**s.clamps, unit: [0.0] * (s.length + 1)}})
            for s in document.circuit.sequences]
    return ReplaceSequences(document, seqs, f"Zeros for {unit}")


def test_train_after_a_finished_run_trains_on(qtbot, make_main_window, long_latch):
    long_latch.training = long_latch.training.model_copy(update={"epochs": 15})
    win = make_main_window(long_latch)
    t = win.training
    qtbot.waitUntil(lambda: t.controller.state == READY and t.controller.snapshot is not None)
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.state == PAUSED, timeout=20_000)
    assert t.curves.epochs == 15 and "finished" in t.panel.notice.text()
    trained = [c.weight for c in win.document.circuit.connections]
    # Train again: fifteen more epochs on the same curves, from the trained weights, one more undo step
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.state == PAUSED and t.curves.epochs == 30, timeout=20_000)
    assert "cannot" not in t.panel.notice.text()
    np.testing.assert_array_equal(t.curves.column("epoch"), np.arange(1, 31))
    stack = win.document.undo_stack
    assert [stack.text(i) for i in range(stack.count())] == ["Train 15 epochs"] * 2
    stack.undo()
    assert [c.weight for c in win.document.circuit.connections] == trained


def test_edits_while_training(qtbot, make_main_window, long_latch):
    from circuitlab.gui.commands.units import RemoveItems
    win = make_main_window(long_latch)
    t = win.training
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.curves.epochs >= 5, timeout=10_000)
    # a value edit (the settings' learning rate) reaches the trainer from the next epoch on
    t.panel.settings.learning_rate.setValue(0.05)
    qtbot.waitUntil(lambda: t.curves.epochs > 0 and t.curves.column("learning_rate")[-1] == 0.05,
                    timeout=10_000)
    assert t.controller.state == RUNNING
    # a structural edit pauses and recompiles; the curves continue the run's epoch count
    before = t.controller.run_epochs
    win.document.push(RemoveItems(win.document, [], [("close_pulse", "latched_open")]))
    assert t.controller.state != RUNNING
    qtbot.waitUntil(lambda: t.controller.state == PAUSED and t.controller.worker is not None)
    qtbot.waitUntil(lambda: len(t.unrolled.connections) == 2)
    assert "structure changed" in t.panel.notice.text()
    qtbot.mouseClick(t.panel.buttons["step"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.curves.epochs >= before + 1, timeout=10_000)
    assert t.curves.column("epoch")[-1] > before


def test_settings_panel_edits_are_undoable(qtbot, main_window):
    panel = main_window.training.panel.settings
    doc = main_window.document
    seed = panel.seed.box
    seed.setFocus()
    seed.selectAll()
    qtbot.keyClicks(seed, "42")
    qtbot.keyClick(seed, Qt.Key_Return)
    assert doc.circuit.training.seed == 42
    qtbot.mouseClick(panel.clip_norm.switch, Qt.LeftButton)
    assert doc.circuit.training.clip_norm is not None and panel.clip_norm.box.isEnabled()
    doc.undo_stack.undo()
    assert doc.circuit.training.clip_norm is None and not panel.clip_norm.switch.isChecked()
    doc.undo_stack.undo()
    assert doc.circuit.training.seed == 0 and panel.seed.value() == 0
    # a value the settings refuse is explained and changes nothing
    rate = panel.learning_rate.box
    rate.setFocus()
    rate.selectAll()
    qtbot.keyClicks(rate, "0")
    qtbot.keyClick(rate, Qt.Key_Return)
    assert panel.problem.isVisible() and "Learning rate" in panel.problem.text()
    assert doc.circuit.training.learning_rate == 0.01 and panel.learning_rate.value() == 0.01
    assert doc.undo_stack.index() == 0


def test_screenshot_after_training(isolated_settings, examples_dir, tmp_path):
    from PySide6.QtGui import QImage

    from circuitlab.cli import build_editor_parser
    from circuitlab.gui.app import run_editor
    from circuitlab.gui.training import screenshot

    trained = []
    original = screenshot.train_epochs
    screenshot.train_epochs = lambda training, n, timeout=600.0: trained.append(
        (original(training, n, timeout), training.curves.epochs))
    try:
        out = tmp_path / "shot.png"
        args = build_editor_parser().parse_args(
            [str(examples_dir / "two_step_echo.circuit.json"), "--train-epochs", "25",
             "--screenshot", str(out), "--size", "1200x800"])
        assert run_editor(args) == 0
    finally:
        screenshot.train_epochs = original
    assert trained == [(True, 25)]  # the run finished and the curves hold its 25 epochs
    image = QImage(str(out))
    assert (image.width(), image.height()) == (1200, 800)


def test_reinitialise_is_seeded_and_undoable(qtbot, make_main_window, long_latch):
    win = make_main_window(long_latch)
    t = win.training
    weights = lambda: [c.weight for c in win.document.circuit.connections]  # noqa: E731
    original = weights()
    qtbot.mouseClick(t.panel.buttons["reinit"], Qt.LeftButton)
    first = weights()
    assert first != original
    assert win.document.undo_stack.text(0) == f"Re-initialise weights (seed {long_latch.training.seed})"
    qtbot.mouseClick(t.panel.buttons["reinit"], Qt.LeftButton)
    assert weights() == first  # the same seed draws the same weights
    win.document.undo_stack.undo()
    win.document.undo_stack.undo()
    assert weights() == original
    # training starts from the re-initialised values: its first loss is theirs
    win.document.undo_stack.redo()
    from circuitlab.engine import loss_value
    full = compile_circuit(win.document.circuit)
    train = full.subset([i for i, h in enumerate(full.held_out) if not h])
    params = train.parameters_from_circuit()
    expected = loss_value(train, forward(train, params), long_latch.training.loss)
    qtbot.mouseClick(t.panel.buttons["step"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.curves.epochs == 1)
    assert t.curves.column("loss")[0] == pytest.approx(expected, rel=1e-12)


def test_a_live_run_counts_as_unsaved_work(qtbot, make_main_window, long_latch, tmp_path):
    """New and Close while training ask about the trained weights; a cancelled close keeps the run."""
    from circuitlab.model import save_circuit
    path = tmp_path / "latch.circuit.json"
    save_circuit(long_latch, path)
    win = make_main_window(path)
    asked = []
    win.files.ask_save_changes = lambda: asked.append(win.document.undo_stack.undoText()) or "cancel"
    t = win.training
    qtbot.waitUntil(lambda: t.controller.state == READY and t.controller.snapshot is not None)
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.curves.epochs >= 10, timeout=20_000)
    assert not win.document.is_modified  # no undo step yet: the run is still going
    win.activateWindow()
    qtbot.keyClick(win, Qt.Key_N, Qt.ControlModifier)
    assert asked and asked[-1].startswith("Train ")  # the run was pushed before the question
    assert win.document.path == str(path.resolve())  # cancelled: the trained circuit stays
    qtbot.waitUntil(lambda: t.controller.state == PAUSED and t.controller.worker is not None)
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.run_epochs >= t.curves.epochs and t.curves.epochs >= 20,
                    timeout=20_000)
    n = len(asked)
    assert not win.close()
    assert len(asked) == n + 1 and win.isVisible()
    # the cancelled close paused the run without ending the thread: Train goes on
    qtbot.waitUntil(lambda: t.controller.state == PAUSED and t.controller.worker is not None)
    epochs = t.curves.epochs
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.curves.epochs > epochs + 3, timeout=20_000)
    win.files.ask_save_changes = lambda: "discard"
    assert win.close()
    assert t.controller.worker is None
