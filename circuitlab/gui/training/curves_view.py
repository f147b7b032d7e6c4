"""Learning curves: loss per epoch (training and held out), gradient norm,
learning rate, and the norm of e(t) by step for the latest epoch.

The e(t) profile shows vanishing derivatives (falling towards step 0) or
exploding ones (rising towards step 0). All numbers come from the engine's
epoch records; the view only stores and draws them.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QCheckBox, QHBoxLayout, QVBoxLayout, QWidget

from circuitlab.gui.training import style


class _Column:
    """A growable float column (amortised appends, views without copies)."""

    def __init__(self):
        self._data = np.empty(256)
        self.size = 0

    def extend(self, values) -> None:
        values = np.asarray(values, float)
        need = self.size + len(values)
        if need > len(self._data):
            grown = np.empty(max(need, 2 * len(self._data)))
            grown[: self.size] = self._data[: self.size]
            self._data = grown
        self._data[self.size: need] = values
        self.size = need

    @property
    def values(self) -> np.ndarray:
        return self._data[: self.size]


class CurvesView(QWidget):
    """Four small plots in one layout; linear or log scale for loss and gradient norm."""

    COLUMNS = ("epoch", "loss", "held_out_loss", "grad_norm", "learning_rate")

    def __init__(self, parent=None):
        super().__init__(parent)
        self.log_scale = QCheckBox("Log scale")
        self.log_scale.setToolTip("Logarithmic y axis for the loss, gradient norm and e(t) plots")
        self.log_scale.setChecked(True)
        top = QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        top.addStretch(1)
        top.addWidget(self.log_scale)
        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setBackground(style.BACKGROUND)
        # the loss across the top; the three diagnostics side by side below it
        def log_axis():
            return {"left": style.TidyLogAxis("left"), "bottom": style.SpacedAxis("bottom")}
        self.loss_plot = self.graphics.addPlot(row=0, col=0, colspan=3, axisItems=log_axis())
        self.enorm_plot = self.graphics.addPlot(row=1, col=0, axisItems=log_axis())
        self.grad_plot = self.graphics.addPlot(row=1, col=1, axisItems=log_axis())
        self.rate_plot = self.graphics.addPlot(row=1, col=2, axisItems={"bottom": style.SpacedAxis("bottom")})
        # room on the right for the last epoch label and the last title (both centred, they were cut)
        self.graphics.ci.layout.setContentsMargins(2, 2, 18, 2)
        self.graphics.ci.layout.setRowStretchFactor(0, 3)
        self.graphics.ci.layout.setRowStretchFactor(1, 2)
        for plot in (self.loss_plot, self.enorm_plot, self.grad_plot, self.rate_plot):
            # a fixed width that fits labels such as 0.0001 and 1e-05: the axis does not grow
            # for its labels (below), and a label that does not fit is left out altogether
            plot.getAxis("left").setWidth(54)
        for plot in (self.loss_plot, self.enorm_plot, self.grad_plot, self.rate_plot):
            plot.getAxis("left").setStyle(maxTextLevel=0, autoExpandTextSpace=False)  # no crowded minor labels
            plot.getAxis("bottom").setStyle(maxTextLevel=0)
        for plot, title in ((self.loss_plot, "Loss per epoch"), (self.enorm_plot, "|e(t)| by step"),
                            (self.grad_plot, "Gradient norm"), (self.rate_plot, "Learning rate")):
            style.style_plot(plot)
            style.narrow_title(plot)
            style.set_title(plot, title)
            plot.setMenuEnabled(False)
            plot.hideButtons()
        self.loss_plot.setLabel("bottom", "epoch")
        self.enorm_plot.setLabel("bottom", "time step")
        self.enorm_plot.setToolTip("Norm of e(t) over units and training sequences in the latest epoch: "
                                   "falling towards step 0 means vanishing derivatives, rising means exploding")
        self.rate_plot.setLabel("bottom", "epoch")
        self.grad_plot.setLabel("bottom", "epoch")
        # bottom left: a falling loss leaves that corner empty
        legend = self.loss_plot.addLegend(offset=(6, -6), labelTextColor=style.FOREGROUND,
                                          brush=pg.mkBrush(255, 255, 255, 220), colCount=2)
        self.train_curve = self.loss_plot.plot(pen=style.TRAIN_PEN, name="training")
        self.held_curve = self.loss_plot.plot(pen=style.HELD_OUT_PEN)  # in the legend once it has data
        self._held_in_legend = False
        self._legend = legend
        self.grad_curve = self.grad_plot.plot(pen=style.SECONDARY_PEN)
        self.rate_curve = self.rate_plot.plot(pen=style.SECONDARY_PEN)
        self.enorm_curve = self.enorm_plot.plot(pen=style.TRAIN_PEN, symbol="o", symbolSize=4,
                                                symbolBrush=style.TRAIN_PEN.color(), symbolPen=None)
        for c in (self.train_curve, self.held_curve, self.grad_curve, self.rate_curve):
            c.setClipToView(True)
            c.setDownsampling(auto=True, method="peak")

        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.setSpacing(2)
        layout.addLayout(top)
        layout.addWidget(self.graphics, 1)
        self.log_scale.toggled.connect(self._scale_changed)
        self._in_sight = True
        self._out_of_date = False  # records arrived while the view was out of sight
        self.clear()
        self._scale_changed(self.log_scale.isChecked())

    def clear(self) -> None:
        """Forget every epoch (a new training run)."""
        self._cols = {name: _Column() for name in self.COLUMNS}
        self.e_norm = np.zeros(0)
        self._redraw_in_sight()

    def add_records(self, records) -> None:
        """Append engine ``EpochRecord`` s (epoch, loss, held_out_loss, grad_norm, learning_rate, e_norm)."""
        if not records:
            return
        for name in self.COLUMNS:
            vals = [getattr(r, name) for r in records]
            self._cols[name].extend([np.nan if v is None else v for v in vals])
        self.e_norm = np.asarray(records[-1].e_norm, float)
        self._redraw_in_sight()

    def column(self, name: str) -> np.ndarray:
        return self._cols[name].values

    @property
    def epochs(self) -> int:
        return self._cols["epoch"].size

    def set_in_sight(self, in_sight: bool) -> None:
        """Out of sight (a closed panel, a tab behind another) new records are only stored;
        back in sight, the plots catch up."""
        self._in_sight = in_sight
        if in_sight and self._out_of_date:
            self._redraw()

    def _redraw_in_sight(self) -> None:
        if self._in_sight:
            self._redraw()
        else:
            self._out_of_date = True

    def _redraw(self) -> None:
        self._out_of_date = False
        x = self.column("epoch")
        log = self.log_scale.isChecked()
        self.train_curve.setData(x, self._positive(self.column("loss"), log))
        held = self.column("held_out_loss")
        has_held = bool(np.isfinite(held).any())
        self.held_curve.setData(x, self._positive(held, log)) if has_held else self.held_curve.setData([], [])
        if has_held != self._held_in_legend:
            (self._legend.addItem(self.held_curve, "held out") if has_held
             else self._legend.removeItem(self.held_curve))
            self._held_in_legend = has_held
        self.grad_curve.setData(x, self._positive(self.column("grad_norm"), log))
        rate = self.column("learning_rate")
        self.rate_curve.setData(x, rate)
        if rate.size:
            self.rate_plot.setYRange(0.0, float(np.nanmax(rate)) * 1.15 or 1.0, padding=0)
        steps = np.arange(len(self.e_norm), dtype=float)
        self.enorm_curve.setData(steps[1:], self._positive(self.e_norm[1:], log))

    @staticmethod
    def _positive(values: np.ndarray, log: bool) -> np.ndarray:
        """Non-positive values have no logarithm: hide them instead of warning."""
        return np.where(values > 0, values, np.nan) if log else values

    def _scale_changed(self, log: bool) -> None:
        for plot in (self.loss_plot, self.grad_plot, self.enorm_plot):
            plot.setLogMode(x=False, y=log)
        self._redraw()

    def export_table(self) -> tuple[list[str], list[list]]:
        """CSV rows: one per epoch with every column."""
        cols = [self.column(n) for n in self.COLUMNS]
        rows = [[int(c0)] + [("" if not np.isfinite(v) else float(v)) for v in vals]
                for c0, *vals in zip(*cols)]
        return list(self.COLUMNS), rows

    def export_e_norm(self) -> tuple[list[str], list[list]]:
        """CSV rows: the latest epoch's norm of e(t) at each step."""
        return ["step", "e_norm"], [[t, float(v)] for t, v in enumerate(self.e_norm)]
