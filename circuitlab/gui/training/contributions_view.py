"""Per-step contributions of one connection to its gradient.

A connection's weight is shared by all its copies in the unrolled network;
copy t contributes ``sum over sequences of y_source(t-1) * delta_target(t)``
and the gradient is the sum of the contributions. The view draws the bars and
states the sum next to the engine's gradient, so the identity is visible.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from circuitlab.gui.training import style


class ContributionsView(QWidget):
    """Bar chart of a selected connection's contribution at each step 1..T."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.plot_widget = style.plot_widget()
        self.plot = self.plot_widget.getPlotItem()
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.plot.setLabel("bottom", "time step")
        # plain numbers: a short panel has no room for an axis title carrying a scale factor
        self.plot.getAxis("left").enableAutoSIPrefix(False)
        self.plot.getAxis("left").setToolTip("contribution y_source(t-1) * delta_target(t), summed over "
                                             "the training sequences")
        self.bars = pg.BarGraphItem(x=[], height=[], width=0.8, brush=style.POSITIVE, pen=None)
        self.plot.addItem(self.bars)
        self.plot.addLine(y=0, pen=pg.mkPen(style.FOREGROUND, width=1))
        self.summary = QLabel("Select a connection to see what each of its copies contributes to its gradient.")
        self.summary.setWordWrap(True)
        self.summary.setFont(style.small_font())
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.setSpacing(2)
        layout.addWidget(self.summary)
        layout.addWidget(self.plot_widget, 1)
        self.connection: tuple[str, str] | None = None
        self.values = np.zeros(0)
        self.gradient: float | None = None

    def set_contributions(self, source: str | None, target: str | None = None,
                          values=None, gradient: float | None = None) -> None:
        """Show ``values`` ``(T+1,)`` (``[0]`` is 0) for ``source -> target`` and the engine's gradient."""
        if source is None or values is None:
            self.connection, self.values, self.gradient = None, np.zeros(0), None
            self.bars.setOpts(x=[], height=[])
            self.summary.setText("Select a connection to see what each of its copies contributes "
                                 "to its gradient.")
            return
        self.connection = (source, target)
        self.values = np.asarray(values, float)
        self.gradient = gradient
        steps = np.arange(1, len(self.values))
        v = self.values[1:]
        brushes = [pg.mkBrush(style.POSITIVE if x >= 0 else style.NEGATIVE) for x in v]
        self.bars.setOpts(x=steps, height=v, width=0.8, brushes=brushes)
        self.plot.setXRange(0.4, max(len(self.values) - 0.4, 1.6), padding=0)
        text = (f"<b>{source} &rarr; {target}</b>: sum of {len(v)} copies = <b>{self.total:.6g}</b>")
        if gradient is not None:
            text += f"; engine gradient dLoss/dw = {gradient:.6g}"
        self.summary.setText(text)

    @property
    def total(self) -> float:
        return float(self.values.sum())

    def export_table(self) -> tuple[list[str], list[list]]:
        return ["step", "contribution"], [[t, float(v)] for t, v in enumerate(self.values) if t > 0]
