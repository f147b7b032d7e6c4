"""The visual code of the editor: every colour and mark that means something, defined once.

The canvas, the inputs grid, the unrolled network, the activity stack and the
legends all draw from here, so a clamped cell, a target, a learned initial
state, the selection, a sign constraint and a tie group look the same in
every view (a test checks that no other module defines these colours).

The code does not rest on colour alone (colour-blind safe): each role has its
own shape as well, drawn by the functions below.

- clamped to data: a wedge (triangle) pointing into the unit or cell from the left;
- carries a target: a ring with a centre dot;
- learned initial state: a diamond;
- selection: a wide halo with a dashed outline, in a colour that no weight
  takes (weights run from blue through grey to red);
- sign constraint: a '+' (excitatory) or '-' (inhibitory) in a small square;
- tie group: a rounded badge with the group's short label on every tied connection;
- frozen weight: a dashed line.

Weights are coloured with pyqtgraph's ``CET-D1A`` map (a diverging,
perceptually uniform map from Peter Kovesi's colorcet set): blue for
negative, red for positive. Its pale middle would vanish on the light canvas,
so the scale is sampled outside a small central band: a zero weight is a
neutral grey and every other weight is visibly coloured, darker as it grows.

Contrast: every mark colour has at least 3:1 contrast against the canvas and
cell backgrounds (WCAG 2.1, non-text contrast), which ``contrast`` computes
and a test checks.
"""

from functools import lru_cache

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QPainter, QPen, QPolygonF

# ----------------------------------------------------------------- palette
BACKGROUND = QColor("#f7f7f4")     # the canvas
PLOT_BACKGROUND = QColor("#ffffff")
TEXT = QColor("#1e252b")
MUTED_TEXT = QColor("#6b737a")
OUTLINE = QColor("#4a5560")        # a unit's rim
UNIT_FILL = QColor("#ffffff")
GLYPH = QColor("#5d6b78")          # activation curve, sign mark
GLYPH_AXIS = QColor("#c3c9cf")
NAME_PLATE = QColor(247, 247, 244, 215)
GRID_DOT = QColor("#d9d9d2")

CLAMP = QColor("#00795f")          # bluish green: held to data
TARGET = QColor("#8a5a00")         # dark ochre: judged against a target
LEARNED = QColor("#6b4fa0")        # violet: the initial state is a trained parameter
SELECTION = QColor("#c8177c")      # magenta: what is selected (no weight takes this hue)
ZERO_WEIGHT = QColor("#9aa0a6")    # grey: a zero (or frozen zero) weight
TIE_BADGE = QColor("#3d4650")      # a tie group's badge; its text is white
TIE_TEXT = QColor("#ffffff")
PROBLEM = QColor("#c4161c")
ABSENT = QColor("#e5e5e5")         # a step the shown sequence does not have

# tints behind the grid's cells (the marks above carry the meaning; these only group them)
CLAMP_TINT = QColor("#dcefe9")
TARGET_TINT = QColor("#f6ecd9")
INITIAL_TINT = QColor("#ececec")
ROW_TINT = QColor("#fff7c2")       # rows of units selected on the canvas

LEGEND_FILL = QColor(255, 255, 255, 235)
BANNER_FILL = QColor("#fff7d6")
BANNER_RIM = QColor("#d9c27a")
BANNER_TEXT = QColor("#3d3414")

# the training views' own lines (not part of the role code, but defined here with the rest)
TRAIN_LINE = QColor("#1f618d")
HELD_OUT_LINE = QColor("#d35400")
SECONDARY_LINE = QColor("#5d6d7e")
NOTICE_FILL = {True: QColor("#fdecea"), False: QColor("#eaf4ea")}
NOTICE_RIM = {True: QColor("#c4161c"), False: QColor("#2e7d32")}

STATE_MAP = "viridis"   # forward states y
SIGNED_MAP = "CET-D1"   # e and delta: blue below zero, white at zero, red above

# ------------------------------------------------------------ weight scale
WEIGHT_MAP_NAME = "CET-D1A"
WEIGHT_GAP = 0.14      # half-width of the skipped pale band in the middle of the map
MIN_EDGE_WIDTH = 1.2
MAX_EDGE_WIDTH = 5.5
LUT_SIZE = 257
WEIGHT_LEVELS = 40     # magnitude steps per sign: arrows are drawn in batches of one level each


