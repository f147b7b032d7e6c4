"""The scene: one item per unit and connection of the document's circuit, kept in step incrementally.

Structure changes add and remove only the items that changed; value changes
restyle items in place; ``refresh_weights`` touches only connection colours
and widths, cheap enough to run at every training snapshot.
"""

import math

from PySide6.QtCore import QPointF, QRectF, Signal
from PySide6.QtGui import QPainter, QPen
from PySide6.QtWidgets import QGraphicsScene

from circuitlab.gui.canvas import routing, style
from circuitlab.gui.canvas.geometry import reciprocal_bend
from circuitlab.gui.canvas.edge_layer import EdgeLayer
from circuitlab.gui.canvas.items import ConnectionItem, UnitItem, UnitLook
from circuitlab.gui.document import Document
from circuitlab.model import Connection, Unit


class CircuitScene(QGraphicsScene):
    """Items for ``document.circuit``; emits ``weight_scale_changed`` for the legend."""

    weight_scale_changed = Signal(float)
    rebuilt = Signal()  # all items were made afresh for a newly loaded circuit
    hovered = Signal(str)  # a plain one-line description of the unit or connection under the mouse

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.snap_to_grid = False
        self.units: dict[str, UnitItem] = {}
        self.edges: dict[tuple[str, str], ConnectionItem] = {}
        self.layer: EdgeLayer | None = None
        self._order: list[ConnectionItem | None] = []  # the item of each connection, in circuit order
        self.scale = 1.0
        self.frozen_positions: set[str] = set()  # units being dragged: their model position lags
        self._shown = None  # the circuit object the items were built for
        self._routed_for = None  # the unit positions and arrows the current routes were made for
        self.tie_labels: dict[str, str] = {}  # tie group -> its badge label
        document.structure_changed.connect(self._structure_changed)
        document.values_changed.connect(self.refresh_values)
        document.data_changed.connect(self.refresh_looks)
        self.selectionChanged.connect(self._selection_changed)
        self.rebuild()

    def _structure_changed(self) -> None:
        if self.document.circuit is self._shown:
            self.sync_structure()
        else:  # a different circuit was loaded
            self.rebuild()

    def _selection_changed(self) -> None:
        # a per-item itemChange hook would cost a Python call for every change of 3,000 arrows
        self.layer.selected = {i for i in self.selectedItems() if isinstance(i, ConnectionItem)}
        self.layer.update()

    # ------------------------------------------------------------------ sync
    def rebuild(self) -> None:
        """Drop every item and build them afresh (a different circuit was loaded)."""
        self.clear()
        self.units.clear()
        self.edges = {}
        self.layer = EdgeLayer(self.edges)
        self.addItem(self.layer)
        self._shown = self.document.circuit
        self.sync_structure()
        self.rebuilt.emit()

    def sync_structure(self) -> None:
        c = self.document.circuit
        old_units = {id(i.unit): i for i in self.units.values()}
        units: dict[str, UnitItem] = {}
        for u in c.units:
            item = old_units.pop(id(u), None)
            if item is None or item.unit is not u:
                item = UnitItem(u, UnitLook.of(u, c))
                self.addItem(item)
            units[u.name] = item
        for item in old_units.values():
            self.removeItem(item)
        old_edges = {id(e.connection): e for e in self.edges.values()}
        fresh: set[ConnectionItem] = set()
        edges: dict[tuple[str, str], ConnectionItem] = {}
        for conn in c.connections:
            src, dst = units.get(conn.source), units.get(conn.target)
            if src is None or dst is None:
                continue
            item = old_edges.pop(id(conn), None)
            if item is None or item.connection is not conn or item.source is not src or item.target is not dst:
                if item is not None:
                    self.removeItem(item)
                item = ConnectionItem(conn, src, dst, self.layer)
                self.addItem(item)
                fresh.add(item)
            edges[conn.key] = item
        for item in old_edges.values():
            self.removeItem(item)
        self.units = units
        self.edges.clear()
        self.edges.update(edges)  # the layer holds this same dict
        edges = self.edges
        for u in units.values():
            u.edges = []
        for key, e in edges.items():
            e.source.edges.append(e)
            if e.target is not e.source:
                e.target.edges.append(e)
        for e in fresh:
            e.update_geometry()
        self._routed_for = None  # the arrows changed: route them again
        self._order = [edges.get(conn.key) for conn in c.connections]
        self._selection_changed()  # removed arrows must not stay highlighted
        self.layer.live = set()
        self.layer.invalidate()
        self.refresh_values()

    def refresh_values(self) -> None:
        """Positions, markers and weights from the model (after edits, undo, redo)."""
        for name, item in self.units.items():
            u = item.unit
            if name not in self.frozen_positions and (item.x() != u.x or item.y() != u.y):
                item.setPos(u.x, u.y)
        self.refresh_looks()
        self.refresh_ties()
        if not self.frozen_positions:
            self.reroute()
        self.refresh_weights()

    def reroute(self, force: bool = False) -> None:
        """Bow the arrows that would cross a unit or run along another arrow (see ``routing``).

        Runs only when unit positions or the set of arrows changed since the last routing.
        """
        key = (tuple((n, i.x(), i.y()) for n, i in self.units.items()), len(self.edges))
        if not force and key == self._routed_for:
            return
        self._routed_for = key
        edges = self.edges
        defaults = {}
        for (s, t), e in edges.items():
            if s != t and (t, s) in edges:
                defaults[(s, t)] = reciprocal_bend(e.source.pos(), e.target.pos())
        if len(edges) <= routing.ROUTE_LIMIT:
            positions = {n: (i.x(), i.y()) for n, i in self.units.items()}
            rects = {}
            for n, i in self.units.items():
                r = i.sceneBoundingRect()
                loop = edges.get((n, n))
                if loop is not None:  # other arrows keep clear of a unit's self-connection too
                    loop.update_geometry()
                    r = r.united(loop.path.boundingRect())
                rects[n] = (r.left(), r.top(), r.right(), r.bottom())
            bends = routing.route(positions, rects, list(edges), defaults)
        else:  # a level of detail: thousands of arrows are drawn straight (reciprocal pairs apart)
            bends = defaults
        changed = False
        for key_, e in edges.items():
            bend = bends.get(key_, 0.0)
            if key_[0] == key_[1] and len(edges) <= routing.ROUTE_LIMIT:
                continue  # loops were placed above
            if key_[0] == key_[1] or bend != e.bend:
                e.bend = bend
                e.update_geometry()
                changed = True
        if changed:
            self.layer.invalidate()

    def refresh_ties(self) -> None:
        """Give every tied arrow its group's badge label: A, B, ... in the order groups first appear."""
        labels: dict[str, str] = {}
        changed = False
        for conn in self.document.circuit.connections:
            item = self.edges.get(conn.key)
            label = ""
            if conn.tie:
                if conn.tie not in labels:
                    labels[conn.tie] = _badge_label(len(labels))
                label = labels[conn.tie]
            if item is not None and item.tie_label != label:
                item.tie_label = label
                changed = True
        self.tie_labels = labels
        if changed:
            self.layer.invalidate()

    def refresh_looks(self) -> None:
        c = self.document.circuit
        for item in self.units.values():
            item.set_look(UnitLook.of(item.unit, c))

    def refresh_weights(self, weights=None) -> None:
        """Restyle the arrows from the model's weights, or from ``weights`` given in connection order.

        Only colours and widths change, so this is cheap enough for live training.
        """
        conns = self.document.circuit.connections
        values = [c.weight for c in conns] if weights is None else [float(w) for w in weights]
        scale = style.weight_scale(values)
        if scale != self.scale:
            self.scale = scale
            self.weight_scale_changed.emit(scale)
        # inlined style.weight_level: this loop runs over every connection at every training snapshot
        levels = style.WEIGHT_LEVELS
        per_unit = levels / scale
        changed = False
        for item, conn, w in zip(self._order, conns, values):
            if item is None:
                continue
            if w == 0.0:
                lv = 0
            else:
                lv = min(levels, max(1, round(abs(w) * per_unit)))
                if w < 0:
                    lv = -lv
            frozen = not conn.trains
            if lv != item.level or frozen != item.frozen:
                item.level, item.frozen = lv, frozen
                changed = True
        if changed:
            self.layer.invalidate()

    def begin_drag(self, names) -> None:
        """Units ``names`` are about to be dragged: keep their model positions, draw their arrows live."""
        self.frozen_positions = set(names)
        live = set()
        for n in names:
            for e in self.units[n].edges if n in self.units else ():
                live.add(e)
                other = e.target if e.source.name == n else e.source
                live.update(k for k in other.edges if k.source is k.target)  # its loop turns too
        self.layer.set_live(live)

    def end_drag(self) -> None:
        self.frozen_positions = set()
        self.layer.set_live(())
        self.reroute()

    # ------------------------------------------------------------- selection
    def selected_units(self) -> list[str]:
        """Names of the selected units, in circuit order."""
        return [n for n, i in self.units.items() if i.isSelected()]

    def selected_connections(self) -> list[tuple[str, str]]:
        return [k for k, i in self.edges.items() if i.isSelected()]

    def select(self, units=(), connections=()) -> None:
        """Select exactly these units and connections."""
        units, connections = set(units), set(map(tuple, connections))
        self.blockSignals(True)
        for n, i in self.units.items():
            i.setSelected(n in units)
        for k, i in self.edges.items():
            i.setSelected(k in connections)
        self.blockSignals(False)
        self.selectionChanged.emit()

    def content_rect(self) -> QRectF:
        """The area the units and arrows cover (the edge layer itself spans the whole scene)."""
        rect = QRectF()
        for item in self.units.values():
            rect = rect.united(item.sceneBoundingRect())
        for item in self.edges.values():
            rect = rect.united(item.boundingRect())
        return rect

    def unit_at(self, pos: QPointF) -> UnitItem | None:
        for item in self.items(pos):
            if isinstance(item, UnitItem):
                return item
        return None

    # ------------------------------------------------------------------ grid
    def snapped(self, pos: QPointF) -> QPointF:
        if not self.snap_to_grid:
            return pos
        g = style.GRID_STEP
        return QPointF(round(pos.x() / g) * g, round(pos.y() / g) * g)

    def drawBackground(self, painter: QPainter, rect: QRectF) -> None:
        painter.fillRect(rect, style.BACKGROUND)
        if not self.snap_to_grid:
            return
        g = style.GRID_STEP
        scale = painter.worldTransform().m11()
        if g * scale < 8:
            return
        painter.setPen(QPen(style.GRID_DOT, 2.0 / max(scale, 1e-3)))
        x0, y0 = math.floor(rect.left() / g) * g, math.floor(rect.top() / g) * g
        points = [QPointF(x0 + i * g, y0 + j * g)
                  for i in range(int(rect.width() / g) + 2) for j in range(int(rect.height() / g) + 2)]
        painter.drawPoints(points)

    # ------------------------------------------------------------------ text
    def describe_unit(self, unit: Unit) -> str:
        c = self.document.circuit
        sched = c.schedule_for(unit.name)
        lines = [f"<b>{unit.name}</b> ({unit.activation})",
                 f"bias {unit.bias:+.4g}" + ("" if unit.bias_trains else " (frozen)")]
        if unit.initial_mode == "fixed":
            lines.append(f"initial state {unit.initial_state():.4g}")
        else:
            lines.append(f"initial state {unit.initial_mode}")
        if sched.clamp != "none":
            lines.append(f"clamped: {sched.clamp}")
        if sched.target != "none":
            lines.append(f"targets: {sched.target}")
        if unit.sign:
            lines.append(f"{unit.sign} (outgoing weights {'≥' if unit.sign == 'excitatory' else '≤'} 0)")
        return "<br>".join(lines)

    def hover(self, item) -> str:
        """Announce ``item`` (under the mouse) and return its tooltip text."""
        if isinstance(item, UnitItem):
            u = item.unit
            line = f"{u.name}: {u.activation}, bias {u.bias:+.4g}, initial state {u.initial_mode}"
            tip = self.describe_unit(u)
        else:
            k = item.connection
            line = f"{k.source} → {k.target}: weight {k.weight:+.6g}" + ("" if k.trains else " (frozen)")
            line += f", tie group '{k.tie}'" if k.tie else ""
            tip = self.describe_connection(k)
        self.hovered.emit(line)
        return tip

    def describe_connection(self, conn: Connection) -> str:
        text = f"<b>{conn.source} → {conn.target}</b><br>weight {conn.weight:+.6g}"
        if not conn.trains:
            text += "<br>frozen"
        if conn.tie:
            badge = self.tie_labels.get(conn.tie, "")
            text += f"<br>tie group '{conn.tie}' (badge {badge})"
        return text


def _badge_label(i: int) -> str:
    """A, B, ..., Z, AA, AB, ...: short enough for a badge on an arrow."""
    text = ""
    i += 1
    while i:
        i, r = divmod(i - 1, 26)
        text = chr(65 + r) + text
    return text
