"""The Analysis panel: each button computes off the GUI thread and fills its views."""

import numpy as np
from PySide6.QtCore import Qt

from circuitlab import api


def test_each_button_computes_and_fills_its_view(qtbot, make_main_window, examples_dir):
    trained = api.train(api.load(examples_dir / "set_reset_latch.circuit.json")).circuit
    window = make_main_window(trained)
    panel = window.analysis
    for key, page in panel.pages.items():
        panel.setCurrentWidget(page)
        qtbot.mouseClick(page.button, Qt.MouseButton.LeftButton)
        qtbot.waitUntil(lambda: page.result is not None, timeout=10000)
        assert "Failed" not in page.status.text()
    assert panel.fixed_table.rowCount() == 3            # two stable latch states and the one between
    assert panel.cells_table.rowCount() > 0
    assert len(panel.horizon_plot.getPlotItem().listDataItems()) == 1
    assert len(panel.noise_plot.getPlotItem().listDataItems()) == 1
    assert len(panel.eigen_plot.getPlotItem().listDataItems()) == 1 + 3   # unit circle + one per point


def test_a_failure_is_shown_on_the_page(qtbot, make_main_window, examples_dir):
    circuit = api.load(examples_dir / "set_reset_latch.circuit.json")
    for s in circuit.sequences:
        s.held_out = True   # no training sequences: the horizon run has nothing to use
    window = make_main_window(circuit)
    page = window.analysis.pages["horizon"]
    qtbot.mouseClick(page.button, Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: page.running is None, timeout=10000)
    assert page.status.text().startswith("Failed: ") and "no training sequences" in page.status.text()


def test_weight_matrix_uses_the_canvas_colours_and_reads_values(make_main_window, examples_dir):
    from circuitlab.gui.canvas import style
    circuit = api.load(examples_dir / "tank_balancer.circuit.json")
    view = make_main_window(circuit).analysis.weights
    c = circuit.connections[0]
    i, j = circuit.unit_names().index(c.source), circuit.unit_names().index(c.target)
    rgba = view.image.image
    scale = style.weight_scale([x.weight for x in circuit.connections])
    assert tuple(rgba[i, j]) == style.weight_color(c.weight, scale).getRgb()
    assert f"{c.weight:.6g}" in view.describe(i, j)
