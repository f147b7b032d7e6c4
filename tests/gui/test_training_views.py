"""The training views on their own, fed with arrays computed by the real engine.

Checks of the main computation name their source: the identity "the per-copy
contributions of a shared weight sum to its gradient" is BPTT's definition
(Werbos 1990; docs/mathematics.md), and the gradient itself is compared with central
finite differences of the engine's loss (common practice).
"""

import numpy as np
import pytest
from PySide6.QtCore import QEvent, QPoint, QPointF, Qt
from PySide6.QtGui import QMouseEvent
from PySide6.QtWidgets import QApplication

from circuitlab.engine import Trainer, backward, compile_circuit, forward, loss_value
from circuitlab.gui.training import export
from circuitlab.gui.training.activity_view import ActivityView
from circuitlab.gui.training.contributions_view import ContributionsView
from circuitlab.gui.training.curves_view import CurvesView
from circuitlab.gui.training.unrolled_view import UnrolledView
from circuitlab.model import load_circuit


@pytest.fixture
def latch(examples_dir):
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    compiled = compile_circuit(circuit)
    params = compiled.parameters_from_circuit()
    act = forward(compiled, params)
    loss, grads, back = backward(compiled, params, act, loss=circuit.training.loss)
    return circuit, compiled, params, act, back, grads


def _view_pixel(plot, x, y) -> QPoint:
    """Widget pixel of view point (x, y) in a pyqtgraph PlotWidget."""
    vb = plot.getPlotItem().getViewBox()
    scene_pt = vb.mapViewToScene(pg_point(x, y))
    return plot.mapFromScene(scene_pt)


def pg_point(x, y):
    from PySide6.QtCore import QPointF
    return QPointF(x, y)


def test_unrolled_view_click_selects_copies_and_cells(qtbot, latch):
    circuit, compiled, params, act, back, _ = latch
    view = UnrolledView()
    qtbot.addWidget(view)
    view.resize(800, 360)
    view.show()
    qtbot.waitExposed(view)
    steps = int(compiled.lengths[0]) + 1
    conns = [c.key for c in circuit.connections]
    view.set_structure(compiled.unit_names, conns, steps, compiled.clamp_mask[0, :steps],
                       compiled.target_mask[0, :steps])
    view.set_weights([c.weight for c in circuit.connections])
    view.set_stacks(act.y[0, :steps], act.net[0, :steps], back.e[0, :steps], back.delta[0, :steps])
    qtbot.wait(50)

    # click the middle of the copy between step 3 and 4 of open_pulse -> latched_open (row 0 -> row 2)
    with qtbot.waitSignal(view.connection_selected) as blocker:
        qtbot.mouseClick(view.plot_widget.viewport(), Qt.LeftButton, pos=_view_pixel(view.plot_widget, 3.5, 1.0))
    assert blocker.args == ["open_pulse", "latched_open"]
    assert view.highlighted_segments() == steps - 1  # one copy per step 1..T

    # click the cell of latched_open at step 5: the info line shows the engine's numbers
    j = compiled.unit_index("latched_open")
    with qtbot.waitSignal(view.cell_selected) as blocker:
        qtbot.mouseClick(view.plot_widget.viewport(), Qt.LeftButton, pos=_view_pixel(view.plot_widget, 5, j))
    assert blocker.args == ["latched_open", 5]
    text = view.info.text()
    for value in (act.y[0, 5, j], act.net[0, 5, j], back.e[0, 5, j], back.delta[0, 5, j]):
        assert f"{value:.5g}" in text


