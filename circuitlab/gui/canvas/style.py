"""Colours, sizes and the weight colour scale of the canvas.

Weights are coloured with pyqtgraph's ``CET-D1A`` map (a diverging,
perceptually uniform map from Peter Kovesi's colorcet set): blue for
negative, red for positive. Its pale middle would vanish on the light canvas,
so the scale is sampled outside a small central band: a zero weight is a
neutral grey and every other weight is visibly coloured, darker as it grows.
"""

from functools import lru_cache

from PySide6.QtGui import QColor

UNIT_RADIUS = 22.0
SCENE_EXTENT = 50_000.0  # the scene spans +-this in x and y
GRID_STEP = 20.0

BACKGROUND = QColor("#f7f7f4")
GRID_DOT = QColor("#d9d9d2")
UNIT_FILL = QColor("#ffffff")
UNIT_OUTLINE = QColor("#4a5560")
UNIT_SELECTED = QColor("#2a7de1")
UNIT_TEXT = QColor("#1e252b")
NAME_PLATE = QColor(247, 247, 244, 215)
GLYPH = QColor("#5d6b78")
GLYPH_AXIS = QColor("#c3c9cf")
ZERO_WEIGHT = QColor("#9aa0a6")
SELECTED_EDGE = QColor("#2a7de1")
CLAMP_MARK = QColor("#1f7a72")    # teal wedge on the left rim: the unit is held to data
TARGET_MARK = QColor("#b8741a")   # ochre ring on the right rim: the unit is judged against targets
LEARNED_MARK = QColor("#6b4fa0")  # violet diamond on the bottom rim: the initial state is learned
LEGEND_FILL = QColor(255, 255, 255, 230)
LEGEND_TEXT = QColor("#2b3238")

WEIGHT_MAP_NAME = "CET-D1A"
WEIGHT_GAP = 0.14      # half-width of the skipped pale band in the middle of the map
MIN_EDGE_WIDTH = 1.2
MAX_EDGE_WIDTH = 5.5
LUT_SIZE = 257


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


WEIGHT_LEVELS = 40  # magnitude steps per sign: arrows are drawn in batches of one level each


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
    """The magnitude mapped to the ends of the colour scale: the largest |weight|, at least 1e-9."""
    return max((abs(w) for w in weights), default=0.0) or 1.0