@lru_cache(maxsize=1)
def _lookup_table() -> tuple[QColor, ...]:
    import pyqtgraph.colormap  # imported on first use: keeps the window's start quick

    cmap = pyqtgraph.colormap.get(WEIGHT_MAP_NAME)
    return tuple(cmap.getLookupTable(0.0, 1.0, LUT_SIZE, mode="qcolor"))


def weight_position(weight: float, scale: float) -> float:
    """Where ``weight`` sits on the colour map (0..1) when the largest magnitude is ``scale``."""
    r = max(-1.0, min(1.0, weight / scale)) if scale > 0 else 0.0
    if r == 0.0:
        return 0.5
    side = 1.0 if r > 0 else -1.0
    return 0.5 + side * (WEIGHT_GAP + (0.5 - WEIGHT_GAP) * abs(r))


def weight_color(weight: float, scale: float) -> QColor:
    if weight == 0.0:
        return ZERO_WEIGHT
    lut = _lookup_table()
    return lut[round(weight_position(weight, scale) * (LUT_SIZE - 1))]


def weight_width(weight: float, scale: float) -> float:
    r = min(1.0, abs(weight) / scale) if scale > 0 else 0.0
    return MIN_EDGE_WIDTH + (MAX_EDGE_WIDTH - MIN_EDGE_WIDTH) * r


def weight_level(weight: float, scale: float) -> int:
    """``weight`` quantised to -WEIGHT_LEVELS..WEIGHT_LEVELS; only an exact zero gives 0."""
    if weight == 0.0 or scale <= 0:
        return 0
    level = max(1, min(WEIGHT_LEVELS, round(abs(weight) / scale * WEIGHT_LEVELS)))
    return level if weight > 0 else -level


@lru_cache(maxsize=2 * WEIGHT_LEVELS + 1)
def level_style(level: int) -> tuple[QColor, float]:
    """Colour and line width of a weight level."""
    r = level / WEIGHT_LEVELS
    return weight_color(r, 1.0), weight_width(r, 1.0)


def weight_scale(weights) -> float:
    """The magnitude mapped to the ends of the colour scale: the largest |weight| (1 if all are zero)."""
    return max((abs(w) for w in weights), default=0.0) or 1.0


def faded(colour: QColor, strength: float) -> QColor:
    """``colour`` mixed with white: ``strength`` 1 keeps it, 0 gives white."""
    return QColor(*(round(255 + (v - 255) * strength) for v in (colour.red(), colour.green(), colour.blue())))


# --------------------------------------------------------------- contrast
def _linear(v: int) -> float:
    c = v / 255
    return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4


def luminance(colour: QColor) -> float:
    """Relative luminance (WCAG 2.1 definition, sRGB)."""
    return 0.2126 * _linear(colour.red()) + 0.7152 * _linear(colour.green()) + 0.0722 * _linear(colour.blue())


