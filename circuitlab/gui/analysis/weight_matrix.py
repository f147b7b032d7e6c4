"""The weight matrix as a heat map: row = source unit, column = target unit, the canvas's weight colours.

For circuits too dense to read as arrows. Colours come from the canvas
style module, so a cell has the colour its arrow has; cells without a
connection are left in the background colour. Hover a cell for its value.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from circuitlab.gui.canvas import style


def weight_rgba(W: np.ndarray, connected: np.ndarray) -> np.ndarray:
    """(n, n, 4) uint8 colours of the weights on the canvas's scale (background where unconnected)."""
    scale = style.weight_scale(W[connected]) if connected.any() else 1.0
    out = np.empty(W.shape + (4,), dtype=np.uint8)
    out[:] = style.BACKGROUND.getRgb()
    for i, j in zip(*np.nonzero(connected)):
        out[i, j] = style.weight_color(float(W[i, j]), scale).getRgb()
    return out


class WeightMatrixView(QWidget):
    """Follows the document: redraws when weights or structure change."""

    def __init__(self, document):
        super().__init__()
        self.document = document
        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setBackground("w")
        self.plot = self.graphics.addPlot()
        self.plot.invertY(True)
        self.plot.setAspectLocked(True)
        self.image = pg.ImageItem(axisOrder="row-major")
        self.plot.addItem(self.image)
        self.plot.setLabel("left", "source unit")
        self.plot.setLabel("bottom", "target unit")
        self.readout = QLabel("Hover a cell for its weight.")
        layout = QVBoxLayout(self)
        layout.addWidget(self.graphics, 1)
        layout.addWidget(self.readout)
        self.image.hoverEvent = self._hover
        document.values_changed.connect(self.refresh)
        document.structure_changed.connect(self.refresh)
        document.replaced.connect(self.refresh)
        self.refresh()

    def matrix(self):
        c = self.document.circuit
        names = c.unit_names()
        index = {n: k for k, n in enumerate(names)}
        W = np.zeros((len(names), len(names)))
        connected = np.zeros(W.shape, dtype=bool)
        for conn in c.connections:
            if conn.source in index and conn.target in index:
                W[index[conn.source], index[conn.target]] = conn.weight
                connected[index[conn.source], index[conn.target]] = True
        return names, W, connected

    def refresh(self, *_args) -> None:
        names, W, connected = self.matrix()
        self.names, self.W, self.connected = names, W, connected
        self.image.setImage(weight_rgba(W, connected) if names else np.zeros((1, 1, 4), np.uint8))
        ticks = [(k + 0.5, n) for k, n in enumerate(names)] if len(names) <= 40 else []
        self.plot.getAxis("left").setTicks([ticks])
        self.plot.getAxis("bottom").setTicks([ticks])

    def describe(self, i: int, j: int) -> str:
        if not self.connected[i, j]:
            return f"{self.names[i]} -> {self.names[j]}: no connection"
        return f"{self.names[i]} -> {self.names[j]}: weight {self.W[i, j]:.6g}"

    def _hover(self, event) -> None:
        if event.isExit() or not self.names:
            return
        p = event.pos()
        i, j = int(p.y()), int(p.x())
        if 0 <= i < len(self.names) and 0 <= j < len(self.names):
            self.readout.setText(self.describe(i, j))
