"""The activity stack: a heat map of steps by units for one sequence.

Switchable between the forward states y and the backward stacks e = dE/dy
and delta = dE/dnet; target cells are overlaid (a ring filled with the target
value's colour), hovering shows the numbers, and a colour bar gives the scale.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Signal
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QVBoxLayout, QWidget

from circuitlab.gui.training import style

# a target cell: a disc filled with the target value's colour, ringed like the inputs grid's target frame
TARGET_PEN = pg.mkPen("#8a5a00", width=2)
STACKS = (("y", "states y"), ("e", "e = dE/dy"), ("delta", "delta = dE/dnet"))


class ActivityView(QWidget):
    """Heat map of one stack (y, e or delta), x = time step, y = unit."""

    stack_changed = Signal(str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.choice = QComboBox()
        for key, label in STACKS:
            self.choice.addItem(label, key)
        self.choice.setToolTip("Which stack to show: forward states or backward derivatives")
        self.hover = QLabel(" ")
        self.hover.setMinimumWidth(200)
        top = QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        top.addWidget(QLabel("Show"))
        top.addWidget(self.choice)
        top.addWidget(self.hover, 1)

        self.graphics = pg.GraphicsLayoutWidget()
        self.graphics.setBackground(style.BACKGROUND)
        self.plot = self.graphics.addPlot(row=0, col=0)
        style.style_plot(self.plot)
        self.plot.showGrid(x=False, y=False)
        self.plot.invertY(True)
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.plot.setLabel("bottom", "time step")
        self.plot.getAxis("left").setWidth(70)
        self.image = pg.ImageItem(axisOrder="row-major")
        self.plot.addItem(self.image)
        self.targets = pg.ScatterPlotItem(pxMode=True, symbol="o")
        self.targets.setZValue(2)
        self.plot.addItem(self.targets)
        self.colorbar = pg.ColorBarItem(colorMap=style.colormap(style.STATE_MAP), interactive=False,
                                        width=14, pen=style.FOREGROUND)
        self.colorbar.setImageItem(self.image)
        self.graphics.addItem(self.colorbar, row=0, col=1)
        self.colorbar.axis.setTextPen(pg.mkPen(style.FOREGROUND))
        self.colorbar.axis.setTickFont(style.small_font(8))

        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.setSpacing(2)
        layout.addLayout(top)
        layout.addWidget(self.graphics, 1)

        self.unit_names: list[str] = []
        self._drawn_stack = None
        self._stacks: dict[str, np.ndarray] = {}
        self._target_mask = np.zeros((0, 0), bool)
        self._target_values = np.zeros((0, 0))
        self.choice.currentIndexChanged.connect(self._choice_changed)
        self.plot.scene().sigMouseMoved.connect(self._moved)
        self.plot.getViewBox().sigResized.connect(self._set_axes)

    @property
    def stack(self) -> str:
        return self.choice.currentData()

    def set_data(self, unit_names, y, e=None, delta=None, target_mask=None, target_values=None) -> None:
        """Show one sequence: ``(steps, n)`` arrays of states, e and delta, and its targets."""
        new_shape = (len(unit_names), np.shape(y)) != (len(self.unit_names), self.shape)
        self.unit_names = list(unit_names)
        self._stacks = {k: np.asarray(v, float) for k, v in (("y", y), ("e", e), ("delta", delta))
                        if v is not None}
        shape = self._stacks["y"].shape
        self._target_mask = np.zeros(shape, bool) if target_mask is None else np.asarray(target_mask, bool)
        self._target_values = np.zeros(shape) if target_values is None else np.asarray(target_values, float)
        self._draw()
        if new_shape:
            self._set_axes()
            self.plot.setRange(xRange=(-0.5, shape[0] - 0.5), yRange=(-0.5, shape[1] - 0.5), padding=0)

    @property
    def shape(self) -> tuple[int, int]:
        y = self._stacks.get("y")
        return (0, 0) if y is None else y.shape

    def shown(self) -> np.ndarray | None:
        """The ``(steps, n)`` array currently drawn."""
        return self._stacks.get(self.stack)

    def value_at(self, step: int, unit: int) -> str:
        """The hover text for one cell."""
        arr = self.shown()
        if arr is None or not (0 <= step < arr.shape[0] and 0 <= unit < arr.shape[1]):
            return " "
        label = dict(STACKS)[self.stack]
        text = f"{self.unit_names[unit]}, step {step}: {label.split(' = ')[0]} = {arr[step, unit]:.5g}"
        if self._target_mask[step, unit]:
            text += f", target {self._target_values[step, unit]:.4g}"
        return text

    def _choice_changed(self) -> None:
        self._draw()
        self.stack_changed.emit(self.stack)

    def _draw(self) -> None:
        arr = self.shown()
        if arr is None:
            self.image.clear()
            self.targets.clear()
            return
        # ImageItem is (row, col) = (unit, step) in row-major order: transpose the (step, unit) stack
        signed = self.stack != "y"
        levels = style.signed_levels(arr) if signed else style.state_levels(arr)
        if self._drawn_stack != self.stack:  # the colour map and label only change with the stack
            self._drawn_stack = self.stack
            self.colorbar.setColorMap(style.colormap(style.SIGNED_MAP if signed else style.STATE_MAP))
            self.colorbar.axis.setLabel(dict(STACKS)[self.stack], color=style.FOREGROUND)
        self.image.setImage(np.nan_to_num(arr.T, nan=0.0, posinf=levels[1], neginf=levels[0]),
                            autoLevels=False)
        self.image.setRect(-0.5, -0.5, arr.shape[0], arr.shape[1])
        self.colorbar.setLevels(levels)
        steps, units = np.nonzero(self._target_mask)
        if len(steps):
            cmap = style.colormap(style.STATE_MAP)
            lo, hi = style.state_levels(self._stacks["y"])
            vals = np.clip((self._target_values[steps, units] - lo) / (hi - lo), 0, 1)
            brushes = [pg.mkBrush(c) for c in cmap.map(vals, mode="qcolor")]
            size = self._cell_pixels() * 0.35
            self.targets.setData(x=steps.astype(float), y=units.astype(float), brush=brushes,
                                 pen=TARGET_PEN, size=max(size, 5))
        else:
            self.targets.clear()

    def _cell_pixels(self) -> float:
        vb = self.plot.getViewBox()
        steps, units = self.shape
        if not steps:
            return 10.0
        return float(min(vb.width() / steps, vb.height() / max(units, 1)))

    def _set_axes(self, *_):
        steps, units = self.shape
        vb = self.plot.getViewBox()
        stride = style.nice_stride(units, vb.height() or 200, 13)
        style.fit_name_axis(self.plot.getAxis("left"), self.unit_names)
        self.plot.getAxis("left").setTicks(
            [[(i, n) for i, n in enumerate(self.unit_names) if i % stride == 0], []])
        xs = style.nice_stride(steps, vb.width() or 300, 28)
        self.plot.getAxis("bottom").setTicks([[(t, str(t)) for t in range(0, steps, xs)], []])
        if self._target_mask.any():
            self.targets.setSize(max(self._cell_pixels() * 0.35, 5))

    def _moved(self, pos) -> None:
        vb = self.plot.getViewBox()
        if not vb.sceneBoundingRect().contains(pos):
            return
        p = vb.mapSceneToView(pos)
        self.hover.setText(self.value_at(int(round(p.x())), int(round(p.y()))))

    def export_table(self) -> tuple[list[str], list[list]]:
        """CSV rows of all stacks: step, unit, y, e, delta, target."""
        header = ["step", "unit", "y", "e", "delta", "target"]
        rows = []
        y = self._stacks.get("y")
        if y is None:
            return header, rows
        for t in range(y.shape[0]):
            for i, name in enumerate(self.unit_names):
                row = [t, name] + [self._stacks[k][t, i] if k in self._stacks else "" for k in ("y", "e", "delta")]
                row.append(self._target_values[t, i] if self._target_mask[t, i] else "")
                rows.append(row)
        return header, rows
