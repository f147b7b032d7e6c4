"""The canvas: a zoomable view of the circuit where units are drawn, moved and connected.

Mouse: with the selection tool, press inside a unit and drag to move it (all
selected units move together), press on its rim and drag to another unit to
connect them (release on the same unit for a self-connection), drag on empty
canvas for a selection rectangle; shift-click adds to or removes from the
selection; double-click on empty canvas adds a unit. The add tool adds a unit
at every click; the connect tool connects from anywhere inside a unit.
Wheel zooms about the cursor; the middle button (or space + drag) pans.
"""

import json
import random

from PySide6.QtCore import QEvent, QMimeData, QPointF, QRectF, Qt, QTimer, Signal
from PySide6.QtGui import (QAction, QActionGroup, QGuiApplication, QKeySequence, QMouseEvent,
                           QPainter, QPainterPath, QPen, QPixmap)
from PySide6.QtWidgets import QApplication, QGraphicsPathItem, QGraphicsView, QMenu

from circuitlab.gui.canvas import style
from circuitlab.gui.canvas.items import ConnectionItem, UnitItem
from circuitlab.gui.canvas.legend import draw_legend, legend_size
from circuitlab.gui.canvas.scene import CircuitScene
from circuitlab.gui.commands import AddUnits, ConnectUnits, MoveUnits, RemoveItems, SetConnectionFields
from circuitlab.gui.commands.arrange import arrange_positions
from circuitlab.gui.document import Document
from circuitlab.model import Connection, ModelError, Unit, UnitSchedule

FRAGMENT_MIME = "application/x-circuitlab-fragment"
ZOOM_STEP = 1.15
MIN_ZOOM, MAX_ZOOM = 0.05, 8.0
MAX_FIT_ZOOM = 1.5
LEGEND_MARGIN = 10  # pixels between the legend and the viewport's edges
NEW_WEIGHT_RANGE = 0.3  # a drawn connection starts with a small random weight in +-this


def _shift_as_ctrl(event: QMouseEvent) -> QMouseEvent:
    """Shift-click toggles selection, as ctrl-click does in Qt's own item handling."""
    mods = event.modifiers()
    if not mods & Qt.ShiftModifier:
        return event
    return QMouseEvent(event.type(), event.position(), event.globalPosition(), event.button(),
                       event.buttons(), (mods & ~Qt.ShiftModifier) | Qt.ControlModifier)