def test_contributions_sum_to_the_gradient(qtbot, latch):
    circuit, compiled, params, act, back, grads = latch
    view = ContributionsView()
    qtbot.addWidget(view)
    from circuitlab.engine import contributions
    a, b = "close_pulse", "latched_open"
    values = contributions(compiled, act, back, a, b)
    i, j = compiled.unit_index(a), compiled.unit_index(b)
    view.set_contributions(a, b, values, float(grads.W[i, j]))
    # BPTT: a shared weight's gradient is the sum of its copies' contributions
    # (Rumelhart, Hinton and Williams, 1986, cited from memory)
    assert view.total == pytest.approx(grads.W[i, j], rel=1e-10, abs=1e-14)
    # ... and that gradient agrees with central finite differences of the loss (common practice)
    h = 1e-6
    up, down = params.copy(), params.copy()
    up.W[i, j] += h
    down.W[i, j] -= h
    loss = circuit.training.loss
    fd = (loss_value(compiled, forward(compiled, up), loss)
          - loss_value(compiled, forward(compiled, down), loss)) / (2 * h)
    assert view.total == pytest.approx(fd, rel=1e-5, abs=1e-9)
    assert f"{view.total:.6g}" in view.summary.text()
    header, rows = view.export_table()
    assert header == ["step", "contribution"] and len(rows) == len(values) - 1


def test_activity_view_switches_stacks_and_reports_hover(qtbot, latch):
    circuit, compiled, params, act, back, _ = latch
    view = ActivityView()
    qtbot.addWidget(view)
    view.resize(700, 320)
    view.show()
    qtbot.waitExposed(view)
    steps = int(compiled.lengths[0]) + 1
    view.set_data(compiled.unit_names, act.y[0, :steps], back.e[0, :steps], back.delta[0, :steps],
                  compiled.target_mask[0, :steps], compiled.target_values[0, :steps])
    qtbot.wait(50)
    j = compiled.unit_index("latched_open")
    vb = view.plot.getViewBox()
    pos = view.graphics.mapFromScene(vb.mapViewToScene(pg_point(7, j)))
    # a real mouse-move event on the plot's viewport (sent directly: QTest's moves go to whichever
    # window the offscreen platform thinks is under the cursor, which other tests' windows may be)
    viewport = view.graphics.viewport()
    move = QMouseEvent(QEvent.Type.MouseMove, QPointF(pos), QPointF(viewport.mapToGlobal(pos)),
                       Qt.NoButton, Qt.NoButton, Qt.NoModifier)
    QApplication.sendEvent(viewport, move)
    qtbot.waitUntil(lambda: "step 7" in view.hover.text())
    assert f"{act.y[0, 7, j]:.5g}" in view.hover.text()
    assert "target" in view.hover.text()  # latched_open carries a target at every step

    view.choice.setFocus()
    qtbot.keyClick(view.choice, Qt.Key_Down)  # states y -> e
    assert view.stack == "e"
    np.testing.assert_array_equal(view.shown(), back.e[0, :steps])
    lo, hi = view.colorbar.levels()
    assert lo == pytest.approx(-hi) and hi > 0  # derivatives on a scale centred on zero
    header, rows = view.export_table()
    assert len(rows) == steps * len(compiled.unit_names)


def test_curves_plot_engine_records_and_export(qtbot, examples_dir, tmp_path):
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    trainer = Trainer(circuit)
    records = [trainer.epoch() for _ in range(12)]
    view = CurvesView()
    qtbot.addWidget(view)
    view.resize(600, 400)
    view.show()
    view.add_records(records[:5])
    view.add_records(records[5:])
    assert view.epochs == 12
    np.testing.assert_array_equal(view.column("loss"), [r.loss for r in records])
    np.testing.assert_array_equal(view.e_norm, records[-1].e_norm)
    assert view.log_scale.isChecked()
    qtbot.mouseClick(view.log_scale, Qt.LeftButton)
    assert not view.log_scale.isChecked() and not view.loss_plot.getAxis("left").logMode

    png, svg, csv_path = tmp_path / "c.png", tmp_path / "c.svg", tmp_path / "c.csv"
    export.export_png(view.graphics.ci, png)
    export.export_svg(view.graphics.ci, svg)
    export.write_csv(csv_path, *view.export_table())
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "<svg" in svg.read_text()
    lines = csv_path.read_text().splitlines()
    assert lines[0].split(",") == list(CurvesView.COLUMNS) and len(lines) == 13
    assert float(lines[1].split(",")[1]) == records[0].loss  # full precision survives the file


