"""Colours, colour maps and plot set-up shared by the training views.

One place decides the look so the unrolled network, the activity stack and
the curves read as one tool: light background, dark text, states on a
sequential map, derivatives on a diverging map centred on zero.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QFont

BACKGROUND = "#ffffff"
FOREGROUND = "#303030"
POSITIVE = QColor("#c0392b")    # excitatory (positive) weights
NEGATIVE = QColor("#2471a3")    # inhibitory (negative) weights
HIGHLIGHT = QColor("#f0a202")   # selection: amber, apart from both weight colours
TRAIN_PEN = pg.mkPen("#1f618d", width=2)
HELD_OUT_PEN = pg.mkPen("#d35400", width=2, style=pg.QtCore.Qt.PenStyle.DashLine)
SECONDARY_PEN = pg.mkPen("#5d6d7e", width=1.5)

STATE_MAP = "viridis"   # forward states y
SIGNED_MAP = "CET-D1"   # e and delta: blue below zero, white at zero, red above


def colormap(name: str) -> pg.ColorMap:
    return pg.colormap.get(name)


def state_levels(y: np.ndarray) -> tuple[float, float]:
    """Colour range for states: [0, 1] when they fit (logistic units), else symmetric or data range."""
    finite = y[np.isfinite(y)]
    if finite.size == 0:
        return 0.0, 1.0
    lo, hi = float(finite.min()), float(finite.max())
    if lo >= 0.0 and hi <= 1.0:
        return 0.0, 1.0
    if lo >= -1.0 and hi <= 1.0:
        return -1.0, 1.0
    return (lo, hi) if hi > lo else (lo - 1.0, hi + 1.0)


def signed_levels(values: np.ndarray) -> tuple[float, float]:
    """Symmetric colour range around zero for derivatives."""
    finite = np.abs(values[np.isfinite(values)])
    m = float(finite.max()) if finite.size else 0.0
    m = m if m > 0 else 1e-12
    return -m, m


def small_font(points: int = 9) -> QFont:
    f = QFont()
    f.setPointSize(points)
    return f


def plot_widget(**kwargs) -> pg.PlotWidget:
    """A PlotWidget in the common look (white background, light grid)."""
    w = pg.PlotWidget(background=BACKGROUND, **kwargs)
    style_plot(w.getPlotItem())
    return w


def style_plot(plot: pg.PlotItem) -> None:
    plot.showGrid(x=False, y=False)
    for name in ("left", "bottom", "right", "top"):
        axis = plot.getAxis(name)
        axis.setPen(pg.mkPen(FOREGROUND))
        axis.setTextPen(pg.mkPen(FOREGROUND))
        axis.setTickFont(small_font())
    plot.getAxis("bottom").setHeight(38)  # room for the tick labels and the axis title
    plot.titleLabel.item.setDefaultTextColor(QColor(FOREGROUND))


def set_title(plot: pg.PlotItem, text: str) -> None:
    plot.setTitle(text, color=FOREGROUND, size="10pt")


class _NarrowLabel(pg.LabelItem):
    """A title that does not hold its plot wider than its text (pyqtgraph's does)."""

    def updateMin(self):
        super().updateMin()
        self.setMinimumWidth(0)
        self._sizeHint[Qt.SizeHint.MinimumSize] = (0, self._sizeHint[Qt.SizeHint.MinimumSize][1])


def narrow_title(plot: pg.PlotItem) -> None:
    """Give ``plot`` a title that may be narrower than its text, so plots side by side in a narrow
    dock all stay in sight (the text stays centred and may overhang a little)."""
    old = plot.titleLabel
    plot.layout.removeItem(old)
    old.setParentItem(None)
    if old.scene() is not None:
        old.scene().removeItem(old)
    plot.titleLabel = _NarrowLabel("", size="11pt", parent=plot)
    plot.layout.addItem(plot.titleLabel, 0, 1)
    plot.setTitle(None)


class TidyLogAxis(pg.AxisItem):
    """An axis whose log mode labels decades (and 2 and 5 times them when under two decades
    show), instead of every minor tick, so small plots stay legible."""

    def logTickValues(self, minVal, maxVal, size, stdTicks):
        lo, hi = int(np.floor(minVal)), int(np.ceil(maxVal))
        decades = [float(d) for d in range(lo, hi + 1) if minVal <= d <= maxVal]
        between = [d + np.log10(m) for d in range(lo, hi + 1) for m in (2, 5)
                   if minVal <= d + np.log10(m) <= maxVal]
        if len(decades) >= 2:
            return [(1.0, decades), (None, between)]
        if len(decades) + len(between) >= 2:
            return [(None, sorted(decades + between))]
        # a narrow range: up to four round values of the quantity itself
        lo, hi = 10.0 ** minVal, 10.0 ** maxVal
        step = 10.0 ** np.floor(np.log10((hi - lo) / 3))
        for factor in (1, 2, 5, 10):
            if (hi - lo) / (step * factor) <= 4:
                step *= factor
                break
        values = np.arange(np.ceil(lo / step) * step, hi, step)
        return [(None, list(np.log10(values[values > 0])))]

    def logTickStrings(self, values, scale, spacing):
        return [f"{10.0 ** v * scale:.3g}" for v in values]


class SpacedAxis(pg.AxisItem):
    """A horizontal axis whose numbered ticks stay far enough apart for their labels: pyqtgraph
    spaces them by the axis length alone, which crowds "0 20 40 60 80" into a narrow plot."""

    GAP = 10  # pixels between neighbouring labels

    def tickSpacing(self, minVal, maxVal, size):
        levels = super().tickSpacing(minVal, maxVal, size)
        if not levels or size <= 0 or maxVal <= minVal:
            return levels
        from PySide6.QtGui import QFontMetrics
        metrics = QFontMetrics(self.style.get("tickFont") or small_font())
        spacing = levels[0][0]
        ends = [np.ceil(minVal / spacing) * spacing, np.floor(maxVal / spacing) * spacing]
        widest = max(metrics.horizontalAdvance(t) for t in self.tickStrings(ends, self.scale, spacing))
        need = (widest + self.GAP) * (maxVal - minVal) / size  # in axis units
        while spacing < need:
            mantissa = spacing / 10.0 ** np.floor(np.log10(spacing))
            spacing *= 2.5 if round(mantissa) == 2 else 2.0  # 1, 2, 5, 10, 20, 50...
        if spacing == levels[0][0]:
            return levels
        return [(spacing, 0.0)] + [level for level in levels[1:] if level[0] < spacing]


def fit_name_axis(axis: pg.AxisItem, names: list[str]) -> None:
    """Make a left axis just wide enough for the longest unit name."""
    from PySide6.QtGui import QFontMetrics
    metrics = QFontMetrics(axis.style.get("tickFont") or small_font())
    widest = max((metrics.horizontalAdvance(n) for n in names), default=20)
    axis.setWidth(min(widest + 14, 160))


def nice_stride(count: int, pixels: float, min_pixels: float) -> int:
    """The smallest stride in 1, 2, 5, 10, 20... that keeps labels ``min_pixels`` apart."""
    if count <= 0 or pixels <= 0:
        return 1
    per = pixels / count
    for base in (1, 2, 5, 10, 20, 25, 50, 100, 200, 250, 500, 1000, 2000, 5000, 10000):
        if per * base >= min_pixels:
            return base
    return 10000