class CircuitCanvas(QGraphicsView):
    """The central editing view. ``selection_changed`` carries unit names and connection keys."""

    selection_changed = Signal(list, list)
    status_message = Signal(str)
    unit_activated = Signal(str)  # double-click on a unit

    TOOLS = ("select", "add", "connect")

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.scene_ = CircuitScene(document, self)
        self.setScene(self.scene_)
        self.setRenderHints(QPainter.Antialiasing | QPainter.TextAntialiasing)
        self.setViewportUpdateMode(QGraphicsView.SmartViewportUpdate)
        self.setTransformationAnchor(QGraphicsView.AnchorUnderMouse)
        self.setResizeAnchor(QGraphicsView.AnchorViewCenter)
        self.setDragMode(QGraphicsView.RubberBandDrag)
        self.setRubberBandSelectionMode(Qt.ContainsItemShape)  # only what the rectangle encloses
        self.setOptimizationFlags(QGraphicsView.DontSavePainterState)
        self.setFocusPolicy(Qt.StrongFocus)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)  # pan with the middle button or space
        self.setVerticalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
        self.tool = "select"
        self.show_legend = True
        self._legend_collapsed = False
        self._legend_cache = None  # ((weight scale, pixel ratio, collapsed), QPixmap)
        self._top_margin = 0  # pixels above the viewport kept for the example banner
        self._legend_at = QRectF()
        self._fit_pending = False  # fit_to_view was asked for before the view had a size
        self._keep_fitted = False  # fitted and not zoomed or panned since: a resize fits again
        self._connect_from: UnitItem | None = None
        self._connect_moved = False
        self._connect_line: QGraphicsPathItem | None = None
        self._press_scene = QPointF()
        self._drag_start: dict[str, tuple[float, float]] = {}
        self._pan_from: QPointF | None = None
        self._space = False
        self._paste_count = 0
        self.rng = random.Random()
        self.scene_.selectionChanged.connect(self._emit_selection)
        self.scene_.hovered.connect(self.status_message)
        self.scene_.rebuilt.connect(self.fit_to_view)
        self.scene_.weight_scale_changed.connect(lambda _s: self.viewport().update())
        self.actions_ = self._make_actions()
        # a fixed, very large scene: growing it as units move would make the view jump mid-drag
        e = style.SCENE_EXTENT
        self.setSceneRect(QRectF(-e, -e, 2 * e, 2 * e))
        self.centerOn(0, 0)

    # --------------------------------------------------------------- public
    @property
    def circuit_scene(self) -> CircuitScene:
        return self.scene_

    def refresh_weights(self, weights=None) -> None:
        """Restyle the arrows only (weights given in connection order, or the model's)."""
        self.scene_.refresh_weights(weights)

    def set_tool(self, tool: str) -> None:
        if tool not in self.TOOLS:
            raise ValueError(f"unknown tool {tool!r}")
        self.tool = tool
        self.actions_[f"tool_{tool}"].setChecked(True)
        self.setDragMode(QGraphicsView.RubberBandDrag if tool == "select" else QGraphicsView.NoDrag)

    def selected(self) -> tuple[list[str], list[tuple[str, str]]]:
        return self.scene_.selected_units(), self.scene_.selected_connections()

    def fit_to_view(self) -> None:
        """Zoom and centre so the whole circuit shows (once the view has its size, if not yet shown)."""
        if not self.isVisible() or self.viewport().width() < 50 or self.viewport().height() < 50:
            self._fit_pending = True
            return
        self._fit_pending = False
        self._keep_fitted = True
        rect = self.scene_.content_rect()
        if rect.isEmpty():
            self.resetTransform()
            self.centerOn(0, 0)
            return
        rect = rect.adjusted(-12, -12, 12, 12)
        vw, vh = self.viewport().width(), self.viewport().height()
        # keep the circuit clear of the legend: leave it a strip at the left or at the bottom,
        # whichever lets the circuit be drawn larger (the banner has its own margin above)
        lw, lh = (legend_size(self._legend_collapsed) if self.show_legend else (0.0, 0.0))
        lw, lh = (lw + 2 * LEGEND_MARGIN, lh + 2 * LEGEND_MARGIN) if self.show_legend else (0.0, 0.0)
        beside = min((vw - lw - 8) / rect.width(), (vh - 8) / rect.height())
        below = min((vw - 8) / rect.width(), (vh - lh - 8) / rect.height())
        if beside >= below:
            z, shift = beside, QPointF(-lw / 2, 0)
        else:
            z, shift = below, QPointF(0, lh / 2)
        z = max(MIN_ZOOM, min(MAX_FIT_ZOOM, z))
        self.resetTransform()
        self.scale(z, z)
        self.centerOn(rect.center() + QPointF(shift.x() / z, shift.y() / z))

    def zoom(self, factor: float) -> None:
        self._keep_fitted = False
        self._set_zoom(self.transform().m11() * factor)

    def _set_zoom(self, z: float) -> None:
        z = max(MIN_ZOOM, min(MAX_ZOOM, z))
        f = z / self.transform().m11()
        self.scale(f, f)

    def add_unit_at(self, pos: QPointF) -> str:
        c = self.document.circuit
        pos = self.scene_.snapped(pos)
        name = c.fresh_unit_name("u")
        self.document.push(AddUnits(self.document, [Unit(name=name, x=round(pos.x(), 1), y=round(pos.y(), 1))]))
        self.scene_.select([name])
        return name

    def connect_units(self, source: str, target: str) -> bool:
        if self.document.circuit.has_connection(source, target):
            self.status_message.emit(f"{source} → {target} is already connected")
            return False
        weight = round(self.rng.uniform(-NEW_WEIGHT_RANGE, NEW_WEIGHT_RANGE), 3)
        self.document.push(ConnectUnits(self.document, source, target, weight))
        self.scene_.select(connections=[(source, target)])
        return True

    def delete_selection(self) -> None:
        units, conns = self.selected()
        cmd = RemoveItems(self.document, units, conns)
        if not cmd.is_empty():
            self.document.push(cmd)

    def select_all(self) -> None:
        self.scene_.select(self.scene_.units, self.scene_.edges)

    def arrange(self) -> None:
        c = self.document.circuit
        if len(c.units) < 2:
            return
        new = arrange_positions(c)
        moves = {u.name: ((u.x, u.y), new[u.name]) for u in c.units if (u.x, u.y) != new[u.name]}
        if moves:
            self.document.push(MoveUnits(self.document, moves, text="Arrange units"))
            self.fit_to_view()

    # ------------------------------------------------------------ clipboard
    def copy_selection(self) -> bool:
        units, _ = self.selected()
        if not units:
            return False
        mime = QMimeData()
        text = json.dumps(self._fragment(units))
        mime.setData(FRAGMENT_MIME, text.encode("utf-8"))
        mime.setText(text)
        QGuiApplication.clipboard().setMimeData(mime)
        self._paste_count = 0
        return True

    def cut_selection(self) -> None:
        if self.copy_selection():
            self.delete_selection()

    def paste(self) -> None:
        mime = QGuiApplication.clipboard().mimeData()
        if mime is None or not mime.hasFormat(FRAGMENT_MIME):
            return
        self._paste_count += 1
        self._insert_fragment(json.loads(bytes(mime.data(FRAGMENT_MIME)).decode("utf-8")),
                              40.0 * self._paste_count, "Paste")

    def duplicate_selection(self) -> None:
        units, _ = self.selected()
        if units:
            self._insert_fragment(self._fragment(units), 40.0, "Duplicate")

    def _fragment(self, names: list[str]) -> dict:
        c = self.document.circuit
        chosen = set(names)
        return {
            "units": [u.model_dump(mode="json") for u in c.units if u.name in chosen],
            "connections": [k.model_dump(mode="json") for k in c.connections
                            if k.source in chosen and k.target in chosen],
            "schedule": {n: s.model_dump(mode="json") for n, s in c.schedule.items() if n in chosen},
        }

    def _insert_fragment(self, fragment: dict, offset: float, verb: str) -> None:
        c = self.document.circuit
        taken = set(c.unit_names())
        renames: dict[str, str] = {}
        units = []
        for data in fragment["units"]:
            unit = Unit.model_validate(data)
            old = unit.name
            if old in taken:
                stem = old.rstrip("0123456789") or old
                i = 1
                while f"{stem}{i}" in taken:
                    i += 1
                unit.name = f"{stem}{i}"
            taken.add(unit.name)
            renames[old] = unit.name
            unit.x += offset
            unit.y += offset
            units.append(unit)
        conns = [Connection.model_validate({**d, "source": renames[d["source"]], "target": renames[d["target"]]})
                 for d in fragment["connections"]]
        scheds = {renames[n]: UnitSchedule.model_validate(s) for n, s in fragment["schedule"].items()}
        n = len(units)
        self.document.push(AddUnits(self.document, units, conns, scheds,
                                    text=f"{verb} {n} unit{'s' if n != 1 else ''}"))
        self.scene_.select([u.name for u in units], [k.key for k in conns])

    # -------------------------------------------------------------- actions
    def _make_actions(self) -> dict[str, QAction]:
        acts: dict[str, QAction] = {}

        def act(key, text, slot, shortcut=None, tip=None):
            a = QAction(text, self)
            if shortcut is not None:
                a.setShortcuts(shortcut if isinstance(shortcut, list) else [QKeySequence(shortcut)])
            if tip:
                a.setStatusTip(tip)
            a.triggered.connect(slot)
            acts[key] = a
            return a

        act("delete", "Delete", self.delete_selection,
            [QKeySequence(QKeySequence.Delete), QKeySequence(Qt.Key_Backspace)],
            "Delete the selected units and connections")
        act("cut", "Cut", self.cut_selection, QKeySequence.Cut)
        act("copy", "Copy", self.copy_selection, QKeySequence.Copy)
        act("paste", "Paste", self.paste, QKeySequence.Paste)
        act("duplicate", "Duplicate", self.duplicate_selection, "Ctrl+D", "Copy the selected units beside themselves")
        act("select_all", "Select All", self.select_all, QKeySequence.SelectAll)
        act("arrange", "Arrange Automatically", self.arrange, "Ctrl+L",
            "Spread the units out with a force-directed layout (can be undone)")
        act("fit", "Fit to View", self.fit_to_view, "Ctrl+0", "Show the whole circuit")
        act("zoom_in", "Zoom In", lambda: self.zoom(ZOOM_STEP ** 2), QKeySequence.ZoomIn)
        act("zoom_out", "Zoom Out", lambda: self.zoom(1 / ZOOM_STEP ** 2), QKeySequence.ZoomOut)
        snap = act("snap", "Snap to Grid", self._toggle_snap, None, "Keep unit positions on a 20-pixel grid")
        snap.setCheckable(True)
        legend = act("legend", "Show Legend", self._toggle_legend)
        legend.setCheckable(True)
        legend.setChecked(True)
        group = QActionGroup(self)
        for tool, text, key, tip in (
                ("select", "Select and Move", "S", "Click to select, drag to move; drag from a unit's rim to connect"),
                ("add", "Add Units", "U", "Click on the canvas to add a unit"),
                ("connect", "Connect Units", "C", "Drag from one unit to another to connect them")):
            a = act(f"tool_{tool}", text, lambda _=False, t=tool: self.set_tool(t), key, tip)
            a.setCheckable(True)
            a.setShortcutContext(Qt.WidgetWithChildrenShortcut)
            group.addAction(a)
            self.addAction(a)
        acts["tool_select"].setChecked(True)
        # editing keys act on the canvas only when it has the focus: Delete or Ctrl+A in another
        # panel (a table, a text field) must not delete or select units
        for key in ("delete", "cut", "copy", "paste", "duplicate", "select_all"):
            acts[key].setShortcutContext(Qt.WidgetWithChildrenShortcut)
            self.addAction(acts[key])
        return acts

    def _toggle_snap(self, on: bool) -> None:
        self.scene_.snap_to_grid = on
        self.scene_.update()

    def _toggle_legend(self, on: bool) -> None:
        self.show_legend = on
        self.viewport().update()

    def _emit_selection(self) -> None:
        units, conns = self.selected()
        self.selection_changed.emit(units, conns)

    # ---------------------------------------------------------------- mouse
    def mousePressEvent(self, event: QMouseEvent) -> None:
        pos = self.mapToScene(event.position().toPoint())
        if (event.button() == Qt.LeftButton and self.show_legend
                and self.legend_rect().contains(event.position())):
            self._legend_collapsed = not self._legend_collapsed  # a click folds or unfolds the legend
            self.viewport().update()
            return
        if event.button() == Qt.MiddleButton or (event.button() == Qt.LeftButton and self._space):
            self._keep_fitted = False
            self._pan_from = event.position()
            self.viewport().setCursor(Qt.ClosedHandCursor)
            return
        if event.button() != Qt.LeftButton:
            super().mousePressEvent(event)
            return
        unit = self.scene_.unit_at(pos)
        mods = event.modifiers()
        extend = bool(mods & (Qt.ShiftModifier | Qt.ControlModifier))
        if unit is None and self.tool == "add":
            self.add_unit_at(pos)
            return
        if unit is not None and not extend and (
                self.tool == "connect" or (self.tool == "select" and unit.in_rim_band(unit.mapFromScene(pos)))):
            self._start_connection(unit, pos)
            return
        self._press_scene = pos
        super().mousePressEvent(_shift_as_ctrl(event))
        self._drag_start = {n: (i.x(), i.y()) for n, i in self.scene_.units.items() if i.isSelected()}
        if self._drag_start:
            self.scene_.begin_drag(self._drag_start)

    def mouseMoveEvent(self, event: QMouseEvent) -> None:
        if self._pan_from is not None:
            delta = event.position() - self._pan_from
            self._pan_from = event.position()
            self.horizontalScrollBar().setValue(self.horizontalScrollBar().value() - int(delta.x()))
            self.verticalScrollBar().setValue(self.verticalScrollBar().value() - int(delta.y()))
            return
        if self._connect_from is not None:
            self._update_connection_line(self.mapToScene(event.position().toPoint()))
            return
        super().mouseMoveEvent(event)

    def mouseReleaseEvent(self, event: QMouseEvent) -> None:
        if self._pan_from is not None:
            self._pan_from = None
            self.viewport().unsetCursor()
            return
        if self._connect_from is not None and event.button() == Qt.LeftButton:
            self._finish_connection(self.mapToScene(event.position().toPoint()))
            return
        super().mouseReleaseEvent(_shift_as_ctrl(event))
        if event.button() == Qt.LeftButton:
            self._finish_move()

    def mouseDoubleClickEvent(self, event: QMouseEvent) -> None:
        if event.button() != Qt.LeftButton:
            super().mouseDoubleClickEvent(event)
            return
        pos = self.mapToScene(event.position().toPoint())
        unit = self.scene_.unit_at(pos)
        if unit is None:
            self.add_unit_at(pos)
        else:
            self.unit_activated.emit(unit.name)

    def wheelEvent(self, event) -> None:
        dy = event.angleDelta().y()
        if dy:
            self.zoom(ZOOM_STEP ** (dy / 120))
        event.accept()

    def keyPressEvent(self, event) -> None:
        key = event.key()
        if key == Qt.Key_Space and not event.isAutoRepeat():
            self._space = True
            self.viewport().setCursor(Qt.OpenHandCursor)
            return
        steps = {Qt.Key_Left: (-1, 0), Qt.Key_Right: (1, 0), Qt.Key_Up: (0, -1), Qt.Key_Down: (0, 1)}
        if key in steps:
            units, _ = self.selected()
            if units:
                step = style.GRID_STEP if event.modifiers() & Qt.ShiftModifier else 2.0
                dx, dy = steps[key]
                c = self.document.circuit
                moves = {n: ((c.unit(n).x, c.unit(n).y), (c.unit(n).x + dx * step, c.unit(n).y + dy * step))
                         for n in units}
                self.document.push(MoveUnits(self.document, moves, text="Nudge units", merge=True))
                return
        if key == Qt.Key_Escape and self._connect_from is not None:
            self._cancel_connection()
            return
        super().keyPressEvent(event)

    def keyReleaseEvent(self, event) -> None:
        if event.key() == Qt.Key_Space and not event.isAutoRepeat():
            self._space = False
            self.viewport().unsetCursor()
            return
        super().keyReleaseEvent(event)

    def focusOutEvent(self, event) -> None:
        self._space = False
        super().focusOutEvent(event)

    def contextMenuEvent(self, event) -> None:
        self.context_menu(event.pos()).exec(event.globalPos())

    def context_menu(self, at) -> QMenu:
        """The menu for viewport point ``at``: for the unit or connection there, or for the canvas."""
        pos = self.mapToScene(at)
        item = self.itemAt(at)
        if isinstance(item, (UnitItem, ConnectionItem)) and not item.isSelected():
            self.scene_.select(*(([item.name], []) if isinstance(item, UnitItem) else ([], [item.key])))
        menu = QMenu(self)
        a = self.actions_
        if isinstance(item, UnitItem):
            menu.addAction("Rename…", lambda: self.unit_activated.emit(item.name))
            menu.addSeparator()
        elif isinstance(item, ConnectionItem):
            keys = self.scene_.selected_connections()
            frozen = all(not self.document.circuit.connection(*k).trains for k in keys)
            menu.addAction("Let Weight Train" if frozen else "Freeze Weight",
                           lambda: self.document.push(SetConnectionFields(self.document, keys, "trains", frozen)))
            menu.addSeparator()
        if isinstance(item, (UnitItem, ConnectionItem)):
            for key in (("cut", "copy", "duplicate", None) if isinstance(item, UnitItem) else ()) + ("delete",):
                menu.addSeparator() if key is None else menu.addAction(a[key])
        else:
            menu.addAction("Add Unit Here", lambda: self.add_unit_at(pos))
            menu.addAction(a["paste"])
            menu.addSeparator()
            for key in ("select_all", "arrange", "fit"):
                menu.addAction(a[key])
        return menu

    # ---------------------------------------------------- drawing connections
    def _start_connection(self, unit: UnitItem, pos: QPointF) -> None:
        self._connect_from = unit
        self._connect_moved = False  # a press and release without moving is a click, not a self-loop
        self._press_scene = pos
        line = QGraphicsPathItem()
        pen = QPen(style.SELECTION, 1.6, Qt.DashLine)
        line.setPen(pen)
        line.setZValue(5)
        self.scene_.addItem(line)
        self._connect_line = line
        self._update_connection_line(pos)

    def _update_connection_line(self, pos: QPointF) -> None:
        if (pos - self._press_scene).manhattanLength() * self.transform().m11() >= QApplication.startDragDistance():
            self._connect_moved = True
        path = QPainterPath(self._connect_from.pos())
        path.lineTo(pos)
        self._connect_line.setPath(path)

    def _cancel_connection(self) -> None:
        if self._connect_line is not None:
            self.scene_.removeItem(self._connect_line)
        self._connect_from = self._connect_line = None

    def _finish_connection(self, pos: QPointF) -> None:
        source = self._connect_from
        self._update_connection_line(pos)
        moved = self._connect_moved
        self._cancel_connection()
        target = self.scene_.unit_at(pos)
        if target is None:
            if not moved:
                self.scene_.select([source.name])
            return
        if target is source and not moved:
            self.scene_.select([source.name])  # a click on the rim selects
            return
        self.connect_units(source.name, target.name)

    def _finish_move(self) -> None:
        start, self._drag_start = self._drag_start, {}
        if start:
            self.scene_.end_drag()
        moves = {}
        for name, old in start.items():
            item = self.scene_.units.get(name)
            if item is not None and (item.x(), item.y()) != old:
                moves[name] = (old, (round(item.x(), 1), round(item.y(), 1)))
        if moves:
            try:
                self.document.push(MoveUnits(self.document, moves))
            except ModelError as exc:  # a unit vanished mid-drag
                self.status_message.emit(str(exc))
                self.scene_.refresh_values()

    # --------------------------------------------------------------- legend
    def drawForeground(self, painter: QPainter, rect: QRectF) -> None:
        if not self.show_legend:
            return
        scale, ratio = self.scene_.scale, self.devicePixelRatioF()
        key = (scale, ratio, self._legend_collapsed)
        if self._legend_cache is None or self._legend_cache[0] != key:
            w, h = legend_size(self._legend_collapsed)
            pixmap = QPixmap(int(w * ratio) + 2, int(h * ratio) + 2)
            pixmap.setDevicePixelRatio(ratio)
            pixmap.fill(Qt.transparent)
            p = QPainter(pixmap)
            draw_legend(p, QPointF(0.5, 0.5), scale, self._legend_collapsed)
            p.end()
            self._legend_cache = (key, pixmap)
        pixmap = self._legend_cache[1]
        painter.save()
        painter.resetTransform()
        at = self.legend_rect()
        painter.drawPixmap(at.topLeft(), pixmap)
        painter.restore()
        if at != self._legend_at:  # it moved away from a unit: clear its old place too
            self._legend_at = at
            QTimer.singleShot(0, self.viewport().update)

    def legend_rect(self) -> QRectF:
        """Where the legend is drawn (viewport pixels): the first corner, from the lower left, where
        it covers no unit; if every corner covers one, the corner that covers fewest."""
        w, h = legend_size(self._legend_collapsed)
        vw, vh = self.viewport().width(), self.viewport().height()
        m = LEGEND_MARGIN
        corners = [QRectF(m, vh - h - m, w, h), QRectF(vw - w - m, vh - h - m, w, h),
                   QRectF(vw - w - m, m, w, h), QRectF(m, m, w, h)]
        best, fewest = corners[0], None
        for r in corners:
            n = self._units_under(r)
            if n == 0:
                return r
            if fewest is None or n < fewest:
                best, fewest = r, n
        return best

    def _units_under(self, viewport_rect: QRectF) -> int:
        area = self.mapToScene(viewport_rect.toAlignedRect()).boundingRect()
        return sum(1 for i in self.scene_.units.values() if i.sceneBoundingRect().intersects(area))

    def set_top_margin(self, pixels: int) -> None:
        """Keep ``pixels`` above the viewport free (for the example banner), so it never covers the circuit."""
        if pixels != self._top_margin:
            self._top_margin = pixels
            self.setViewportMargins(0, pixels, 0, 0)
            if self._keep_fitted:
                self.fit_to_view()

    @property
    def top_margin(self) -> int:
        return self._top_margin

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        if self._fit_pending or self._keep_fitted:
            self.fit_to_view()

    def showEvent(self, event) -> None:
        super().showEvent(event)
        if self._fit_pending:
            self.fit_to_view()

    def scrollContentsBy(self, dx: int, dy: int) -> None:
        super().scrollContentsBy(dx, dy)
        if self.show_legend:
            self.viewport().update()  # the legend stays put while the scene scrolls

    def event(self, e) -> bool:
        if e.type() == QEvent.ShortcutOverride and self._connect_from is not None and e.key() == Qt.Key_Escape:
            e.accept()
            return True
        return super().event(e)
