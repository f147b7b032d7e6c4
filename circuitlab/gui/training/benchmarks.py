"""``circuitlab bench --only training-views``: live training in the window, and the unrolled view's speed.

Measured offscreen on this machine:
- training throughput in the window (1600 x 1000, every view docked and
  updating) as a fraction of the headless trainer (what ``circuitlab train``
  runs) on the same circuit and number of epochs (goal: at least 70 %);
- the longest pause of the event loop while training (goal: under 100 ms),
  from a 5 ms timer's ticks (in runs of their own: the timer slows training);
- the unrolled view's draw time for 50 units by 200 steps (goal: under 0.5 s).
"""

import os
import statistics
import tempfile
import time
from pathlib import Path

EPOCHS = 1500
EXAMPLE = Path(__file__).resolve().parents[3] / "example_circuits" / "set_reset_latch.circuit.json"


def _app():
    from PySide6.QtWidgets import QApplication

    if QApplication.instance() is None:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"
    from circuitlab.gui.app import make_application
    return make_application()


def _circuit():
    from circuitlab.model import load_circuit

    circuit = load_circuit(EXAMPLE)
    circuit.training = circuit.training.model_copy(update={"target_loss": None, "epochs": 10 * EPOCHS})
    return circuit


def headless_rate(circuit) -> float:
    from circuitlab.engine import Trainer

    trainer = Trainer(circuit, epochs=EPOCHS)
    t0 = time.perf_counter()
    trainer.run()
    return EPOCHS / (time.perf_counter() - t0)


def window_rate(app, circuit, meter: bool = False) -> tuple[float, float, int, float]:
    """(epochs per second, longest event-loop gap in s, view updates, seconds) for EPOCHS epochs in the window.

    With ``meter`` a 5 ms timer measures the longest gap between its ticks; its own Python
    calls slow training by several per cent, so throughput is measured without it.
    """
    from PySide6.QtCore import QElapsedTimer, QEventLoop, QTimer

    from circuitlab.gui.main_window import MainWindow
    from circuitlab.gui.training import arrange_docks
    from circuitlab.gui.training.controller import RUNNING

    with tempfile.TemporaryDirectory() as tmp:
        window = MainWindow(autosave_dir=tmp, restore_layout=False)
        window.resize(1600, 1000)
        window.show()
        window.document.replace(circuit, None)
        app.processEvents()
        arrange_docks(window, 1600, 1000)
        t = window.training
        deadline = time.perf_counter() + 5
        while t.controller.snapshot is None and time.perf_counter() < deadline:
            app.processEvents()
        t.controller.shutdown()
        t.controller.epoch_limit = EPOCHS
        clock, gaps = QElapsedTimer(), [0.0]
        last = [0]

        def tick():
            now = clock.nsecsElapsed()
            gaps[0] = max(gaps[0], (now - last[0]) / 1e9)
            last[0] = now

        timer = QTimer()
        timer.setInterval(5)
        timer.timeout.connect(tick)
        updates0 = t.views.updates
        clock.start()
        if meter:
            timer.start()
        loop = QEventLoop()
        t.controller.state_changed.connect(lambda state: state != RUNNING and loop.quit())
        finished = []
        # the run ends when its last snapshot arrives; the undo step pushed after it is not training
        t.controller.updated.connect(lambda snap, _r, _n: snap.finished and finished.append(time.perf_counter()))
        t0 = time.perf_counter()
        t.controller.train()
        if t.controller.state == RUNNING:
            loop.exec()  # a real event loop, as in the editor (a polling loop would compete for the GIL)
        elapsed = (finished[0] if finished else time.perf_counter()) - t0
        timer.stop()
        updates = t.views.updates - updates0
        t.controller.shutdown()
        window.files.ask_save_changes = lambda: "discard"  # the trained bench circuit is not kept
        window.close()
        window.deleteLater()
        app.processEvents()
        return EPOCHS / elapsed, gaps[0], updates, elapsed


def unrolled_draw_time(app, units: int = 50, steps: int = 200, repeats: int = 5) -> float:
    """Median seconds to lay out and paint the unrolled view of a random 50-unit circuit over 200 steps."""
    import numpy as np

    from circuitlab.gui.training.unrolled_view import UnrolledView

    rng = np.random.default_rng(0)
    names = [f"u{i}" for i in range(units)]
    conns = [(names[i], names[j]) for i in range(units) for j in range(units)
             if i == j or rng.random() < 3 / units]
    clamp = np.zeros((steps + 1, units), bool)
    clamp[:, :5] = True
    target = np.zeros((steps + 1, units), bool)
    target[1:, -5:] = True
    view = UnrolledView()
    view.resize(900, 500)
    view.show()
    app.processEvents()
    times = []
    for _ in range(repeats):
        y, e = rng.random((steps + 1, units)), rng.normal(size=(steps + 1, units))
        t0 = time.perf_counter()
        view.set_structure(names, conns, steps + 1, clamp, target)
        view.set_weights(rng.normal(size=len(conns)))
        view.set_stacks(y, e, e, e)
        view.plot_widget.viewport().repaint()
        times.append(time.perf_counter() - t0)
        view.set_structure([], [], 0)  # start each repeat from an empty view
    view.close()
    return statistics.median(times), len(conns)


def run(rounds: int = 3) -> list[dict]:
    app = _app()
    headless_rate(_circuit())  # warm up NumPy and the caches
    # alternate the two so a busy moment of the machine hits both alike; report medians
    headless, window = [], []
    for _ in range(rounds):
        headless.append(headless_rate(_circuit()))
        window.append(window_rate(app, _circuit()))
    headless = statistics.median(headless)
    gui = statistics.median(w[0] for w in window)
    rate = statistics.median(w[2] / w[3] for w in window)
    gap = max(window_rate(app, _circuit(), meter=True)[1] for _ in range(2))
    draw, n_conns = unrolled_draw_time(app)
    return [
        {"name": f"headless training, latch example ({EPOCHS} epochs, median)", "value": headless,
         "unit": "ep/s", "goal": "reference"},
        {"name": "training in the window, same circuit and epochs", "value": gui, "unit": "ep/s",
         "goal": "reference"},
        {"name": "window throughput / headless", "value": 100.0 * gui / headless, "unit": "%",
         "goal": ">= 70"},
        {"name": "longest event-loop pause while training (2 runs)", "value": 1000.0 * gap,
         "unit": "ms", "goal": "< 100"},
        {"name": "view updates per second while training", "value": rate, "unit": "1/s",
         "goal": "<= 30"},
        {"name": f"unrolled view draw, 50 units x 200 steps ({n_conns} connections)",
         "value": 1000.0 * draw, "unit": "ms", "goal": "< 500"},
    ]
