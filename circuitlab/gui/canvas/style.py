"""Sizes of the canvas, and the colours it uses, taken from the one visual code (``gui.visual_code``)."""

from circuitlab.gui.visual_code import (  # noqa: F401  (re-exported for the canvas modules)
    BACKGROUND, GLYPH, GLYPH_AXIS, GRID_DOT, LEGEND_FILL, LUT_SIZE, MAX_EDGE_WIDTH, MIN_EDGE_WIDTH,
    NAME_PLATE, OUTLINE as UNIT_OUTLINE, SELECTION, TEXT as UNIT_TEXT, UNIT_FILL, WEIGHT_GAP,
    WEIGHT_LEVELS, WEIGHT_MAP_NAME, ZERO_WEIGHT, level_style, weight_color, weight_level,
    weight_position, weight_scale, weight_width)

UNIT_RADIUS = 22.0
SCENE_EXTENT = 50_000.0  # the scene spans +-this in x and y
GRID_STEP = 20.0
LEGEND_TEXT = UNIT_TEXT
