"""The unrolled network: the circuit expanded in time, one column of units per step 0..T.

Every connection ``i -> j`` appears once between each pair of consecutive
steps (from unit i at t-1 to unit j at t). Everything is drawn with a handful
of batched pyqtgraph items (one scatter for all cells, one curve per weight
class for all edge copies), so 50 units by 200 steps stays quick. The view
only draws what it is given: structure, weights and the stacks of one
sequence; it computes nothing about training.
"""

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from circuitlab.gui.canvas import style as canvas_style
from circuitlab.gui.training import style

# Cell glyphs in the inputs grid's language: a square with a solid dark-blue rim is a
# cell clamped to data (the grid's clamp bar), a circle a free unit, and a dashed
# brown ring a cell that carries a target (the grid's dashed target frame).
CLAMP_SYMBOL = "s"
FREE_SYMBOL = "o"
CLAMP_PEN = pg.mkPen("#1d4f91", width=2.5)
TARGET_PEN = pg.mkPen("#8a5a00", width=2.5, style=Qt.PenStyle.DashLine)
PLAIN_PEN = pg.mkPen("#505050", width=0.8)
ABSENT_BRUSH = pg.mkBrush("#e5e5e5")
# Weight classes: (|w| / largest |w| up to, line width, place on the canvas's weight scale).
# The colours are opaque because translucent lines paint many times slower.
_TIERS = ((0.34, 1.0, 0.2), (0.67, 1.6, 0.5), (1.01, 2.6, 0.9))
_COLOUR_LEVELS = 64


