"""The legend over the canvas: the weight colour scale and every mark of the visual code.

It is painted in viewport pixels by the canvas, which places it in a corner
where it covers no unit (Fit to View leaves room for it) and collapses it to
a small tab when it is clicked.
"""

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QFont, QFontMetricsF, QLinearGradient, QPainter, QPen

from circuitlab.gui import visual_code as vc

BAR_WIDTH = 150.0
ROW = 17.0
PAD = 8.0
COLUMN = 140.0
COLLAPSED_TEXT = "Legend ▸"


def _font() -> QFont:
    f = QFont()
    f.setPointSizeF(8.0)
    return f


def _rows():
    return [(caption.split(" (")[0], draw) for caption, draw in vc.legend_rows()]


def legend_size(collapsed: bool = False) -> tuple[float, float]:
    fm = QFontMetricsF(_font())
    if collapsed:
        return fm.horizontalAdvance(COLLAPSED_TEXT) + 2 * PAD, fm.height() + PAD
    per_column = (len(_rows()) + 1) // 2
    return 2 * COLUMN + 2 * PAD, 2 * PAD + 2 * fm.height() + 14 + per_column * ROW


def draw_legend(painter: QPainter, origin: QPointF, scale: float, collapsed: bool = False) -> None:
    """Draw the legend with its top-left corner at ``origin`` (viewport pixels)."""
    w, h = legend_size(collapsed)
    x0, y0 = origin.x(), origin.y()
    painter.save()
    painter.setRenderHint(QPainter.Antialiasing)
    painter.setPen(QPen(vc.GLYPH_AXIS, 1.0))
    painter.setBrush(vc.LEGEND_FILL)
    painter.drawRoundedRect(QRectF(x0, y0, w, h), 6, 6)
    font = _font()
    fm = QFontMetricsF(font)
    painter.setFont(font)
    painter.setPen(vc.TEXT)
    if collapsed:
        painter.drawText(QRectF(x0, y0, w, h), Qt.AlignCenter, COLLAPSED_TEXT)
        painter.restore()
        return
    x, y = x0 + PAD, y0 + PAD
    painter.drawText(QRectF(x, y, 2 * COLUMN, fm.height()), Qt.AlignLeft,
                     "weight (click to fold the legend)")
    y += fm.height() + 2
    bar = 2 * COLUMN - 4
    grad = QLinearGradient(x, 0, x + bar, 0)
    for i in range(41):
        t = i / 40
        grad.setColorAt(t, vc.weight_color(scale * (2 * t - 1), scale))
    painter.setPen(Qt.NoPen)
    painter.setBrush(grad)
    painter.drawRect(QRectF(x, y, bar, 8))
    y += 10
    painter.setPen(vc.TEXT)
    label = f"{scale:.3g}"
    for text, align in ((f"−{label}", Qt.AlignLeft), ("0", Qt.AlignHCenter), (f"+{label}", Qt.AlignRight)):
        painter.drawText(QRectF(x, y, bar, fm.height()), align, text)
    y += fm.height() + 2
    rows = _rows()
    per_column = (len(rows) + 1) // 2
    for k, (text, glyph) in enumerate(rows):
        cx = x + (k // per_column) * COLUMN
        cy = y + (k % per_column) * ROW
        painter.save()
        glyph(painter, QPointF(cx + 10, cy + ROW / 2))
        painter.restore()
        painter.setPen(vc.TEXT)
        painter.setFont(font)
        painter.drawText(QRectF(cx + 24, cy, COLUMN - 24, ROW), Qt.AlignLeft | Qt.AlignVCenter, text)
    painter.restore()
