"""Paths of connections: straight arrows, bent arrows for reciprocal pairs, loops for self-connections."""

import math

from PySide6.QtCore import QPointF
from PySide6.QtGui import QPainterPath, QPolygonF

from circuitlab.gui.canvas.style import UNIT_RADIUS

ARROW_LENGTH = 13.0
ARROW_HALF_WIDTH = 5.5
UP = -math.pi / 2  # screen y grows downwards


def _unit(dx: float, dy: float) -> tuple[float, float]:
    d = math.hypot(dx, dy) or 1.0
    return dx / d, dy / d


def edge_path(p: QPointF, q: QPointF, bend: float, radius: float = UNIT_RADIUS,
              loop_angle: float = UP) -> tuple[QPainterPath, QPolygonF]:
    """The line and the arrowhead of ``p -> q``.

    ``bend`` moves the middle of the arrow that far (scene pixels) to the
    left of its direction of travel (negative: to the right); 0 draws it
    straight. ``p == q`` draws a loop leaving the unit towards ``loop_angle``
    (radians, screen coordinates).
    """
    if p == q:
        return _loop(p, radius, loop_angle)
    dx, dy = _unit(q.x() - p.x(), q.y() - p.y())
    if not bend:
        start = QPointF(p.x() + dx * radius, p.y() + dy * radius)
        tip = QPointF(q.x() - dx * (radius + 1.5), q.y() - dy * (radius + 1.5))
        path = QPainterPath(start)
        path.lineTo(QPointF(tip.x() - dx * ARROW_LENGTH * 0.7, tip.y() - dy * ARROW_LENGTH * 0.7))
        return path, _arrow(tip, dx, dy)
    cx, cy = control_point(p.x(), p.y(), q.x(), q.y(), bend)
    sx, sy = _unit(cx - p.x(), cy - p.y())
    ex, ey = _unit(q.x() - cx, q.y() - cy)
    start = QPointF(p.x() + sx * radius, p.y() + sy * radius)
    tip = QPointF(q.x() - ex * (radius + 1.5), q.y() - ey * (radius + 1.5))
    path = QPainterPath(start)
    path.quadTo(QPointF(cx, cy), QPointF(tip.x() - ex * ARROW_LENGTH * 0.7, tip.y() - ey * ARROW_LENGTH * 0.7))
    return path, _arrow(tip, ex, ey)


def control_point(px: float, py: float, qx: float, qy: float, bend: float) -> tuple[float, float]:
    """The quadratic control point that puts the curve's middle ``bend`` to the left of p -> q.

    The middle of a quadratic Bezier lies halfway between the chord's middle
    and the control point, hence the factor 2.
    """
    dx, dy = _unit(qx - px, qy - py)
    nx, ny = dy, -dx  # left of the direction of travel (screen y grows downwards)
    return (px + qx) / 2 + nx * 2 * bend, (py + qy) / 2 + ny * 2 * bend


def reciprocal_bend(p: QPointF, q: QPointF) -> float:
    """How far the two arrows of a reciprocal pair bow apart by default."""
    dist = math.hypot(q.x() - p.x(), q.y() - p.y())
    return min(35.0, max(10.0, 0.1 * dist))


def _loop(p: QPointF, radius: float, angle: float) -> tuple[QPainterPath, QPolygonF]:
    spread = math.radians(28)
    reach = radius * 3.3

    def at(a: float, r: float) -> QPointF:
        return QPointF(p.x() + math.cos(a) * r, p.y() + math.sin(a) * r)

    start = at(angle - spread, radius)
    tip = at(angle + spread, radius + 1.5)
    c1, c2 = at(angle - spread, reach), at(angle + spread, reach)
    dx, dy = _unit(tip.x() - c2.x(), tip.y() - c2.y())
    path = QPainterPath(start)
    path.cubicTo(c1, c2, QPointF(tip.x() - dx * ARROW_LENGTH * 0.7, tip.y() - dy * ARROW_LENGTH * 0.7))
    return path, _arrow(tip, dx, dy)


# where a self-connection may go, in order of preference: up, the upper diagonals, the sides, the
# lower diagonals (never straight down: the unit's name is there)
LOOP_CANDIDATES = [UP, UP - math.pi / 4, UP + math.pi / 4, math.pi, 0.0, 3 * math.pi / 4, math.pi / 4]


def free_angle(occupied: list[float]) -> float:
    """The first candidate direction at least 60 degrees from every occupied one,
    else the candidate farthest from them."""
    occupied = [*occupied, math.pi / 2]  # the name below the unit
    limit, turn = math.radians(60), 2 * math.pi
    best, best_gap = UP, -1.0
    for cand in LOOP_CANDIDATES:
        gap = math.pi
        for a in occupied:
            d = abs(math.remainder(cand - a, turn))
            if d < gap:
                gap = d
                if gap < limit and gap <= best_gap:
                    break  # cannot beat the best so far
        if gap >= limit:
            return cand
        if gap > best_gap:
            best, best_gap = cand, gap
    return best


def _arrow(tip: QPointF, dx: float, dy: float) -> QPolygonF:
    bx, by = tip.x() - dx * ARROW_LENGTH, tip.y() - dy * ARROW_LENGTH
    nx, ny = -dy * ARROW_HALF_WIDTH, dx * ARROW_HALF_WIDTH
    return QPolygonF([tip, QPointF(bx + nx, by + ny), QPointF(bx - nx, by - ny)])
