"""The two kinds of items on the canvas: units and connections.

Unit markers (drawn on the rim, in the one visual code of ``gui.visual_code``):
- a wedge pointing into the left rim: the unit is clamped to data
  (filled when clamped at every step, outlined when only at some steps);
- a ring with a dot on the right rim: the unit carries targets
  (filled at every step, outlined at some steps);
- a diamond on the bottom rim: the unit learns its initial state;
- a '+' or '-' in a small square on the upper right: its sign constraint.
Inside the unit a small curve shows its activation function.
"""

import math
from dataclasses import dataclass

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import (QFont, QFontMetricsF, QPainter, QPainterPath,
                           QPainterPathStroker, QPen, QPolygonF)
from PySide6.QtWidgets import QGraphicsItem, QStyle

from circuitlab.gui import visual_code as vc
from circuitlab.gui.canvas import style
from circuitlab.gui.canvas.geometry import edge_path, free_angle
from circuitlab.gui.visual_code import draw_clamp_mark, draw_learned_mark, draw_sign_mark, draw_target_mark  # noqa: F401
from circuitlab.model import Circuit, Connection, Unit

R = style.UNIT_RADIUS
RIM_BAND = 8.0  # a press this close inside the rim starts a connection instead of a move


@dataclass(frozen=True)
class UnitLook:
    """Everything a unit item draws besides its position."""

    name: str
    activation: str
    clamp: str   # "", "some", "every"
    target: str  # "", "some", "every"
    learned: bool
    sign: str | None

    @staticmethod
    def of(unit: Unit, circuit: Circuit) -> "UnitLook":
        sched = circuit.schedule_for(unit.name)
        if sched.clamp == "every":
            clamp = "every"
        elif sched.clamp != "none" or unit.initial_mode == "clamped":
            clamp = "some"
        else:
            clamp = ""
        target = {"none": "", "every": "every"}.get(sched.target, "some")
        return UnitLook(unit.name, unit.activation, clamp, target,
                        unit.initial_mode == "learned", unit.sign)


def _name_font() -> QFont:
    f = QFont()
    f.setPointSizeF(9.5)
    return f


NAME_FONT = _name_font()
NAME_METRICS = QFontMetricsF(NAME_FONT)
NAME_WIDTH = 120.0


def _unit_bounds(name: str) -> QRectF:
    """The circle with its rim markers, and the name plate below (as wide as the name needs)."""
    text = NAME_METRICS.elidedText(name, Qt.ElideMiddle, NAME_WIDTH - 8)
    w = max(2 * R + 18, NAME_METRICS.horizontalAdvance(text) + 12)
    return QRectF(-w / 2, -R - 8, w, 2 * R + 16 + NAME_METRICS.height() + 4)


class UnitItem(QGraphicsItem):
    """A unit: a circle with its activation glyph, markers and name."""

    def __init__(self, unit: Unit, look: UnitLook):
        super().__init__()
        self.unit = unit
        self.look = look
        self._bounds = _unit_bounds(look.name)
        self.edges: list["ConnectionItem"] = []
        self.setFlags(QGraphicsItem.ItemIsSelectable | QGraphicsItem.ItemIsMovable
                      | QGraphicsItem.ItemSendsGeometryChanges)
        self.setAcceptHoverEvents(True)
        self.setCacheMode(QGraphicsItem.DeviceCoordinateCache)
        self.setZValue(1.0)
        self.setPos(unit.x, unit.y)

    @property
    def name(self) -> str:
        return self.unit.name

    def set_look(self, look: UnitLook) -> None:
        if look != self.look:
            if look.name != self.look.name:
                self.prepareGeometryChange()
                self._bounds = _unit_bounds(look.name)
            self.look = look
            self.update()
            for e in self.edges:
                if e.target is e.source:
                    e.update_geometry()  # the loop keeps clear of the markers

    def loop_angle(self) -> float:
        """Direction for this unit's self-connection: away from its other arrows and its markers."""
        occupied = []
        p = self.pos()
        for e in self.edges:
            other = e.target if e.source is self else e.source
            if other is not self:
                occupied.append(math.atan2(other.y() - p.y(), other.x() - p.x()))
        if self.look.clamp:
            occupied.append(math.pi)
        if self.look.target:
            occupied.append(0.0)
        if self.look.learned:
            occupied.append(math.pi / 2)
        return free_angle(occupied)

    def in_rim_band(self, local: QPointF) -> bool:
        return math.hypot(local.x(), local.y()) >= R - RIM_BAND

    # ---------------------------------------------------------------- drawing
    def boundingRect(self) -> QRectF:
        return self._bounds

    def shape(self) -> QPainterPath:
        path = QPainterPath()
        path.addEllipse(QPointF(0, 0), R + 3, R + 3)
        return path

    def paint(self, painter: QPainter, option, widget=None) -> None:
        painter.setRenderHint(QPainter.Antialiasing)
        selected = bool(option.state & QStyle.State_Selected)
        look = self.look
        if selected:
            painter.setPen(vc.selection_pen(7.0))
            painter.setBrush(Qt.NoBrush)
            painter.drawEllipse(QPointF(0, 0), R + 1.5, R + 1.5)
        painter.setPen(QPen(style.UNIT_OUTLINE, 1.5))
        painter.setBrush(style.UNIT_FILL)
        painter.drawEllipse(QPointF(0, 0), R, R)
        if selected:
            painter.setPen(vc.selection_outline(2.0))
            painter.setBrush(Qt.NoBrush)
            painter.drawEllipse(QPointF(0, 0), R + 4.5, R + 4.5)
        _draw_activation(painter, look.activation)
        if look.sign:
            draw_sign_mark(painter, QPointF(R * 0.62, -R * 0.62), look.sign)
        if look.clamp:
            draw_clamp_mark(painter, QPointF(-R, 0), look.clamp == "every")
        if look.target:
            draw_target_mark(painter, QPointF(R, 0), look.target == "every")
        if look.learned:
            draw_learned_mark(painter, QPointF(0, R))
        text = NAME_METRICS.elidedText(look.name, Qt.ElideMiddle, NAME_WIDTH - 8)
        tw = NAME_METRICS.horizontalAdvance(text)
        plate = QRectF(-tw / 2 - 4, R + 8, tw + 8, NAME_METRICS.height() + 2)
        painter.setPen(Qt.NoPen)
        painter.setBrush(style.NAME_PLATE)  # keeps the name legible where arrows pass beneath it
        painter.drawRoundedRect(plate, 4, 4)
        painter.setFont(NAME_FONT)
        painter.setPen(vc.SELECTION if selected else style.UNIT_TEXT)
        painter.drawText(plate, Qt.AlignCenter, text)

    # ------------------------------------------------------------- behaviour
    def itemChange(self, change, value):
        if change == QGraphicsItem.ItemPositionChange and self.scene() is not None:
            return self.scene().snapped(value)
        if change == QGraphicsItem.ItemPositionHasChanged:
            for e in self.edges:
                e.update_geometry()
                other = e.target if e.source is self else e.source
                if other is not self:
                    for loop in other.edges:
                        if loop.source is loop.target:
                            loop.update_geometry()
        return super().itemChange(change, value)

    def hoverEnterEvent(self, event) -> None:
        if self.scene() is not None:
            self.setToolTip(self.scene().hover(self))
        super().hoverEnterEvent(event)

    def hoverMoveEvent(self, event) -> None:
        self.setCursor(Qt.CrossCursor if self.in_rim_band(event.pos()) else Qt.ArrowCursor)
        super().hoverMoveEvent(event)


