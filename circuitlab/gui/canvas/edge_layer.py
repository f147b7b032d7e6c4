"""One item that paints every connection arrow, batched by weight level.

Painting 3,000 arrows one item at a time costs a Python call each; here the
arrows of one weight level (and frozen state) are joined into one path and
drawn with one call, so a repaint is a few dozen calls. Arrows attached to
units being dragged are left out of the batches and drawn one by one, so a
drag never rebuilds the batches.
"""

from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QBrush, QFontMetricsF, QPainter, QPainterPath, QPen, QPixmap
from PySide6.QtWidgets import QGraphicsItem

from circuitlab.gui import visual_code as vc
from circuitlab.gui.canvas import style

BADGE_METRICS = QFontMetricsF(vc.badge_font())


SMOOTH_ALWAYS = 800  # circuits with at most this many connections are always antialiased
SMOOTH_ZOOM = 0.75   # larger ones from this zoom on


class EdgeLayer(QGraphicsItem):
    """Draws the ConnectionItems of ``edges`` (a dict kept by the scene)."""

    def __init__(self, edges: dict):
        super().__init__()
        self.edges = edges
        self.live: set = set()
        self.selected: set = set()  # kept by the scene as the selection changes
        self._still: tuple | None = None  # (view key, picture of the still arrows) while dragging
        self._batches: list[tuple[int, bool, QPainterPath, QPainterPath]] | None = None
        self._tied: list | None = None  # arrows with a tie badge
        # covers the whole scene, so arrows can move anywhere without bounds bookkeeping
        self._bounds = QRectF(-style.SCENE_EXTENT, -style.SCENE_EXTENT, 2 * style.SCENE_EXTENT,
                              2 * style.SCENE_EXTENT)
        self.setZValue(0.0)
        self.setAcceptedMouseButtons(Qt.NoButton)
        self.setAcceptHoverEvents(False)

    def invalidate(self) -> None:
        """Some arrow changed shape or style: rebuild the batches before the next paint."""
        self._batches = None
        self._tied = None
        self.update()

    def edge_changed(self, item) -> None:
        if item in self.live:
            self.update()
        elif self._batches is not None:
            self.invalidate()

    def set_live(self, items) -> None:
        """Draw these arrows one by one (their units are being dragged), the rest in batches."""
        items = set(items)
        if items != self.live:
            self.live = items
            self._still = None
            self.invalidate()

    def boundingRect(self) -> QRectF:
        return self._bounds

    def _paint_still_picture(self, painter: QPainter, widget) -> None:
        """During a drag the other arrows stand still: draw them once into a picture and reuse it."""
        t = painter.worldTransform()
        ratio = widget.devicePixelRatioF()
        key = (t.m11(), t.m12(), t.m21(), t.m22(), t.dx(), t.dy(), widget.width(), widget.height(),
               ratio, id(self._batches))
        if self._still is None or self._still[0] != key:
            picture = QPixmap(int(widget.width() * ratio), int(widget.height() * ratio))
            picture.setDevicePixelRatio(ratio)
            picture.fill(Qt.transparent)
            p = QPainter(picture)
            p.setRenderHints(painter.renderHints())
            p.setTransform(t)
            for level, frozen, lines, heads in self._batches:
                _draw(p, level, frozen, lines, heads)
            p.end()
            self._still = (key, picture)
        painter.save()
        painter.resetTransform()
        painter.drawPixmap(0, 0, self._still[1])
        painter.restore()

    def _build(self) -> list:
        groups: dict[tuple[int, bool], tuple[QPainterPath, QPainterPath]] = {}
        live = self.live
        for e in self.edges.values():
            if e in live:
                continue
            g = groups.get((e.level, e.frozen))
            if g is None:
                g = groups[(e.level, e.frozen)] = (QPainterPath(), QPainterPath())
            g[0].addPath(e.path)
            g[1].addPolygon(e.arrow)
        return [(key[0], key[1], *groups[key]) for key in sorted(groups)]

    def paint(self, painter: QPainter, option, widget=None) -> None:
        if self._batches is None:
            self._batches = self._build()
        # smoothing thousands of thin lines costs most of a frame; a large circuit seen whole
        # is drawn without it (zoom in, or a smaller circuit, and the lines are smooth again)
        lod = option.levelOfDetailFromTransform(painter.worldTransform())
        painter.setRenderHint(QPainter.Antialiasing, len(self.edges) <= SMOOTH_ALWAYS or lod >= SMOOTH_ZOOM)
        if self.selected:
            painter.setBrush(Qt.NoBrush)
            for e in self.selected:
                painter.setPen(vc.selection_pen(e.width + 8.0))
                painter.drawPath(e.path)
                painter.drawPolygon(e.arrow)
        if self.live and widget is not None:
            self._paint_still_picture(painter, widget)
        else:
            for level, frozen, lines, heads in self._batches:
                _draw(painter, level, frozen, lines, heads)
        for e in self.live:
            heads = QPainterPath()
            heads.addPolygon(e.arrow)
            _draw(painter, e.level, e.frozen, e.path, heads)
        if self.selected:  # the dashed outline tells the selection apart without its colour
            painter.setBrush(Qt.NoBrush)
            painter.setPen(vc.selection_outline(1.4))
            for e in self.selected:
                painter.drawPolygon(e.arrow)
        if self._tied is None:
            self._tied = [e for e in self.edges.values() if e.tie_label]
        for e in self._tied:
            self._draw_badge(painter, e)

    @staticmethod
    def _draw_badge(painter: QPainter, e) -> None:
        """The tie group's badge at the middle of the arrow."""
        mid = e.path.pointAtPercent(0.5)
        w = max(16.0, BADGE_METRICS.horizontalAdvance(e.tie_label) + 8.0)
        vc.draw_tie_badge(painter, QRectF(mid.x() - w / 2, mid.y() - 7, w, 14), e.tie_label)


def _draw(painter: QPainter, level: int, frozen: bool, lines: QPainterPath, heads: QPainterPath) -> None:
    color, width = style.level_style(level)
    pen = QPen(color, width, Qt.SolidLine, Qt.FlatCap)
    if frozen:
        pen.setDashPattern([3.0, 2.0])
    painter.setPen(pen)
    painter.setBrush(Qt.NoBrush)
    painter.drawPath(lines)
    painter.setPen(Qt.NoPen)
    painter.setBrush(QBrush(color))
    painter.drawPath(heads)
