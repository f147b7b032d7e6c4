"""The Analysis panel: past the horizon, fixed points, robustness, state space, predictions, weights.

Each page computes on request (its button) in a pool thread on a copy of the
circuit, so the editor never waits; a failure is shown on the page.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, QThreadPool
from PySide6.QtWidgets import (QHBoxLayout, QLabel, QPushButton, QTableWidget, QTableWidgetItem, QTabWidget,
                               QVBoxLayout, QWidget)

from circuitlab.engine import compile_circuit
from circuitlab.engine.analysis import (fixed_points_of, noise_curve, past_horizon, predictions, state_space)
from circuitlab.gui.analysis.weight_matrix import WeightMatrixView
from circuitlab.gui.analysis.worker import AnalysisJob
from circuitlab.gui.training.style import plot_widget

PALETTE = ["#1f618d", "#d35400", "#117a65", "#7d3c98", "#b7950b", "#a93226", "#2e4053", "#148f77"]
ROW_LIMIT = 2000  # prediction rows shown in the table (all of them go to CSV via the API)


class AnalysisPage(QWidget):
    """A page with a Compute button, a status line and its views; ``compute`` runs ``job`` off the GUI thread."""

    def __init__(self, panel, button_text: str, job, show):
        super().__init__()
        self.panel, self.job, self.show_result = panel, job, show
        self.button = QPushButton(button_text)
        self.status = QLabel("Not computed yet: press the button.")
        self.status.setWordWrap(True)
        top = QHBoxLayout()
        top.addWidget(self.button)
        top.addWidget(self.status, 1)
        self.body = QVBoxLayout(self)
        self.body.addLayout(top)
        self.button.clicked.connect(self.compute)
        self.running = None
        self.result = None

    def compute(self) -> None:
        circuit = self.panel.window.document.circuit.copy()
        self.button.setEnabled(False)
        self.status.setText("Computing...")
        job = AnalysisJob(lambda: self._run(circuit))
        job.signals.done.connect(self._done)
        job.signals.failed.connect(self._failed)
        self.running = job
        QThreadPool.globalInstance().start(job)

    def _run(self, circuit):
        comp = compile_circuit(circuit)
        return self.job(comp, comp.parameters_from_circuit())

    def _done(self, result) -> None:
        self.running, self.result = None, result
        self.button.setEnabled(True)
        try:
            self.status.setText(self.show_result(result))
        except Exception as exc:  # a view that cannot show the result says so
            self.status.setText(f"Could not show the result: {exc}")

    def _failed(self, message: str) -> None:
        self.running = None
        self.button.setEnabled(True)
        self.status.setText(f"Failed: {message}")
        self.status.setStyleSheet("color: #a93226")


def _table(headers: list[str]) -> QTableWidget:
    t = QTableWidget(0, len(headers))
    t.setHorizontalHeaderLabels(headers)
    t.setEditTriggers(QTableWidget.EditTrigger.NoEditTriggers)
    t.verticalHeader().setVisible(False)
    t.horizontalHeader().setStretchLastSection(True)
    return t


def _fill(table: QTableWidget, rows: list[list]) -> None:
    table.setRowCount(len(rows))
    for r, row in enumerate(rows):
        for c, v in enumerate(row):
            text = f"{v:.4g}" if isinstance(v, float) else str(v)
            table.setItem(r, c, QTableWidgetItem(text))
    table.resizeColumnsToContents()


class AnalysisPanel(QTabWidget):
    """The pages of the panel; ``pages`` maps a key to its AnalysisPage."""

    def __init__(self, window):
        super().__init__()
        self.window = window
        self.pages: dict[str, AnalysisPage] = {}
        self._horizon_page()
        self._fixed_page()
        self._noise_page()
        self._space_page()
        self._predictions_page()
        self.weights = WeightMatrixView(window.document)
        self.addTab(self.weights, "Weight Matrix")

    def _add(self, key, title, button, job, show) -> AnalysisPage:
        page = AnalysisPage(self, button, job, show)
        self.pages[key] = page
        self.addTab(page, title)
        return page

    # ---------------------------------------------------------------- pages
    def _horizon_page(self) -> None:
        plot = plot_widget()
        plot.setLabel("bottom", "step")
        plot.setLabel("left", "state")
        plot.addLegend(offset=(-10, 10))
        self.horizon_plot = plot

        def show(run) -> str:
            plot.clear()
            s = 0
            L = int(run.horizons[s])
            y = run.states(run.sequence_names[s])
            targets = [v for v in run.verdicts if v["sequence"] == run.sequence_names[s]]
            for k, v in enumerate(targets):
                j = run.unit_names.index(v["unit"])
                pen = pg.mkPen(PALETTE[k % len(PALETTE)], width=2)
                plot.plot(np.arange(len(y)), y[:, j], pen=pen, name=f"{v['unit']}: {v['verdict']}"
                          + (f" (period {v['period']})" if v["period"] else ""))
                plot.addItem(pg.InfiniteLine(v["final_target"], angle=0,
                                             pen=pg.mkPen(PALETTE[k % len(PALETTE)], style=Qt.PenStyle.DotLine)))
            plot.addItem(pg.InfiniteLine(L, angle=90, pen=pg.mkPen("#707070", style=Qt.PenStyle.DashLine),
                                         label="training horizon", labelOpts={"position": 0.95}))
            counts = {}
            for r in run.summary():
                counts[r["verdict"]] = counts.get(r["verdict"], 0) + 1
            told = ", ".join(f"{n} {k}" for k, n in counts.items())
            return (f"Sequence '{run.sequence_names[s]}' run to {len(y) - 1} steps (inputs held). "
                    f"Target units over all training sequences: {told}.")

        page = self._add("horizon", "Past the Horizon", "Run Past the Horizon",
                         lambda c, p: past_horizon(c, p, factor=4), show)
        page.body.addWidget(plot, 1)

    def _fixed_page(self) -> None:
        table = _table(["#", "stable", "|λ| largest", "time constant", "state"])
        plane = plot_widget()
        plane.setAspectLocked(True)
        plane.setLabel("bottom", "real part")
        plane.setLabel("left", "imaginary part")
        self.fixed_table, self.eigen_plot = table, plane

        def show(report) -> str:
            names = report.map.unit_names
            rows = []
            for k, p in enumerate(report.points, 1):
                tc = "no decay" if not np.isfinite(p.time_constant) else f"{p.time_constant:.3g} steps"
                state = ", ".join(f"{names[i]}={p.state[i]:.3g}" for i in report.map.free[:6])
                rows.append([k, "yes" if p.stable else "no", p.largest_magnitude, tc, state])
            _fill(table, rows)
            plane.clear()
            a = np.linspace(0, 2 * np.pi, 200)
            plane.plot(np.cos(a), np.sin(a), pen=pg.mkPen("#808080", width=1.5))
            for k, p in enumerate(report.points):
                ev = p.eigenvalues
                plane.plot(ev.real, ev.imag, pen=None, symbol="o" if p.stable else "x", symbolSize=10,
                           symbolBrush=PALETTE[k % len(PALETTE)], symbolPen=PALETTE[k % len(PALETTE)])
            held = ", ".join(f"{names[i]}={v:g}" for i, v in report.map.held.items()) or "nothing held"
            return (f"{len(report.points)} fixed point(s) with {held}; free weights: spectral radius "
                    f"{report.spectral_radius:.3g}, largest singular value {report.largest_singular_value:.3g}. "
                    "Eigenvalues: o stable point, x unstable; the circle is |λ| = 1.")

        page = self._add("fixed", "Fixed Points", "Find Fixed Points", lambda c, p: fixed_points_of(c, p), show)
        row = QHBoxLayout()
        row.addWidget(table, 3)
        row.addWidget(plane, 2)
        page.body.addLayout(row, 1)

    def _noise_page(self) -> None:
        plot = plot_widget()
        plot.setLabel("bottom", "noise size σ (added at every step)")
        plot.setLabel("left", "loss")
        self.noise_plot = plot

        def show(curve) -> str:
            plot.clear()
            x, m, s = curve.sigmas, curve.means, curve.spreads
            plot.addItem(pg.ErrorBarItem(x=x, y=m, height=2 * s, beam=0.002, pen=pg.mkPen("#5d6d7e")))
            plot.plot(x, m, pen=pg.mkPen("#1f618d", width=2), symbol="o", symbolBrush="#1f618d")
            return f"Loss on the training sequences, mean ± spread of {curve.levels[0].losses.size} seeded repeats."

        page = self._add("noise", "Robustness", "Measure Robustness",
                         lambda c, p: noise_curve(c, p, (0.0, 0.01, 0.02, 0.05, 0.1, 0.2)), show)
        page.body.addWidget(plot, 1)

    def _space_page(self) -> None:
        plot = plot_widget()
        plot.setLabel("bottom", "component 1")
        plot.setLabel("left", "component 2")
        self.space_plot = plot

        def job(c, p):
            fp = fixed_points_of(c, p, starts=32)
            return state_space(c, p, fixed_points=np.array([q.state for q in fp.points])), fp

        def show(result) -> str:
            space, fp = result
            plot.clear()
            for k, tr in enumerate(space.trajectories):
                y2 = tr[:, 1] if tr.shape[1] > 1 else np.zeros(len(tr))
                colour = PALETTE[k % len(PALETTE)]
                plot.plot(tr[:, 0], y2, pen=pg.mkPen(colour, width=1.5))
                plot.plot(tr[:1, 0], y2[:1], pen=None, symbol="t", symbolSize=9, symbolBrush=colour)
            pts = space.fixed_points
            if len(pts):
                y2 = pts[:, 1] if pts.shape[1] > 1 else np.zeros(len(pts))
                plot.plot(pts[:, 0], y2, pen=None, symbol="star", symbolSize=16, symbolBrush="#f0a202",
                          symbolPen="#303030")
            shares = ", ".join(f"{100 * v:.1f} %" for v in space.explained)
            plot.setLabel("bottom", f"component 1 ({100 * space.explained[0]:.1f} % of the variance)")
            if len(space.explained) > 1:
                plot.setLabel("left", f"component 2 ({100 * space.explained[1]:.1f} %)")
            return (f"{len(space.trajectories)} sequences of the free units ({len(space.unit_names)}); "
                    f"variance explained: {shares}. ▲ start, ★ fixed point.")

        page = self._add("space", "State Space", "Project the States", job, show)
        page.body.addWidget(plot, 1)

    def _predictions_page(self) -> None:
        summary = _table(["sequence", "held out", "cells", "mean loss", "largest |error|", "within 0.1"])
        cells = _table(["sequence", "step", "unit", "output", "target", "error", "cell loss"])
        self.summary_table, self.cells_table = summary, cells

        def show(pred) -> str:
            _fill(summary, [[r["name"], "yes" if r["held_out"] else "", r["cells"], r["loss"], r["largest_error"],
                             f"{100 * r['within_tolerance']:.0f} %"] for r in pred.per_sequence()])
            recs = pred.records()[:ROW_LIMIT]
            _fill(cells, [[r["sequence"], r["step"], r["unit"], r["output"], r["target"], r["error"], r["loss"]]
                          for r in recs])
            more = f" (the first {ROW_LIMIT} shown)" if len(pred) > ROW_LIMIT else ""
            return f"{len(pred)} target cells{more}; loss {pred.loss_name}, mean {np.mean(pred.loss):.4g}."

        page = self._add("predictions", "Predictions", "Compare with Targets", lambda c, p: predictions(c, p), show)
        row = QHBoxLayout()
        row.addWidget(summary, 1)
        row.addWidget(cells, 1)
        page.body.addLayout(row, 1)


def setup(window) -> AnalysisPanel:
    """Listed in ``gui.panels.PANEL_SETUPS``: dock the Analysis panel, hidden until asked for
    (View > Panels > Analysis). Docked as a tab before the window is first shown, Qt 6.11 leaves
    a stray tab bar over the views; docked as a fifth view it squeezes the others at 1280x800."""
    panel = AnalysisPanel(window)
    window.add_panel(panel, "Analysis", "analysis", Qt.BottomDockWidgetArea, visible=False)
    window.analysis = panel
    window.closing.connect(lambda: QThreadPool.globalInstance().waitForDone(5000))
    return panel
