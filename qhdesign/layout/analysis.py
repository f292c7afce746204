"""Island outline, area and constriction states from sheet densities on the plane mesh (pure).

The densities are P1 (linear on each triangle of the plane mesh). The electronic island is the
region where the primary well's density exceeds half its far-field value, the connected part
that contains the island's seed point, closed off at every constriction by the line across the
constriction's path at its midpoint. Its area is computed exactly for the linear interpolant:
each triangle is clipped by the half-density condition and by the constriction half-planes, and
the clipped convex polygons are summed. The outline is the set of half-density segments.

A well is *pinched* in a constriction where its density anywhere along the constriction's path
falls below ``PINCH_FRACTION`` (1 %, the 2D pinch-off stage's criterion) of its far-field
density; otherwise *open*. Both thresholds are our choices: a Thomas–Fermi sheet at millikelvin
is either near its bulk density or exponentially empty, so the edge hardly depends on them.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

import numpy as np

from qhdesign.section.profile import EDGE_FRACTION as _PINCH_2D

__all__ = [
    "EDGE_FRACTION",
    "PINCH_FRACTION",
    "IslandShape",
    "clip_by_values",
    "constriction_profile",
    "island_shape",
]

#: The electronic edge: density = this fraction of the far-field density.
EDGE_FRACTION = 0.5
#: A constriction is pinched in a well when its density along the path drops below this fraction
#: of the far-field density: the 2D split-gate stage's criterion (1 %), so the two compare.
PINCH_FRACTION = _PINCH_2D


def clip_by_values(poly: np.ndarray, vals: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Clip a convex polygon (K, 2) to where a linear function with vertex values ``vals`` >= 0.

    Returns the clipped polygon's vertices and the linear function's values on them (zero on
    the new vertices).
    """
    out_p, out_v = [], []
    k = len(poly)
    for i in range(k):
        p, q = poly[i], poly[(i + 1) % k]
        a, b = vals[i], vals[(i + 1) % k]
        if a >= 0:
            out_p.append(p)
            out_v.append(a)
        if (a >= 0) != (b >= 0):
            t = a / (a - b)
            out_p.append(p + t * (q - p))
            out_v.append(0.0)
    if not out_p:
        return np.zeros((0, 2)), np.zeros(0)
    return np.array(out_p), np.array(out_v)


def _area(poly: np.ndarray) -> float:
    if len(poly) < 3:
        return 0.0
    x, y = poly[:, 0], poly[:, 1]
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


@dataclass(frozen=True, eq=False)
class IslandShape:
    """The electronic island of one density map.

    Attributes
    ----------
    area_m2
        Area where the density exceeds the edge value, inside the cuts (m^2).
    triangles
        Indices of the plane triangles that belong to the island, shape (K,).
    outline_m
        Half-density segments, shape (M, 2, 2), m.
    threshold_m2
        The edge density (m^-2).
    """

    area_m2: float
    triangles: np.ndarray
    outline_m: np.ndarray
    threshold_m2: float

    @property
    def equivalent_radius_m(self) -> float:
        """Radius of the disk of the same area (m)."""
        return float(np.sqrt(self.area_m2 / np.pi))


def _cut_planes(constrictions) -> list[tuple[np.ndarray, np.ndarray]]:
    """(midpoint, unit direction towards the lead) of each constriction path."""
    out = []
    for c in constrictions:
        a, b = np.asarray(c.path_m[0], float), np.asarray(c.path_m[1], float)
        d = b - a
        out.append((0.5 * (a + b), d / np.linalg.norm(d)))
    return out


def _clip_island(poly, fvals, cuts):
    p, _ = clip_by_values(poly, fvals)
    for mid, d in cuts:
        if len(p) < 3:
            break
        side = -((p - mid) @ d)  # >= 0 on the island side of the cut
        p, _ = clip_by_values(p, side)
    return p