class UnrolledView(QWidget):
    """Units (rows) by steps (columns) with an edge per connection copy."""

    connection_selected = Signal(str, str)   # the user picked a copy of this connection
    cell_selected = Signal(str, int)         # the user picked this unit at this step

    def __init__(self, parent=None):
        super().__init__(parent)
        self.plot_widget = style.plot_widget()
        self.plot = self.plot_widget.getPlotItem()
        self.plot.invertY(True)
        self.plot.setMenuEnabled(False)
        self.plot.hideButtons()
        self.plot.showGrid(x=False, y=False)
        self.plot.setLabel("bottom", "time step")
        self.plot.getAxis("left").setWidth(70)
        self.info = QLabel("Click a unit at a step to see its values, or a connection to see all its copies.")
        self.info.setWordWrap(True)
        self.info.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.setSpacing(2)
        layout.addWidget(self.plot_widget, 1)
        layout.addWidget(self.info)

        self._edge_items: list[pg.PlotCurveItem] = []
        for sign in (1.0, -1.0):
            for _, width, strength in _TIERS:
                c = canvas_style.weight_color(sign * strength, 1.0)
                item = pg.PlotCurveItem(connect="pairs", antialias=True)
                item.setSegmentedLineMode("on")  # drawLines: far quicker than one path of wide lines
                # thin, paler lines when the copies are dense, so the cells stay visible
                item.pens = (pg.mkPen(c, width=width), pg.mkPen(_mix_with_white(c, 0.6), width=1))
                item.setZValue(1)
                self.plot.addItem(item)
                self._edge_items.append(item)
        self._highlight = pg.PlotCurveItem(pen=pg.mkPen(style.HIGHLIGHT, width=4), connect="pairs")
        self._highlight.setSegmentedLineMode("on")
        self._highlight.setZValue(2)
        self.plot.addItem(self._highlight)
        self._nodes = pg.ScatterPlotItem(pxMode=True)
        self._nodes.setZValue(3)
        self.plot.addItem(self._nodes)
        self._cursor = pg.ScatterPlotItem(pxMode=True, symbol="o", brush=None,
                                          pen=pg.mkPen(style.HIGHLIGHT, width=3))
        self._cursor.setZValue(4)
        self.plot.addItem(self._cursor)
        cmap = style.colormap(style.STATE_MAP)
        self._brush_array = np.array([pg.mkBrush(c) for c in
                                      cmap.getLookupTable(nPts=_COLOUR_LEVELS, mode="qcolor")], dtype=object)

        self.unit_names: list[str] = []
        self.connections: list[tuple[str, str]] = []
        self.steps = 0
        self._src = np.zeros(0, int)
        self._tgt = np.zeros(0, int)
        self._weights = np.zeros(0)
        self._clamp = np.zeros((0, 0), bool)
        self._target = np.zeros((0, 0), bool)
        self._present = np.zeros((0, 0), bool)
        self._stacks: dict[str, np.ndarray] = {}
        self._selected_connection: tuple[str, str] | None = None
        self._selected_cell: tuple[str, int] | None = None
        self._seg_x = np.zeros((0, 0, 2))
        self._seg_y = np.zeros((0, 0, 2))
        self.plot.getViewBox().sigResized.connect(self._fit_to_size)
        self.plot.getViewBox().sigRangeChanged.connect(self._fit_to_size)
        self.plot.scene().sigMouseClicked.connect(self._clicked)

    # ---------------------------------------------------------------- inputs
    def set_structure(self, unit_names, connections, steps: int,
                      clamp_mask: np.ndarray | None = None,
                      target_mask: np.ndarray | None = None,
                      step_mask: np.ndarray | None = None) -> None:
        """The circuit to unroll: unit names, ``(source, target)`` pairs, ``steps`` = T + 1.

        ``clamp_mask`` and ``target_mask`` are ``(steps, n)`` booleans of the
        shown sequence; ``step_mask`` ``(steps,)`` says which steps exist in it.
        """
        self.unit_names = list(unit_names)
        self.connections = [tuple(c) for c in connections]
        self.steps = int(steps)
        n, T = len(self.unit_names), self.steps
        index = {name: i for i, name in enumerate(self.unit_names)}
        self._src = np.array([index[s] for s, _ in self.connections], int)
        self._tgt = np.array([index[t] for _, t in self.connections], int)
        self._clamp = np.zeros((T, n), bool) if clamp_mask is None else np.asarray(clamp_mask, bool)
        self._target = np.zeros((T, n), bool) if target_mask is None else np.asarray(target_mask, bool)
        present = np.ones(T, bool) if step_mask is None else np.asarray(step_mask, bool)
        self._present = np.repeat(present[:, None], n, axis=1)
        t = np.arange(1, T, dtype=float)
        k = len(self.connections)
        self._seg_x = np.empty((k, max(T - 1, 0), 2))
        self._seg_x[:, :, 0] = t - 1
        self._seg_x[:, :, 1] = t
        self._seg_y = np.empty_like(self._seg_x)
        self._seg_y[:, :, 0] = self._src[:, None]
        self._seg_y[:, :, 1] = self._tgt[:, None]
        if len(self._weights) != k:
            self._weights = np.zeros(k)
        self._stacks = {}
        if self._selected_connection not in self.connections:
            self._selected_connection = None
        if self._selected_cell and (self._selected_cell[0] not in index or self._selected_cell[1] >= T):
            self._selected_cell = None
        self._set_axes()
        self._draw_edges()
        self._draw_nodes()
        self._draw_selection()
        self.plot.setRange(xRange=(-0.6, T - 0.4), yRange=(-0.6, n - 0.4), padding=0)

    def set_weights(self, weights) -> None:
        """Current weight of each connection (same order as ``set_structure``)."""
        self._weights = np.asarray(weights, float)
        self._draw_edges()

    def set_stacks(self, y, net=None, e=None, delta=None) -> None:
        """The shown sequence's ``(steps, n)`` states, net inputs and derivatives."""
        self._stacks = {k: np.asarray(v, float) for k, v in
                        (("y", y), ("net", net), ("e", e), ("delta", delta)) if v is not None}
        self._draw_nodes(brushes_only=True)
        self._describe()

    # ------------------------------------------------------------- selection
    def select_connection(self, source: str | None, target: str | None = None) -> None:
        """Highlight every copy of ``source -> target`` (``None`` clears)."""
        key = (source, target) if source is not None else None
        self._selected_connection = key if key in self.connections else None
        self._draw_selection()
        self._describe()

    def select_cell(self, unit: str | None, step: int = 0) -> None:
        self._selected_cell = (unit, int(step)) if unit in self.unit_names and 0 <= step < self.steps else None
        self._draw_selection()
        self._describe()

    @property
    def selected_connection(self) -> tuple[str, str] | None:
        return self._selected_connection

    @property
    def selected_cell(self) -> tuple[str, int] | None:
        return self._selected_cell

    def export_table(self) -> tuple[list[str], list[list]]:
        """CSV rows: every connection with its current weight."""
        return ["source", "target", "weight"], [[s, t, float(w)] for (s, t), w in
                                                 zip(self.connections, self._weights)]

    def highlighted_segments(self) -> int:
        """How many edge copies are highlighted (for tests and the status line)."""
        x, _ = self._highlight.getData()
        return 0 if x is None else len(x) // 2

    # --------------------------------------------------------------- drawing
    def _set_axes(self) -> None:
        left = self.plot.getAxis("left")
        style.fit_name_axis(left, self.unit_names)
        rows = self.plot.getViewBox().height() or 300
        stride = style.nice_stride(len(self.unit_names), rows, 13)
        left.setTicks([[(i, name) for i, name in enumerate(self.unit_names) if i % stride == 0], []])
        cols = self.plot.getViewBox().width() or 400
        xs = style.nice_stride(self.steps, cols, 28)
        bottom = self.plot.getAxis("bottom")
        bottom.setTicks([[(t, str(t)) for t in range(0, self.steps, xs)],
                         [(t, "") for t in range(self.steps)] if xs > 1 and self.steps <= 400 else []])

    def _fit_to_size(self, *_):
        if self.steps:
            self._set_axes()
            self._nodes.setSize(self._node_size())
            self._cursor.setSize(self._node_size() + 6)

    def _node_size(self) -> float:
        vb = self.plot.getViewBox()
        (x0, x1), (y0, y1) = vb.viewRange()
        px = vb.width() / max(x1 - x0, 1e-9)
        py = vb.height() / max(y1 - y0, 1e-9)
        return float(np.clip(0.55 * min(px, py), 3.0, 22.0))

    def _draw_edges(self) -> None:
        k = len(self.connections)
        w = self._weights if len(self._weights) == k else np.zeros(k)
        top = float(np.max(np.abs(w))) if k and np.all(np.isfinite(w)) and np.any(w) else 1.0
        rel = np.abs(w) / top
        many = k * max(self.steps - 1, 0) > 4000
        for s, positive in enumerate((True, False)):
            sign = (w >= 0) if positive else (w < 0)
            lower = -1.0
            for tier, (upper, _, _) in enumerate(_TIERS):
                item = self._edge_items[s * len(_TIERS) + tier]
                item.opts["antialias"] = not many
                item.setPen(item.pens[int(many)])
                sel = sign & (rel > lower) & (rel <= upper)
                lower = upper
                if not sel.any() or self._seg_x.shape[1] == 0:
                    item.setData([], [])
                    continue
                item.setData(self._seg_x[sel].ravel(), self._seg_y[sel].ravel(), connect="pairs")

    def _draw_nodes(self, brushes_only: bool = False) -> None:
        """Lay out every cell; with ``brushes_only`` just recolour them (the live-update path)."""
        n, T = len(self.unit_names), self.steps
        if n == 0 or T == 0:
            self._nodes.clear()
            return
        brushes = self._brushes(n, T)
        if brushes_only and len(self._nodes.data) == T * n:
            self._nodes.setBrush(brushes)
            return
        tt, ii = np.meshgrid(np.arange(T), np.arange(n), indexing="ij")
        symbols = np.where(self._clamp.ravel(), CLAMP_SYMBOL, FREE_SYMBOL) if self._clamp.shape == (T, n) \
            else np.full(T * n, FREE_SYMBOL)
        targets = self._target.ravel() if self._target.shape == (T, n) else np.zeros(T * n, bool)
        pens = np.where(targets, TARGET_PEN, np.where(symbols == CLAMP_SYMBOL, CLAMP_PEN, PLAIN_PEN))
        self._nodes.setData(x=tt.ravel().astype(float), y=ii.ravel().astype(float), symbol=symbols,
                            brush=brushes, pen=pens, size=self._node_size())

    def _brushes(self, n: int, T: int) -> np.ndarray:
        """One brush per cell (step-major), from the state's place on the colour map."""
        y = self._stacks.get("y")
        if y is not None and y.shape == (T, n):
            lo, hi = style.state_levels(y)
            level = np.clip(((y - lo) / (hi - lo) * (_COLOUR_LEVELS - 1)), 0, _COLOUR_LEVELS - 1)
            level = np.nan_to_num(level).astype(int)
            brushes = self._brush_array[level.ravel()]
        else:
            brushes = np.full(T * n, pg.mkBrush("#ffffff"), dtype=object)
        present = self._present.ravel() if self._present.shape == (T, n) else np.ones(T * n, bool)
        brushes[~present] = ABSENT_BRUSH
        return brushes

    def _draw_selection(self) -> None:
        if self._selected_connection is not None and self._seg_x.shape[1]:
            k = self.connections.index(self._selected_connection)
            self._highlight.setData(self._seg_x[k].ravel(), self._seg_y[k].ravel(), connect="pairs")
        else:
            self._highlight.setData([], [])
        if self._selected_cell is not None:
            name, t = self._selected_cell
            self._cursor.setData(x=[float(t)], y=[float(self.unit_names.index(name))],
                                 size=self._node_size() + 6)
        else:
            self._cursor.clear()

    def _describe(self) -> None:
        parts = []
        if self._selected_cell is not None:
            name, t = self._selected_cell
            i = self.unit_names.index(name)
            cell = [f"<b>{name}</b> at step {t}"]
            if self._clamp.shape == (self.steps, len(self.unit_names)) and self._clamp[t, i]:
                cell.append("(clamped)")
            if self._target.shape == (self.steps, len(self.unit_names)) and self._target[t, i]:
                cell.append("(target)")
            for key, label in (("y", "state y"), ("net", "net input"), ("e", "e = dE/dy"),
                               ("delta", "delta = dE/dnet")):
                arr = self._stacks.get(key)
                if arr is not None and arr.shape == (self.steps, len(self.unit_names)):
                    cell.append(f"{label} {arr[t, i]:.5g}")
            parts.append(cell[0] + ": " + "; ".join(cell[1:]))
        if self._selected_connection is not None:
            s, t = self._selected_connection
            k = self.connections.index(self._selected_connection)
            w = self._weights[k] if k < len(self._weights) else float("nan")
            parts.append(f"<b>{s} &rarr; {t}</b>: weight {w:.5g}, {max(self.steps - 1, 0)} copies highlighted")
        if parts:
            self.info.setText("<br>".join(parts))

    # ----------------------------------------------------------------- mouse
    def _clicked(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton or not self.steps:
            return
        vb = self.plot.getViewBox()
        if not vb.sceneBoundingRect().contains(event.scenePos()):
            return
        p = vb.mapSceneToView(event.scenePos())
        picked = self.pick(p.x(), p.y())
        if picked is None:
            return
        kind, a, b = picked
        if kind == "cell":
            self.select_cell(a, b)
            self.cell_selected.emit(a, b)
        else:
            self.select_connection(a, b)
            self.connection_selected.emit(a, b)
        event.accept()

    def pick(self, x: float, y: float):
        """What is at view point (x, y): ``("cell", unit, step)``, ``("connection", s, t)`` or None."""
        vb = self.plot.getViewBox()
        (x0, x1), (y0, y1) = vb.viewRange()
        px = vb.width() / max(x1 - x0, 1e-9)   # pixels per step
        py = vb.height() / max(y1 - y0, 1e-9)  # pixels per unit row
        t, i = int(round(x)), int(round(y))
        radius = self._node_size() / 2 + 2
        if 0 <= t < self.steps and 0 <= i < len(self.unit_names):
            if np.hypot((x - t) * px, (y - i) * py) <= radius:
                return ("cell", self.unit_names[i], t)
        if not self.connections or not 0 < x < self.steps - 1:
            return None
        frac = x - np.floor(x)
        line_y = self._src + (self._tgt - self._src) * frac  # each connection's edge at this x
        slope = (self._tgt - self._src) * py / px
        dist = np.abs(line_y - y) * py / np.sqrt(1.0 + slope**2)  # perpendicular, in pixels
        k = int(np.argmin(dist))
        if dist[k] <= 6:
            return ("connection", *self.connections[k])
        return None


def _mix_with_white(colour: QColor, strength: float) -> QColor:
    return QColor(*(round(255 + (v - 255) * strength) for v in (colour.red(), colour.green(), colour.blue())))
