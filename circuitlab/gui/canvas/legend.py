"""The legend in the canvas corner: the weight colour scale and the unit markers."""

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFont, QFontMetricsF, QLinearGradient, QPainter, QPen

from circuitlab.gui.canvas import style
from circuitlab.gui.canvas.items import draw_clamp_mark, draw_learned_mark, draw_target_mark

BAR_WIDTH = 150.0
ROW = 19.0
PAD = 10.0


def _font() -> QFont:
    f = QFont()
    f.setPointSizeF(8.5)
    return f


def legend_size() -> tuple[float, float]:
    return BAR_WIDTH + 2 * PAD, 2 * PAD + 44 + 4 * ROW


def draw_legend(painter: QPainter, origin: QPointF, scale: float) -> None:
    """Draw the legend with its top-left corner at ``origin`` (viewport pixels)."""
    w, h = legend_size()
    x0, y0 = origin.x(), origin.y()
    painter.save()
    painter.setRenderHint(QPainter.Antialiasing)
    painter.setPen(QPen(style.GLYPH_AXIS, 1.0))
    painter.setBrush(style.LEGEND_FILL)
    painter.drawRoundedRect(QRectF(x0, y0, w, h), 6, 6)
    font = _font()
    fm = QFontMetricsF(font)
    painter.setFont(font)
    painter.setPen(style.LEGEND_TEXT)
    x, y = x0 + PAD, y0 + PAD
    painter.drawText(QRectF(x, y, BAR_WIDTH, fm.height()), Qt.AlignLeft, "weight")
    y += fm.height() + 3
    grad = QLinearGradient(x, 0, x + BAR_WIDTH, 0)
    for i in range(41):
        t = i / 40
        grad.setColorAt(t, style.weight_color(scale * (2 * t - 1), scale))
    painter.setPen(Qt.NoPen)
    painter.setBrush(grad)
    painter.drawRect(QRectF(x, y, BAR_WIDTH, 9))
    y += 11
    painter.setPen(style.LEGEND_TEXT)
    label = f"{scale:.3g}"
    for text, align in ((f"−{label}", Qt.AlignLeft), ("0", Qt.AlignHCenter), (f"+{label}", Qt.AlignRight)):
        painter.drawText(QRectF(x, y, BAR_WIDTH, fm.height()), align, text)
    y += fm.height() + 8
    rows = [("clamped to data", lambda p: draw_clamp_mark(painter, p, True)),
            ("carries targets", lambda p: draw_target_mark(painter, p, True)),
            ("learns initial state", lambda p: draw_learned_mark(painter, p)),
            ("frozen weight", None)]
    for text, glyph in rows:
        centre = QPointF(x + 9, y + ROW / 2 - 2)
        if glyph is None:
            pen = QPen(style.ZERO_WEIGHT, 2.0)
            pen.setDashPattern([3.0, 2.0])
            painter.setPen(pen)
            painter.drawLine(QPointF(x, centre.y()), QPointF(x + 18, centre.y()))
        else:
            glyph(centre)
        painter.setPen(style.LEGEND_TEXT)
        painter.drawText(QRectF(x + 26, y, BAR_WIDTH - 26, ROW), Qt.AlignLeft | Qt.AlignVCenter, text)
        y += ROW
    painter.restore()