def island_shape(
    xy_m: np.ndarray,
    triangles: np.ndarray,
    density_m2: np.ndarray,
    bulk_m2: float,
    seed_m,
    constrictions=(),
    *,
    component: np.ndarray | None = None,
) -> IslandShape:
    """The electronic island of a P1 density map on a triangle mesh.

    Parameters
    ----------
    xy_m, triangles
        Plane mesh nodes (Np, 2) in m and triangles (T, 3).
    density_m2
        Nodal density (m^-2), shape (Np,).
    bulk_m2
        Far-field density (m^-2); the edge is at ``EDGE_FRACTION`` of it.
    seed_m
        A point inside the island (m).
    constrictions
        Objects with ``path_m`` ((x0, y0), (x1, y1)) from the island to the lead: the island is
        cut at each path's midpoint.
    component
        Use this set of triangles instead of searching the connected component again (for a
        derivative of the area at a fixed topology).

    Returns
    -------
    IslandShape
    """
    thr = EDGE_FRACTION * bulk_m2
    f = density_m2 - thr
    cuts = _cut_planes(constrictions)
    cen = xy_m[triangles].mean(axis=1)
    if component is None:
        above = f[triangles].max(axis=1) >= 0
        inside = np.ones(len(triangles), dtype=bool)
        for mid, d in cuts:
            inside &= ((cen - mid) @ d) <= 0
        ok = above & inside
        seed = np.asarray(seed_m, float)
        d2 = np.sum((cen - seed) ** 2, axis=1)
        d2[~ok] = np.inf
        start = int(np.argmin(d2))
        if not np.isfinite(d2[start]):
            return IslandShape(0.0, np.zeros(0, dtype=int), np.zeros((0, 2, 2)), thr)
        # neighbours across edges where the density exceeds the edge value at an endpoint
        edges = {}
        for t, tri in enumerate(triangles):
            if not ok[t]:
                continue
            for i in range(3):
                a, b = sorted((int(tri[i]), int(tri[(i + 1) % 3])))
                if f[a] >= 0 or f[b] >= 0:
                    edges.setdefault((a, b), []).append(t)
        nbr: dict[int, list[int]] = {}
        for ts in edges.values():
            if len(ts) == 2:
                nbr.setdefault(ts[0], []).append(ts[1])
                nbr.setdefault(ts[1], []).append(ts[0])
        seen = {start}
        queue = deque([start])
        while queue:
            t = queue.popleft()
            for s in nbr.get(t, ()):
                if s not in seen:
                    seen.add(s)
                    queue.append(s)
        component = np.array(sorted(seen), dtype=int)
    area = 0.0
    segs = []
    for t in component:
        tri = triangles[t]
        poly = xy_m[tri]
        p = _clip_island(poly, f[tri], cuts)
        area += _area(p)
        fv = f[tri]
        if fv.min() < 0 <= fv.max():
            pts = []
            for i in range(3):
                a, b = fv[i], fv[(i + 1) % 3]
                if (a >= 0) != (b >= 0):
                    s = a / (a - b)
                    pts.append(poly[i] + s * (poly[(i + 1) % 3] - poly[i]))
            if len(pts) == 2:
                segs.append(pts)
    outline = np.array(segs) if segs else np.zeros((0, 2, 2))
    return IslandShape(float(area), component, outline, thr)


def constriction_profile(
    xy_m: np.ndarray, triangles: np.ndarray, values: np.ndarray, path_m, samples: int = 201
) -> tuple[np.ndarray, np.ndarray]:
    """P1 values sampled along a straight path: (arc length in m, values), shape (samples,).

    Points outside the mesh get NaN.
    """
    a, b = np.asarray(path_m[0], float), np.asarray(path_m[1], float)
    s = np.linspace(0.0, 1.0, samples)
    pts = a[None, :] + s[:, None] * (b - a)[None, :]
    p0, p1, p2 = (xy_m[triangles[:, i]] for i in range(3))
    det = (p1[:, 0] - p0[:, 0]) * (p2[:, 1] - p0[:, 1]) - (p1[:, 1] - p0[:, 1]) * (
        p2[:, 0] - p0[:, 0]
    )
    out = np.full(samples, np.nan)
    for j, p in enumerate(pts):
        dx, dy = p[0] - p0[:, 0], p[1] - p0[:, 1]
        l1 = (dx * (p2[:, 1] - p0[:, 1]) - dy * (p2[:, 0] - p0[:, 0])) / det
        l2 = ((p1[:, 0] - p0[:, 0]) * dy - (p1[:, 1] - p0[:, 1]) * dx) / det
        l0 = 1.0 - l1 - l2
        hit = np.nonzero((l0 >= -1e-12) & (l1 >= -1e-12) & (l2 >= -1e-12))[0]
        if hit.size:
            t = hit[0]
            tri = triangles[t]
            out[j] = l0[t] * values[tri[0]] + l1[t] * values[tri[1]] + l2[t] * values[tri[2]]
    return s * np.linalg.norm(b - a), out