def contrast(a: QColor, b: QColor) -> float:
    """WCAG 2.1 contrast ratio of two opaque colours (1 to 21)."""
    la, lb = sorted((luminance(a), luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


ROLE_COLOURS = {"clamped": CLAMP, "target": TARGET, "learned initial state": LEARNED, "selection": SELECTION}


# ------------------------------------------------------------------ marks
def draw_clamp_mark(painter: QPainter, at: QPointF, filled: bool = True, size: float = 1.0) -> None:
    """A wedge pointing right, into the unit or cell at its left edge: data held onto it.

    Filled when clamped at every step, outlined when only at some steps.
    """
    x, y = at.x(), at.y()
    s = size
    poly = QPolygonF([QPointF(x + 4 * s, y), QPointF(x - 7 * s, y - 6.5 * s), QPointF(x - 7 * s, y + 6.5 * s)])
    painter.setPen(QPen(CLAMP, 1.6 * max(s, 0.7), Qt.SolidLine, Qt.RoundCap, Qt.RoundJoin))
    painter.setBrush(CLAMP if filled else UNIT_FILL)
    painter.drawPolygon(poly)


def draw_target_mark(painter: QPainter, at: QPointF, filled: bool = True, size: float = 1.0) -> None:
    """A ring with a centre dot: the state is compared with a target (filled: at every step)."""
    painter.setPen(QPen(TARGET, 1.8 * max(size, 0.7)))
    painter.setBrush(TARGET if filled else UNIT_FILL)
    painter.drawEllipse(at, 6.0 * size, 6.0 * size)
    painter.setPen(Qt.NoPen)
    painter.setBrush(UNIT_FILL if filled else TARGET)
    painter.drawEllipse(at, 2.0 * size, 2.0 * size)


def draw_learned_mark(painter: QPainter, at: QPointF, size: float = 1.0) -> None:
    """A diamond: the state at step 0 is a trained parameter."""
    x, y, s = at.x(), at.y(), 6.0 * size
    poly = QPolygonF([QPointF(x, y - s), QPointF(x + s, y), QPointF(x, y + s), QPointF(x - s, y)])
    painter.setPen(QPen(LEARNED, 1.4))
    painter.setBrush(LEARNED)
    painter.drawPolygon(poly)


def draw_sign_mark(painter: QPainter, at: QPointF, sign: str) -> None:
    """'+' (excitatory: outgoing weights >= 0) or '-' (inhibitory: <= 0) in a small square."""
    x, y = at.x(), at.y()
    painter.setPen(QPen(GLYPH, 1.0))
    painter.setBrush(UNIT_FILL)
    painter.drawRect(QRectF(x - 5, y - 5, 10, 10))
    painter.setPen(QPen(TEXT, 1.6))
    painter.drawLine(QPointF(x - 3, y), QPointF(x + 3, y))
    if sign == "excitatory":
        painter.drawLine(QPointF(x, y - 3), QPointF(x, y + 3))


def badge_font() -> QFont:
    f = QFont()
    f.setPointSizeF(7.5)
    f.setBold(True)
    return f


def draw_tie_badge(painter: QPainter, rect: QRectF, label: str) -> None:
    """A tie group's badge: a rounded dark box with the group's short label."""
    painter.setPen(Qt.NoPen)
    painter.setBrush(TIE_BADGE)
    painter.drawRoundedRect(rect, 4, 4)
    painter.setFont(badge_font())
    painter.setPen(TIE_TEXT)
    painter.drawText(rect, Qt.AlignCenter, label)


def selection_pen(width: float) -> QPen:
    """The halo drawn under a selected arrow or around a selected unit."""
    colour = QColor(SELECTION)
    colour.setAlpha(150)
    return QPen(colour, width, Qt.SolidLine, Qt.RoundCap, Qt.RoundJoin)


def selection_outline(width: float = 2.0) -> QPen:
    """The dashed outline that marks a selection without relying on its colour."""
    pen = QPen(SELECTION, width, Qt.DashLine, Qt.RoundCap, Qt.RoundJoin)
    pen.setDashPattern([3.0, 2.0])
    return pen


def frozen_pen(width: float = 2.0) -> QPen:
    pen = QPen(ZERO_WEIGHT, width)
    pen.setDashPattern([3.0, 2.0])
    return pen


def css(colour: QColor) -> str:
    """``colour`` as a style-sheet colour (#rrggbb)."""
    return colour.name()


# -------------------------------------------------------------- legend rows
def legend_rows() -> list[tuple[str, object]]:
    """(caption, draw(painter, centre)) of every role mark, in the order legends list them."""
    return [
        ("clamped to data (outline: some steps)", lambda p, c: draw_clamp_mark(p, c, True)),
        ("carries targets (outline: some steps)", lambda p, c: draw_target_mark(p, c, True)),
        ("learned initial state", lambda p, c: draw_learned_mark(p, c)),
        ("excitatory / inhibitory", lambda p, c: (draw_sign_mark(p, QPointF(c.x() - 6, c.y()), "excitatory"),
                                                  draw_sign_mark(p, QPointF(c.x() + 6, c.y()), "inhibitory"))),
        ("tie group", lambda p, c: draw_tie_badge(p, QRectF(c.x() - 9, c.y() - 6, 18, 12), "A")),
        ("frozen weight", lambda p, c: (p.setPen(frozen_pen()), p.drawLine(QPointF(c.x() - 9, c.y()),
                                                                           QPointF(c.x() + 9, c.y())))),
        ("selected", lambda p, c: (p.setPen(selection_pen(7.0)), p.drawLine(QPointF(c.x() - 8, c.y()),
                                                                            QPointF(c.x() + 8, c.y())),
                                   p.setPen(selection_outline(1.6)), p.setBrush(Qt.NoBrush),
                                   p.drawRect(QRectF(c.x() - 9, c.y() - 5, 18, 10)))),
    ]
