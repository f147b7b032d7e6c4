"""Routing of connection arrows so that every one stays visible and clickable.

A straight arrow that would pass through a third unit (or its name), or leave
a unit along almost the same line as another arrow of that unit, is bowed to
one side, by the smallest amount that clears it; the two arrows of a
reciprocal pair bow to opposite sides. Everything here is plain geometry on
tuples (no Qt), so it is quick and testable; a spatial hash of the units'
rectangles keeps a routing pass close to linear in the number of arrows.
"""

import math
from collections import defaultdict

CELL = 120.0          # spatial hash cell (scene pixels)
SAMPLES = 20          # segments a candidate curve is checked as
CLEARANCE = 5.0       # extra room kept around a unit's rectangle
ALONG_ANGLE = math.radians(9)   # two arrows leaving a unit closer than this run along each other
BENDS = (0.0, 22.0, -22.0, 40.0, -40.0, 60.0, -60.0, 85.0, -85.0, 115.0, -115.0, 150.0, -150.0)
ROUTE_LIMIT = 6000    # above this many arrows the canvas draws them straight (a level of detail)

Rect = tuple[float, float, float, float]  # left, top, right, bottom


class UnitIndex:
    """The units' rectangles in a spatial hash, for "which rectangles might this segment touch"."""

    def __init__(self, rects: dict[str, Rect], clearance: float = CLEARANCE):
        self.rects = {n: (r[0] - clearance, r[1] - clearance, r[2] + clearance, r[3] + clearance)
                      for n, r in rects.items()}
        self.cells: dict[tuple[int, int], list[str]] = defaultdict(list)
        for name, (x0, y0, x1, y1) in self.rects.items():
            for i in range(int(math.floor(x0 / CELL)), int(math.floor(x1 / CELL)) + 1):
                for j in range(int(math.floor(y0 / CELL)), int(math.floor(y1 / CELL)) + 1):
                    self.cells[(i, j)].append(name)

    def near(self, x0: float, y0: float, x1: float, y1: float) -> set[str]:
        out: set[str] = set()
        for i in range(int(math.floor(min(x0, x1) / CELL)), int(math.floor(max(x0, x1) / CELL)) + 1):
            for j in range(int(math.floor(min(y0, y1) / CELL)), int(math.floor(max(y0, y1) / CELL)) + 1):
                out.update(self.cells.get((i, j), ()))
        return out


def segment_hits_rect(x0: float, y0: float, x1: float, y1: float, r: Rect) -> bool:
    """Does the segment (x0, y0)-(x1, y1) touch rectangle ``r``? (Liang-Barsky clipping.)"""
    dx, dy = x1 - x0, y1 - y0
    t0, t1 = 0.0, 1.0
    for p, q in ((-dx, x0 - r[0]), (dx, r[2] - x0), (-dy, y0 - r[1]), (dy, r[3] - y0)):
        if p == 0:
            if q < 0:
                return False
            continue
        t = q / p
        if p < 0:
            if t > t1:
                return False
            t0 = max(t0, t)
        else:
            if t < t0:
                return False
            t1 = min(t1, t)
    return t0 <= t1


def curve_points(p: tuple[float, float], q: tuple[float, float], bend: float, n: int = SAMPLES):
    """Points along the arrow from p to q bowed by ``bend`` (as ``geometry.edge_path`` draws it)."""
    (px, py), (qx, qy) = p, q
    d = math.hypot(qx - px, qy - py) or 1.0
    ux, uy = (qx - px) / d, (qy - py) / d
    cx = (px + qx) / 2 + uy * 2 * bend
    cy = (py + qy) / 2 - ux * 2 * bend
    pts = []
    for k in range(n + 1):
        t = k / n
        a, b, c = (1 - t) ** 2, 2 * (1 - t) * t, t * t
        pts.append((a * px + b * cx + c * qx, a * py + b * cy + c * qy))
    return pts


def _blocked(points, index: UnitIndex, ends: tuple[str, str]) -> int:
    """How many other units the polyline ``points`` touches."""
    hit: set[str] = set()
    for (x0, y0), (x1, y1) in zip(points, points[1:]):
        for name in index.near(x0, y0, x1, y1):
            if name in ends or name in hit:
                continue
            if segment_hits_rect(x0, y0, x1, y1, index.rects[name]):
                hit.add(name)
    return len(hit)


def _start_angle(p, q, bend: float) -> float:
    """The direction in which the arrow leaves p (the tangent of the curve at p)."""
    (px, py), (qx, qy) = p, q
    d = math.hypot(qx - px, qy - py) or 1.0
    ux, uy = (qx - px) / d, (qy - py) / d
    cx = (px + qx) / 2 + uy * 2 * bend
    cy = (py + qy) / 2 - ux * 2 * bend
    return math.atan2(cy - py, cx - px)


def route(positions: dict[str, tuple[float, float]], rects: dict[str, Rect],
          edges: list[tuple[str, str]], default_bends: dict[tuple[str, str], float]) -> dict[tuple[str, str], float]:
    """The bend of every arrow ``(source, target)`` (self-connections are left out).

    ``default_bends`` gives an arrow's preferred bend (a reciprocal pair's
    arrows bow apart; others are straight); a bend is kept unless the arrow
    then crosses another unit or runs along an arrow already placed at one of
    its units, in which case the smallest bend in ``BENDS`` (added to the
    preferred one, same side first for a reciprocal pair) that clears both is
    taken, or the one that crosses fewest units.
    """
    index = UnitIndex(rects)
    leaving: dict[str, list[float]] = defaultdict(list)  # directions of placed arrows at each unit
    out: dict[tuple[str, str], float] = {}
    # long arrows first: they have the most to avoid, short ones then keep clear of them
    order = sorted((e for e in edges if e[0] != e[1]),
                   key=lambda e: -math.dist(positions[e[0]], positions[e[1]]))
    for s, t in order:
        p, q = positions[s], positions[t]
        base = default_bends.get((s, t), 0.0)
        if base:
            candidates = [base + abs(b) for b in BENDS if b >= 0] if base > 0 else \
                [base - abs(b) for b in BENDS if b >= 0]
        else:
            candidates = list(BENDS)
        best, best_cost = candidates[0], None
        for bend in candidates:
            cost = 2 * _blocked(curve_points(p, q, bend), index, (s, t))
            if cost == 0 or best_cost is None or cost < best_cost:
                a = _start_angle(p, q, bend)
                b = _start_angle(q, p, -bend)  # the arrow seen from its target
                cost += _along(a, leaving[s]) + _along(b, leaving[t])
            if best_cost is None or cost < best_cost:
                best, best_cost = bend, cost
            if cost == 0:
                break
        out[(s, t)] = best
        leaving[s].append(_start_angle(p, q, best))
        leaving[t].append(_start_angle(q, p, -best))
    return out


def _along(angle: float, others: list[float]) -> int:
    return sum(1 for o in others if abs(math.remainder(angle - o, 2 * math.pi)) < ALONG_ANGLE)