def test_curve_axes_keep_their_epoch_labels_apart_and_inside(qtbot, examples_dir):
    """In a narrow dock all four plots stay in sight, the small plots' epoch labels do not touch,
    and the loss plot's last one is not cut by the window's edge."""
    from PySide6.QtGui import QFontMetrics
    trainer = Trainer(load_circuit(examples_dir / "set_reset_latch.circuit.json"))
    view = CurvesView()
    qtbot.addWidget(view)
    view.resize(420, 330)
    view.show()
    qtbot.waitExposed(view)
    view.add_records([trainer.epoch() for _ in range(90)])
    QApplication.processEvents()
    for plot in (view.loss_plot, view.grad_plot, view.rate_plot):
        axis = plot.getAxis("bottom")
        lo, hi = axis.range
        size = axis.geometry().width()
        spacing, values = axis.tickValues(lo, hi, size)[0]
        labels = axis.tickStrings(values, axis.scale, spacing)
        metrics = QFontMetrics(axis.style["tickFont"] or view.font())
        widest = max(metrics.horizontalAdvance(t) for t in labels)
        assert len(labels) >= 2
        assert spacing / (hi - lo) * size >= widest + 6, (plot, labels)
    axis = view.loss_plot.getAxis("bottom")
    spacing, values = axis.tickValues(*axis.range, axis.geometry().width())[0]
    last = max(values)
    x = view.loss_plot.getViewBox().mapViewToScene(pg_point(last, 0)).x()
    half = QFontMetrics(axis.style["tickFont"] or view.font()).horizontalAdvance(f"{last:g}") / 2
    assert x + half <= view.graphics.width()
    view.resize(330, 330)  # the dock's width in a 1280 x 800 window
    QApplication.processEvents()
    for plot in (view.loss_plot, view.enorm_plot, view.grad_plot, view.rate_plot):
        assert plot.sceneBoundingRect().right() <= view.graphics.width(), plot


def test_views_out_of_sight_catch_up_when_shown(qtbot, make_main_window, examples_dir):
    """The activity stack behind the inputs grid's tab is not redrawn while training; a click on
    its tab shows the latest snapshot. A closed learning-curves panel catches up when reopened."""
    from PySide6.QtWidgets import QTabBar

    from circuitlab.gui.training.controller import PAUSED, READY
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    circuit.training = circuit.training.model_copy(update={"target_loss": None, "epochs": 200})
    win = make_main_window(circuit, size=(1600, 1000))
    t = win.training
    qtbot.waitUntil(lambda: t.controller.state == READY and t.controller.snapshot is not None)
    qtbot.waitUntil(lambda: win.panel("training_activity") in win.tabifiedDockWidgets(win.panel("schedule_grid")))
    bar = next(b for b in win.findChildren(QTabBar) if b.isVisible()
               and "Activity Stack" in [b.tabText(i) for i in range(b.count())])

    def click_tab(text):
        index = next(i for i in range(bar.count()) if bar.tabText(i) == text)
        qtbot.mouseClick(bar, Qt.LeftButton, pos=bar.tabRect(index).center())
        QApplication.processEvents()

    click_tab("Inputs and Targets")
    before = t.activity.shown().copy()
    curves_dock = win.panel("training_curves")
    curves_dock.toggleViewAction().trigger()  # View > Panels > Learning Curves: closed
    assert not curves_dock.isVisible()
    qtbot.mouseClick(t.panel.buttons["train"], Qt.LeftButton)
    qtbot.waitUntil(lambda: t.controller.state == PAUSED, timeout=30_000)
    latest = t.controller.snapshot.inspection.y
    assert not np.allclose(latest, before)  # training changed the states...
    np.testing.assert_array_equal(t.activity.shown(), before)  # ...but the hidden stack was left alone
    assert t.curves.train_curve.getData()[0] is None or len(t.curves.train_curve.getData()[0]) == 0
    click_tab("Activity Stack")
    np.testing.assert_allclose(t.activity.shown(), latest)
    curves_dock.toggleViewAction().trigger()
    QApplication.processEvents()
    np.testing.assert_array_equal(t.curves.train_curve.getData()[0], np.arange(1, 201))