def _draw_activation(painter: QPainter, activation: str) -> None:
    """A tiny plot of the activation function, 22 x 14 px, centred in the unit."""
    w, h = 11.0, 7.0
    painter.setPen(QPen(style.GLYPH_AXIS, 1.0))
    base = 0.0 if activation == "tanh" else h  # tanh swings around zero; the others sit on a floor
    painter.drawLine(QPointF(-w, base), QPointF(w, base))
    painter.drawLine(QPointF(0, -h - 1), QPointF(0, h + 1))
    pts = []
    for i in range(23):
        x = -w + i * (2 * w / 22)
        s = x / w * 4.0
        if activation == "logistic":
            y = h - 2 * h / (1 + math.exp(-s))
        elif activation == "tanh":
            y = -h * math.tanh(s)
        elif activation == "relu":
            y = h - max(0.0, x / w) * 2 * h
        else:
            y = -x / w * h
        pts.append(QPointF(x, y))
    painter.setPen(QPen(style.GLYPH, 1.6, Qt.SolidLine, Qt.RoundCap, Qt.RoundJoin))
    painter.setBrush(Qt.NoBrush)
    painter.drawPolyline(QPolygonF(pts))


class ConnectionItem(QGraphicsItem):
    """A connection arrow: its geometry, weight level and picking shape.

    It paints nothing itself (the scene's EdgeLayer draws all arrows in
    batches); it is still what the mouse hits, selects and hovers.
    """

    def __init__(self, connection: Connection, source: UnitItem, target: UnitItem, layer):
        super().__init__()
        self.connection = connection
        self.source = source
        self.target = target
        self.layer = layer
        self.bend = 0.0     # how far the arrow bows to its left (0: straight); set by the scene's routing
        self.tie_label = ""  # the tie group's short badge label, "" when not tied
        self.level = 0
        self.frozen = not connection.trains
        self.path = QPainterPath()
        self.arrow = QPolygonF()
        self._shape: QPainterPath | None = None
        self._bounds = QRectF()
        self.setFlags(QGraphicsItem.ItemIsSelectable | QGraphicsItem.ItemHasNoContents)
        self.setAcceptHoverEvents(True)
        self.setZValue(0.5)

    @property
    def key(self) -> tuple[str, str]:
        return self.connection.key

    @property
    def width(self) -> float:
        return style.level_style(self.level)[1]

    def update_geometry(self) -> None:
        self.prepareGeometryChange()
        if self.source is self.target:
            self.path, self.arrow = edge_path(self.source.pos(), self.source.pos(), False,
                                              loop_angle=self.source.loop_angle())
        else:
            self.path, self.arrow = edge_path(self.source.pos(), self.target.pos(), self.bend)
        self._shape = None
        pad = style.MAX_EDGE_WIDTH + 2
        self._bounds = self.path.boundingRect().united(self.arrow.boundingRect()).adjusted(-pad, -pad, pad, pad)
        self.layer.edge_changed(self)

    def boundingRect(self) -> QRectF:
        return self._bounds

    def shape(self) -> QPainterPath:
        if self._shape is None:
            stroker = QPainterPathStroker()
            stroker.setWidth(max(9.0, self.width + 5))
            self._shape = stroker.createStroke(self.path)
            self._shape.addPolygon(self.arrow)
        return self._shape

    def paint(self, painter: QPainter, option, widget=None) -> None:
        """Never called (ItemHasNoContents); the EdgeLayer draws the arrow."""

    def hoverEnterEvent(self, event) -> None:
        if self.scene() is not None:
            self.setToolTip(self.scene().hover(self))
        super().hoverEnterEvent(event)
