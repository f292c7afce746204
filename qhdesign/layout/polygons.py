"""Plane geometry of gate polygons: orientation, simplicity, overlap, distances, point tests.

Pure numpy; polygons are arrays of shape (N, 2) in metres, not closed (the last vertex joins the
first). The tests here are exact orientation predicates on floats with a relative tolerance, which
is what a mask drawn to a nanometre grid needs; there is no robust-arithmetic library behind them.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "point_in_polygon",
    "polygon_area",
    "polygon_distance",
    "polygons_overlap",
    "segment_distance",
    "self_intersection",
]


def polygon_area(poly: np.ndarray) -> float:
    """Signed area (m^2) by the shoelace formula; positive for counter-clockwise vertices."""
    x, y = poly[:, 0], poly[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))


def _orient(a, b, c, tol: float) -> int:
    d = (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
    if abs(d) <= tol:
        return 0
    return 1 if d > 0 else -1


def _on_segment(a, b, p, tol: float) -> bool:
    return (
        min(a[0], b[0]) - tol <= p[0] <= max(a[0], b[0]) + tol
        and min(a[1], b[1]) - tol <= p[1] <= max(a[1], b[1]) + tol
    )


def segments_intersect(a, b, c, d, scale: float) -> bool:
    """Whether closed segments ab and cd share a point (touching counts), lengths ~ ``scale``."""
    tol2 = 1e-9 * scale**2  # cross products below this are collinear (1e-9 relative angle)
    tol = 1e-9 * scale
    o1, o2 = _orient(a, b, c, tol2), _orient(a, b, d, tol2)
    o3, o4 = _orient(c, d, a, tol2), _orient(c, d, b, tol2)
    if o1 != o2 and o3 != o4 and 0 not in (o1, o2, o3, o4):
        return True
    return (
        (o1 == 0 and _on_segment(a, b, c, tol))
        or (o2 == 0 and _on_segment(a, b, d, tol))
        or (o3 == 0 and _on_segment(c, d, a, tol))
        or (o4 == 0 and _on_segment(c, d, b, tol))
    )


def self_intersection(poly: np.ndarray) -> tuple[int, int] | None:
    """The first pair of edges (i, j) of a polygon that cross or touch, or None if it is simple.

    Edge i joins vertex i to vertex i+1. Neighbouring edges share their common vertex and are not
    counted unless they fold back onto each other (collinear overlap).
    """
    n = len(poly)
    scale = float(np.ptp(poly, axis=0).max()) or 1.0
    for i in range(n):
        a, b = poly[i], poly[(i + 1) % n]
        for j in range(i + 1, n):
            c, d = poly[j], poly[(j + 1) % n]
            if j == i + 1 or (i == 0 and j == n - 1):
                # adjacent edges share one vertex; only a fold-back (collinear, pointing back
                # along the other edge) makes them overlap
                if j == i + 1:
                    shared, p1, p2 = b, a, d
                else:
                    shared, p1, p2 = a, b, c
                u, v = np.asarray(p1) - shared, np.asarray(p2) - shared
                cross = u[0] * v[1] - u[1] * v[0]
                if abs(cross) <= 1e-9 * scale**2 and float(np.dot(u, v)) > 0:
                    return (i, j)
                continue
            if segments_intersect(a, b, c, d, scale):
                return (i, j)
    return None


def point_in_polygon(p, poly: np.ndarray) -> bool:
    """Even-odd ray test: whether point p lies strictly inside the polygon (edges excluded)."""
    x, y = float(p[0]), float(p[1])
    inside = False
    n = len(poly)
    for i in range(n):
        x1, y1 = poly[i]
        x2, y2 = poly[(i + 1) % n]
        if (y1 > y) != (y2 > y):
            xc = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
            if xc > x:
                inside = not inside
    return inside


def polygons_overlap(p: np.ndarray, q: np.ndarray) -> bool:
    """Whether two simple polygons share any point: crossing or touching edges, or containment."""
    scale = float(max(np.ptp(p, axis=0).max(), np.ptp(q, axis=0).max())) or 1.0
    for i in range(len(p)):
        a, b = p[i], p[(i + 1) % len(p)]
        for j in range(len(q)):
            if segments_intersect(a, b, q[j], q[(j + 1) % len(q)], scale):
                return True
    return point_in_polygon(p[0], q) or point_in_polygon(q[0], p)


def _point_segment_distance(p, a, b) -> float:
    ab = b - a
    t = float(np.dot(p - a, ab) / max(np.dot(ab, ab), 1e-300))
    t = min(1.0, max(0.0, t))
    return float(np.hypot(*(a + t * ab - p)))


def segment_distance(a, b, c, d) -> float:
    """Distance (m) between two non-intersecting closed segments ab and cd."""
    a, b, c, d = (np.asarray(v, dtype=float) for v in (a, b, c, d))
    return min(
        _point_segment_distance(a, c, d),
        _point_segment_distance(b, c, d),
        _point_segment_distance(c, a, b),
        _point_segment_distance(d, a, b),
    )


def polygon_distance(p: np.ndarray, q: np.ndarray) -> float:
    """Smallest distance (m) between the boundaries of two polygons that do not overlap."""
    best = np.inf
    for i in range(len(p)):
        a, b = p[i], p[(i + 1) % len(p)]
        for j in range(len(q)):
            best = min(best, segment_distance(a, b, q[j], q[(j + 1) % len(q)]))
    return float(best)
