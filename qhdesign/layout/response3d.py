"""The island's linear response in 3D: K_I, K_L, K_IL and the charging energy of a gate layout.

The axisymmetric island's model (:mod:`qhdesign.island.response`, docs/island.md sections 2-3) on
the 3D mesh of the layout's nonlinear solve (:class:`qhdesign.layout.model3d.LayoutSolver`), with
the same forms and the same solve (:func:`qhdesign.island.response.response_forms`,
:func:`qhdesign.island.response.floating_edge_energies`: the dimension is a parameter):

- the **interfering edge I** is the compressible strip of the primary well between the inner
  boundary of the incompressible strip of the operating filling and the electronic edge (1 % of
  the 1D density), a floating conductor on the primary's sheet;
- the **bulk L** inside it carries a fixed charge (uniform, or parabolic in the distance from the
  island's seed) and never responds;
- every other sheet responds with its Landau-level thermodynamic DOS where the operating point left
  it above 1 % of its 1D density (the primary only outside the island); gates, a pinned surface and
  a bottom contact are grounded.

The strip in the plane (our generalisation of the radial construction, exact for a circle):
density levels are located on the primary's sheet potential (P1), as the island stage does. The
electronic edge is the 1 % level; the strip centre the level n_nu = nu e B/h (or 90 % of the
density at the seed, when the seed is below n_nu/0.9); the incompressible width a comes from the
Chklovskii–Shklovskii–Glazman formula with |grad n| averaged along the centre line (weighted by
length); the bulk L is the region within a/2 outside the centre line: by Steiner's formula for a
parallel curve, A_L = A_c + L_c a/2 + Theta a^2/8 and its boundary length L_in = L_c + Theta a/2
(A_c, L_c: area and length of the centre level; Theta: the line's total turning, 2 pi for a closed
loop). The interfering edge is the middle of the compressible strip: with its mean width
w = (A_edge - A_L)/((L_in + L_edge)/2), L_I = (L_in + L_edge)/2 and A_I = A_L + (w/2)(L_in + L_I)/2.

Conductor nodes: a node belongs to I when its distance beyond the inner boundary (a/2 outside the
centre line) is >= 0 and it lies inside the electronic edge; a node just short of either boundary
joins when it is nearer to the boundary than every core node it shares a mesh edge with: the
nearest-node rule the axisymmetric stage applies to its radii, on a triangle mesh.

Resolution: the strip boundaries move by a few nm within a plane cell of the layout mesh
(40-80 nm), which moves K_IL/K_I by far more than 2 %. So by default a second mesh embeds rows of
nodes parallel to the strip's boundaries (graded offsets from 1 nm to 60 nm on both sides of
the inner boundary and of the edge, found on the first solve, following its centre line without
the wiggles shorter than four row spacings), the nonlinear problem is solved again on it, and the
strip and the response are taken from that solve, as the axisymmetric stage's second mesh does
with its radii. When the boundaries moved by more than 1 nm from the rows' anchors, the rows are
placed again from that solve (at most three meshes with rows).

References
----------
B. I. Halperin, A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011) (K_I, K_L, K_IL).
D. B. Chklovskii, B. I. Shklovskii, L. I. Glazman, Phys. Rev. B 46, 4026 (1992) (strip width).
J. Steiner (1840); see e.g. L. A. Santaló, Integral Geometry and Geometric Probability
(Addison-Wesley, 1976), ch. 1 (the area and length of parallel curves).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.island.operating import FALL_FRACTION
from qhdesign.section.profile import EDGE_FRACTION

from .analysis import _area, _clip_island, _cut_planes, constriction_profile

__all__ = ["StripGeometry", "check_settings", "island_response", "strip_geometry"]

#: Node rows of the second mesh: offsets from each strip boundary grow from ROW_FIRST_M by the
#: factor ROW_GROWTH up to ROW_REACH_M on both sides (a graded radial grid, as the island stage's).
ROW_FIRST_M, ROW_GROWTH, ROW_REACH_M = 1e-9, 1.3, 60e-9
#: Meshes with rows at most, and the move of the strip's boundaries (equivalent radii) between
#: the rows' anchors and the solve on them below which the rows are taken as placed.
ROW_PASSES, ROW_SETTLE_M = 3, 1e-9
#: The rows follow the centre line without its wiggles shorter than ROW_SMOOTH row spacings.
ROW_SMOOTH = 4.0
#: Curvature-adapted sampling of the rows is optional (``Layout3DOptions.strip_chord_m``, the
#: layout's ``mesh.strip_chord``; None: rows ``mesh.gate_edge`` apart). Chords of length h on a
#: curve of curvature kappa move the area-equivalent boundary of the polygon through them inward
#: by about h^2 kappa/12; with a value (m) the rows are sampled at most
#: sqrt(12 strip_chord / kappa) apart where that is below the row spacing. Measured on the ring of
#: docs/layout3d.md ("Resolution study"), not the default.


@dataclass(frozen=True, eq=False)
class StripGeometry:
    """The interfering edge of a layout's island at one field and filling (SI).

    The attribute names follow :class:`qhdesign.island.operating.EdgeStrip` where the quantity is
    the same; radii are those of the disk of the same area.
    """

    field_T: float
    filling: float
    centre_filling: float
    incompressible_width_m: float
    density_gradient_m3: float
    strip_gap_J: float
    edge_velocity_m_per_s: float
    pinned_to_fall: bool
    A_L_m2: float
    A_edge_m2: float
    inner_length_m: float
    edge_length_m: float
    centre_area_m2: float
    centre_length_m: float
    turning_rad: float
    centre_loops: tuple = ()
    edge_loops: tuple = ()
    closed: bool = False

    @property
    def width_m(self) -> float:
        """Mean width of the compressible strip (m)."""
        return (self.A_edge_m2 - self.A_L_m2) / (0.5 * (self.inner_length_m + self.edge_length_m))

    @property
    def perimeter_m(self) -> float:
        """Length of the interfering edge, the middle of the compressible strip (m)."""
        return 0.5 * (self.inner_length_m + self.edge_length_m)

    @property
    def A_I_m2(self) -> float:
        """Area enclosed by the interfering edge (m^2)."""
        return self.A_L_m2 + 0.5 * self.width_m * 0.5 * (self.inner_length_m + self.perimeter_m)

    @property
    def interfering_radius_m(self) -> float:
        """Radius of the disk of area A_I (m)."""
        return math.sqrt(self.A_I_m2 / math.pi)

    @property
    def inner_radius_m(self) -> float:
        return math.sqrt(self.A_L_m2 / math.pi)

    @property
    def outer_radius_m(self) -> float:
        return math.sqrt(self.A_edge_m2 / math.pi)

    def to_dict(self) -> dict:
        return {
            "A_I_m2": self.A_I_m2,
            "A_L_m2": self.A_L_m2,
            "electronic_edge_area_m2": self.A_edge_m2,
            "interfering_radius_m": self.interfering_radius_m,
            "perimeter_m": self.perimeter_m,
            "inner_boundary_length_m": self.inner_length_m,
            "electronic_edge_length_m": self.edge_length_m,
            "centre_filling": self.centre_filling,
            "pinned_to_density_fall": self.pinned_to_fall,
            "closed": self.closed,
        }


# ---------------------------------------------------------------------------- plane geometry
def _level_set(xy, tri, f, component, cuts):
    """Area of f >= 0 over ``component`` (clipped by the cuts), its segments, their triangles and
    the mesh edge each segment end lies on (node pairs, shape (M, 2, 2)).

    A node exactly on the level counts as just above it.
    """
    f = np.where(f == 0.0, 1e-300, f)
    comp = np.asarray(component, dtype=int)
    fv_all = f[tri[comp]]
    inside = np.ones(comp.size, dtype=bool)  # every node on the island side of every cut
    for mid, d in cuts:
        inside &= np.all(((xy[tri[comp]] - mid) @ d) <= 0, axis=1)
    whole = (fv_all.min(axis=1) >= 0) & inside
    p3 = xy[tri[comp[whole]]]
    e1, e2 = p3[:, 1] - p3[:, 0], p3[:, 2] - p3[:, 0]
    area = 0.5 * float(np.sum(np.abs(e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0])))
    segs, seg_tri, seg_edge = [], [], []
    for t in comp[~whole & (fv_all.max(axis=1) >= 0)]:
        nodes = tri[t]
        poly = xy[nodes]
        fv = f[nodes]
        area += _area(_clip_island(poly, fv, cuts))
        if fv.min() < 0 <= fv.max():
            pts, eds = [], []
            for i in range(3):
                a, b = fv[i], fv[(i + 1) % 3]
                if (a >= 0) != (b >= 0):
                    s = a / (a - b)
                    pts.append(poly[i] + s * (poly[(i + 1) % 3] - poly[i]))
                    eds.append(sorted((int(nodes[i]), int(nodes[(i + 1) % 3]))))
            if len(pts) == 2:
                p = np.array(pts)
                keep = True
                for mid, d in cuts:  # keep segments on the island side of every cut
                    if np.all(((p - mid) @ d) > 0):
                        keep = False
                if keep:
                    segs.append(p)
                    seg_tri.append(t)
                    seg_edge.append(eds)
    segs = np.array(segs) if segs else np.zeros((0, 2, 2))
    edges = np.array(seg_edge, dtype=np.int64) if seg_edge else np.zeros((0, 2, 2), np.int64)
    return float(area), segs, np.array(seg_tri, dtype=int), edges


def _chains(segs: np.ndarray, edges: np.ndarray) -> list[tuple[np.ndarray, bool]]:
    """Join level-set segments into polylines: [(points (K, 2), closed)]; two segment ends meet
    where they lie on the same mesh edge."""
    if len(segs) == 0:
        return []
    key = [tuple(e) for e in edges.reshape(-1, 2)]
    ends: dict = {}
    for i, k in enumerate(key):
        ends.setdefault(k, []).append(i)
    used = np.zeros(len(segs), dtype=bool)

    def walk(cur: int):
        pts = []
        while True:
            nxt = [j for j in ends[key[cur]] if not used[j // 2]]
            if not nxt:
                return pts, cur
            j = nxt[0]
            used[j // 2] = True
            cur = j ^ 1
            pts.append(segs[cur // 2, cur % 2])

    out = []
    for s0 in range(len(segs)):
        if used[s0]:
            continue
        used[s0] = True
        fwd, end = walk(2 * s0 + 1)
        if fwd and key[end] == key[2 * s0]:
            out.append((np.array([segs[s0, 0], segs[s0, 1], *fwd[:-1]]), True))
            continue
        bwd, _ = walk(2 * s0)
        out.append((np.array([*bwd[::-1], segs[s0, 0], segs[s0, 1], *fwd]), False))
    return out


def _turning(poly: np.ndarray, closed: bool) -> float:
    """Total signed turning of a polyline (rad), positive counter-clockwise."""
    p = np.vstack([poly, poly[:2]]) if closed else poly
    d = np.diff(p, axis=0)
    ang = np.arctan2(d[:, 1], d[:, 0])
    turn = np.angle(np.exp(1j * np.diff(ang)))
    return float(np.sum(turn))


def _distance_to_segments(pts: np.ndarray, segs: np.ndarray, chunk: int = 512) -> np.ndarray:
    """Distance (m) from each point (N, 2) to the nearest segment (M, 2, 2)."""
    out = np.full(len(pts), np.inf)
    if len(segs) == 0:
        return out
    a, b = segs[:, 0], segs[:, 1]
    ab = b - a
    L2 = np.maximum(np.sum(ab * ab, axis=1), 1e-300)
    for i in range(0, len(pts), chunk):
        p = pts[i : i + chunk, None, :]
        t = np.clip(np.sum((p - a) * ab, axis=2) / L2, 0.0, 1.0)
        d = p - (a + t[..., None] * ab)
        out[i : i + chunk] = np.sqrt(np.min(np.sum(d * d, axis=2), axis=1))
    return out


def _resample_closed(poly: np.ndarray, spacing: float) -> np.ndarray:
    """A closed polyline resampled at equal arc length about ``spacing`` apart (anticlockwise)."""
    x, y = poly[:, 0], poly[:, 1]
    if 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))) < 0:
        poly = poly[::-1]
    p = np.vstack([poly, poly[:1]])
    s = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(p, axis=0), axis=1))])
    n = max(16, math.ceil(s[-1] / spacing))
    t = np.linspace(0.0, s[-1], n, endpoint=False)
    return np.column_stack([np.interp(t, s, p[:, 0]), np.interp(t, s, p[:, 1])])


def _smooth_closed(poly: np.ndarray, wavelength: float) -> np.ndarray:
    """A closed polyline sampled at equal arc length without its Fourier modes shorter than
    ``wavelength`` (m): the level line of a coarse mesh zig-zags at the cell size, and rows offset
    from a zig-zag by tens of nm would cross each other."""
    p = np.vstack([poly, poly[:1]])
    perimeter = float(np.sum(np.linalg.norm(np.diff(p, axis=0), axis=1)))
    keep = int(perimeter // wavelength)
    z = np.fft.fft(poly[:, 0] + 1j * poly[:, 1])
    k = np.fft.fftfreq(len(poly), 1.0 / len(poly))
    z[np.abs(k) > keep] = 0.0
    out = np.fft.ifft(z)
    return np.column_stack([out.real, out.imag])


def _fourier_closed(poly: np.ndarray, wavelength: float):
    """The closed polyline ``poly`` (anticlockwise, at equal arc length) without its Fourier
    modes shorter than ``wavelength`` (m), as a function of the parameter t in [0, 1) with its
    first and second derivatives: (p(t), p'(t), p''(t)), each (len(t), 2)."""
    p = np.vstack([poly, poly[:1]])
    perimeter = float(np.sum(np.linalg.norm(np.diff(p, axis=0), axis=1)))
    n = len(poly)
    keep = min(int(perimeter // wavelength), (n - 1) // 2)
    c = np.fft.fft(poly[:, 0] + 1j * poly[:, 1]) / n
    k = np.arange(-keep, keep + 1)
    ck = c[k % n]

    def evaluate(t: np.ndarray):
        e = np.exp(2j * np.pi * np.outer(t, k))
        w = 2j * np.pi * k
        out = []
        for f in (ck, ck * w, ck * w * w):
            z = e @ f
            out.append(np.column_stack([z.real, z.imag]))
        return out

    return evaluate


def _sample_closed(poly: np.ndarray, spacing: float, wavelength: float, chord_shift: float):
    """Nodes along the smoothed closed curve of ``poly`` (:func:`_fourier_closed`): at most
    ``spacing`` apart, and at most sqrt(12 chord_shift / kappa) apart where its curvature kappa
    is larger, so the polygon through them encloses the curve's area to within chord_shift per
    unit length (anticlockwise, shape (N, 2), m)."""
    curve = _fourier_closed(_resample_closed(poly, 0.25 * spacing), wavelength)
    t = np.linspace(0.0, 1.0, 4096, endpoint=False)
    _, d1, d2 = curve(t)
    speed = np.linalg.norm(d1, axis=1)
    kappa = np.abs(d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]) / np.maximum(speed, 1e-300) ** 3
    h = np.minimum(spacing, np.sqrt(12.0 * chord_shift / np.maximum(kappa, 1e-300)))
    dens = speed / h  # nodes per unit parameter
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (dens + np.roll(dens, -1)) / t.size)])
    n = max(16, math.ceil(cum[-1]))
    tn = np.interp(np.arange(n) * cum[-1] / n, cum, np.append(t, 1.0))
    return curve(tn)[0]


def _offset_closed(poly: np.ndarray, d: float) -> np.ndarray:
    """Move the vertices of a counter-clockwise closed polyline outward by d along their normals."""
    t = np.roll(poly, -1, axis=0) - np.roll(poly, 1, axis=0)
    t /= np.linalg.norm(t, axis=1)[:, None]
    normal = np.column_stack([t[:, 1], -t[:, 0]])
    return poly + d * normal


def _p1_at(xy, tri, values, point) -> float:
    p = np.asarray(point, float)
    _, v = constriction_profile(xy, tri, values, (p, p), samples=1)
    return float(v[0])


def _edges(tri: np.ndarray) -> np.ndarray:
    e = np.vstack([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    return np.unique(np.sort(e, axis=1), axis=0)


def _conductor_nodes(tri, island, s_in, s_out) -> np.ndarray:
    """The edge conductor's plane nodes (bool mask) by the nearest-node rule.

    ``s_in`` >= 0 beyond the inner boundary, ``s_out`` <= 0 inside the electronic edge (signed
    distances, m). The core is every island node with both; a node just short of a boundary joins
    when it is nearer to that boundary than every core node it shares a mesh edge with. On a radial
    grid this is the island stage's snapping of each radius to its nearest node (the one
    neighbour across); taking any neighbour instead would let a long edge running obliquely
    across the boundary pull in nodes several nm short of it.
    """
    core = island & (s_in >= 0) & (s_out <= 0)
    ed = _edges(tri)
    u = np.concatenate([ed[:, 0], ed[:, 1]])
    v = np.concatenate([ed[:, 1], ed[:, 0]])
    near_in = np.full(len(island), np.inf)  # per node: the least depth of a core neighbour
    near_out = np.full(len(island), np.inf)
    c = core[u]
    np.minimum.at(near_in, v[c], s_in[u[c]])
    np.minimum.at(near_out, v[c], -s_out[u[c]])
    has_in, has_out = np.isfinite(near_in), np.isfinite(near_out)  # next to the core
    join_in = island & has_in & (s_in < 0) & (-s_in < near_in) & (s_out <= 0)
    join_out = island & has_out & (s_out > 0) & (s_out < near_out) & (s_in >= 0)
    return core | join_in | join_out


def strip_geometry(
    xy_m: np.ndarray,
    triangles: np.ndarray,
    phi_V: np.ndarray,
    density_m2: np.ndarray,
    *,
    energy_eV: float,
    dos_J_m2: float,
    kT_J: float,
    bulk_density_m2: float,
    seed_m,
    constrictions,
    field_T: float,
    filling: float,
    strip_gap_J: float,
    eps_r: float,
):
    """The compressible strip of the interfering edge on the plane mesh (pure numpy).

    Parameters
    ----------
    xy_m, triangles
        Plane mesh (Np, 2) m and (T, 3).
    phi_V, density_m2
        The primary sheet's potential (V) and density (m^-2) on the plane nodes, (Np,).
    energy_eV, dos_J_m2, kT_J
        The primary sheet's Thomas–Fermi parameters (levels are located on the potential).
    bulk_density_m2
        The primary's 1D density (the edge is at 1 % of it).
    seed_m, constrictions
        A point inside the island and the constrictions (the island is cut at their midpoints).
    field_T, filling, strip_gap_J, eps_r
        Field (T), Laughlin filling, chemical-potential jump across the strip (J), permittivity
        at the primary.

    Returns
    -------
    (StripGeometry, dict of plane-node masks ``I``, ``L``, ``island`` and triangle mask ``L_tri``)

    Raises
    ------
    InputError
        No island, an island the gates empty, or a strip that swallows the edge.
    """
    from qhdesign.section.model import _inverse_tf
    from qhdesign.section.profile import strip_width

    from .analysis import island_shape

    xy = np.asarray(xy_m, float)
    tri = np.asarray(triangles)
    n = np.asarray(density_m2, float)
    phi = np.asarray(phi_V, float)

    def level(n_level: float) -> float:
        return energy_eV + _inverse_tf(n_level, dos_J_m2, kT_J) / sc.e

    if seed_m is None:
        raise InputError("the layout defines no island (no seed point)", key="layout")
    cuts = _cut_planes(constrictions)
    n0 = _p1_at(xy, tri, n, seed_m)
    if not n0 > 0.1 * bulk_density_m2:
        raise InputError(
            "the gates empty the island (density at its seed below 10 % of the 1D value)",
            key="gate_voltage_V",
        )
    f_edge = phi - level(EDGE_FRACTION * bulk_density_m2)
    # the island at the edge level: the connected part around the seed (analysis.island_shape on
    # f + 1/2 with unit bulk puts its threshold at f = 0)
    comp = island_shape(xy, tri, f_edge + 0.5, 1.0, seed_m, constrictions).triangles
    if comp.size == 0:
        raise InputError("the primary well has no island around the seed", key="gate_voltage_V")
    A_edge, segs_edge, _, edges_edge = _level_set(xy, tri, f_edge, comp, cuts)
    n_nu = filling * sc.e * field_T / sc.h
    pinned = n_nu >= FALL_FRACTION * n0
    target = FALL_FRACTION * n0 if pinned else n_nu
    f_c = phi - level(target)
    A_c, segs_c, tri_c, edges_c = _level_set(xy, tri, f_c, comp, cuts)
    if len(segs_c) == 0:
        raise InputError("the primary's density does not fall at the operating filling")
    # |grad n| of the P1 density on the triangles the centre line crosses, length-weighted
    p = xy[tri[tri_c]]
    nv = n[tri[tri_c]]
    e1, e2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    det = e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]
    dn1, dn2 = nv[:, 1] - nv[:, 0], nv[:, 2] - nv[:, 0]
    gx = (dn1 * e2[:, 1] - dn2 * e1[:, 1]) / det
    gy = (dn2 * e1[:, 0] - dn1 * e2[:, 0]) / det
    seg_len = np.linalg.norm(segs_c[:, 1] - segs_c[:, 0], axis=1)
    L_c = float(np.sum(seg_len))
    g = float(np.sum(np.hypot(gx, gy) * seg_len) / L_c)
    a = strip_width(eps_r, strip_gap_J, g)
    d_in = 0.5 * a
    chains_c = _chains(segs_c, edges_c)
    chains_e = _chains(segs_edge, edges_edge)
    theta = float(sum(abs(_turning(c, closed)) for c, closed in chains_c))
    A_L = A_c + L_c * d_in + 0.5 * theta * d_in**2
    L_in = L_c + theta * d_in
    L_edge = float(np.sum(np.linalg.norm(segs_edge[:, 1] - segs_edge[:, 0], axis=1)))
    if not A_L < A_edge:
        raise InputError(
            f"the incompressible strip ({a * 1e9:.1f} nm) reaches the electronic edge: no "
            "compressible edge; check the gap and the field",
            key="gap_J",
        )
    closed = (
        len(chains_c) == 1 and chains_c[0][1] and len(chains_e) == 1 and chains_e[0][1]
    )  # one closed loop each: the island does not reach a cut
    geom = StripGeometry(
        field_T=field_T,
        filling=filling,
        centre_filling=n0 * sc.h / (sc.e * field_T),
        incompressible_width_m=a,
        density_gradient_m3=g,
        strip_gap_J=strip_gap_J,
        edge_velocity_m_per_s=strip_gap_J / (sc.e * a * field_T),
        pinned_to_fall=bool(pinned),
        A_L_m2=float(A_L),
        A_edge_m2=float(A_edge),
        inner_length_m=float(L_in),
        edge_length_m=L_edge,
        centre_area_m2=float(A_c),
        centre_length_m=L_c,
        turning_rad=theta,
        centre_loops=tuple(c for c, _ in chains_c),
        edge_loops=tuple(c for c, _ in chains_e),
        closed=bool(closed),
    )
    # ------------------------------------------------------------------ conductor and bulk nodes
    island = np.zeros(len(xy), dtype=bool)
    island[np.unique(tri[comp])] = True
    for mid, d in cuts:
        island &= ((xy - mid) @ d) <= 0
    idx = np.nonzero(island)[0]
    dist_c = np.full(len(xy), np.inf)
    dist_e = np.full(len(xy), np.inf)
    dist_c[idx] = _distance_to_segments(xy[idx], segs_c)
    dist_e[idx] = _distance_to_segments(xy[idx], segs_edge)
    s_in = np.where(f_c >= 0, -dist_c, dist_c) - d_in  # >= 0: beyond the inner boundary
    s_out = np.where(f_edge >= 0, -dist_e, dist_e)  # <= 0: inside the electronic edge
    I = _conductor_nodes(tri, island, s_in, s_out)
    L = island & ~I & (s_in < 0)
    LI = L | I
    L_tri = np.all(LI[tri], axis=1) & np.any(L[tri], axis=1)
    return geom, {"I": I, "L": L, "island": island, "L_tri": L_tri}


def _row_offsets() -> list[float]:
    out, d, step = [0.0], 0.0, ROW_FIRST_M
    while d + step <= ROW_REACH_M:
        d += step
        out += [d, -d]
        step *= ROW_GROWTH
    return out


def _strip_rows(
    geom: StripGeometry, spacing: float, gates, min_gap: float, chord_shift: float | None = None
) -> list[np.ndarray]:
    """Closed node rows parallel to the strip's inner boundary and electronic edge (m).

    Rows are offsets of the centre line (resampled ``spacing`` apart): graded offsets around the
    inner boundary (a/2 outside the centre line) and around the edge (a further mean strip width
    out). Rows nearer than 0.5 nm to a kept row, reaching inward past half the centre line's
    equivalent radius, or nearer than ``min_gap`` to a gate are left out.
    """
    from .mesh3d import points_in_polygon

    if chord_shift is None:
        base = _smooth_closed(_resample_closed(geom.centre_loops[0], spacing), ROW_SMOOTH * spacing)
    else:
        base = _sample_closed(geom.centre_loops[0], spacing, ROW_SMOOTH * spacing, chord_shift)
    d_in = 0.5 * geom.incompressible_width_m
    anchors = (d_in, d_in + geom.width_m)
    floor = -0.5 * math.sqrt(geom.centre_area_m2 / math.pi)
    cand = sorted({round(a + o, 12) for a in anchors for o in _row_offsets()})
    keep: list[float] = []
    for o in sorted(cand, key=lambda o: min(abs(o - a) for a in anchors)):  # boundaries first
        if o > floor and all(abs(o - k) >= 0.5e-9 for k in keep):
            keep.append(o)
    rows = []
    for o in sorted(keep):
        row = _offset_closed(base, o)
        ok = True
        for g in gates:
            poly = np.asarray(g.vertices_m)
            segs = np.stack([poly, np.roll(poly, -1, axis=0)], axis=1)
            if (
                np.any(points_in_polygon(row, poly))
                or np.min(_distance_to_segments(row, segs)) < min_gap
            ):
                ok = False
                break
        if ok:
            rows.append(row)
    return rows


# ---------------------------------------------------------------------------- the response
def _response(solver, masks, dos_by_sheet, ip: int, bulk_shape: str, seed_m, A_L_m2: float):
    """K's of the island on ``solver``'s mesh (the forms of the axisymmetric stage, in 3D)."""
    import ufl
    from dolfinx import default_scalar_type, fem
    from scipy.spatial import cKDTree

    from qhdesign.island.response import floating_edge_energies, response_forms
    from qhdesign.section.solver import C_EPS, DOS_SCALE

    from .mesh3d import NM

    msh = solver.mesh
    V = solver.V
    D = []
    for i, vals in enumerate(dos_by_sheet):
        f = fem.Function(V)
        on = solver._dof_level == solver.sheet_level[i]
        f.x.array[on] = np.asarray(vals)[solver._dof_plane[on]] * DOS_SCALE
        f.x.scatter_forward()
        D.append(f)
    # the bulk's cells: every tetrahedron of a prism carries its triangle's three plane nodes
    Q = fem.functionspace(msh, ("DG", 0))
    chi_L = fem.Function(Q)
    tdim = msh.topology.dim
    imap = msh.topology.index_map(tdim)
    ncell = imap.size_local + imap.num_ghosts
    geo = msh.geometry.dofmaps[0][:ncell]
    _, node = cKDTree(solver.plane.xy_m / NM).query(msh.geometry.x[:, :2])
    cn = node[geo]  # (cells, 4) plane nodes
    LI = masks["L"] | masks["I"]
    in_L = np.all(LI[cn], axis=1) & np.any(masks["L"][cn], axis=1)
    chi_L.x.array[Q.dofmap.list[:ncell, 0]] = in_L.astype(float)
    chi_L.x.scatter_forward()
    if bulk_shape == "uniform":
        sig = chi_L("+")
    else:
        x = ufl.SpatialCoordinate(msh)
        r_L = math.sqrt(A_L_m2 / math.pi) / NM
        sx, sy = (float(c) / NM for c in seed_m)
        rho2 = (x[0] - sx) ** 2 + (x[1] - sy) ** 2
        sig = chi_L("+") * ufl.max_value(1.0 - rho2 / default_scalar_type(r_L**2), 0.0)("+")
    forms = response_forms(
        V,
        C_EPS * solver.eps,
        solver.dx,
        solver.dS,
        solver.sheet_tags,
        D,
        solver.sheet_tags[ip],
        sig,
        weight=None,
        extra=_gate_layers(solver),
    )
    dofs_I = solver.plane_dofs(ip, masks["I"])
    return floating_edge_energies(
        V, forms, solver._bc_dofs, dofs_I, scale=1.0, comm=solver.comm, solver="gamg"
    )


def _gate_layers(solver):
    """The series capacitance of every gate on a dielectric (grounded metal behind it), as the
    nonlinear solver's linear response has it; None when every gate sits on the semiconductor."""
    layers = [(i, c) for i, c in enumerate(getattr(solver, "_gate_layer", [])) if c is not None]
    if not layers:
        return None
    from qhdesign.fem import forms
    from qhdesign.layout.mesh3d import TAGS3

    def extra(u, v):
        a = 0
        for i, c in layers:
            a = a + forms.series_layer(u, v, c, solver.ds(TAGS3["gate0"] + i))
        return a

    return extra


def _geometry(solver, settings, layout):
    from qhdesign.section.edge import _permittivity_at

    sec = solver.section
    ip = next((i for i, s in enumerate(sec.sheets) if s.role == "primary"), 0)
    p = sec.sheets[ip]
    phi = solver.sheet_potentials()[ip]
    dens = solver.sheet_densities()
    return (
        *strip_geometry(
            solver.plane.xy_m,
            solver.plane.triangles,
            phi,
            dens[ip],
            energy_eV=float(solver.calibration["energy_eV"][ip]),
            dos_J_m2=p.dos_J_m2,
            kT_J=solver.kT_target_eV * sc.e,
            bulk_density_m2=p.density_m2,
            seed_m=layout.seed_m,
            constrictions=layout.constrictions,
            field_T=settings["field_T"],
            filling=settings["filling"],
            strip_gap_J=settings["strip_gap_J"],
            eps_r=_permittivity_at(sec, p.z_m),
        ),
        dens,
        ip,
    )


@dataclass(frozen=True, eq=False)
class IslandResponse3D:
    """The island figures of a layout at one field (SI), as the island stage reports them."""

    point: object  # qhdesign.island.stage.FieldPoint
    strip: StripGeometry
    info: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        keep = (
            "field_T",
            "primary_filling",
            "A_L_m2",
            "K_I_J",
            "K_L_J",
            "K_IL_J",
            "K_I_edge_term_J",
            "K_I_electrostatic_J",
            "K_IL_over_K_I",
            "K_IL_over_K_I_electrostatic",
            "charging_energy_J",
            "K_tilde_J",
            "period_compressible_T",
            "period_incompressible_T",
            "window_T",
            "window_edge_width_T",
            "edge_velocity_m_per_s",
            "compressible_strip_width_m",
            "incompressible_strip_width_m",
        )
        flat = self.point.flat()
        out = {k: flat[k] for k in keep}
        out["r_reciprocity"] = self.point.r_reciprocity
        out["r_direct"] = self.point.r_direct
        out["strip"] = self.strip.to_dict()
        out["screening_wells"] = dict(self.point.screening_wells)
        return out


def check_settings(settings) -> None:
    """Refuse settings the 3D response cannot use (before any solve)."""
    from qhdesign.island.response import BULK_SHAPES

    if settings.bulk_shape not in BULK_SHAPES:
        raise InputError(
            f"bulk charge shape '{settings.bulk_shape}'; allowed: {', '.join(BULK_SHAPES)}",
            key="bulk_shape",
        )


def island_response(
    solver,
    settings,
    *,
    lifetimes_s: dict | None = None,
    resolve_strip: bool = True,
):
    """K_I, K_L, K_IL and E_C of the layout's island at the settings' field (see module notes).

    Parameters
    ----------
    solver
        A solved :class:`qhdesign.layout.model3d.LayoutSolver` (the operating point).
    settings
        :class:`qhdesign.island.stage.OperatingSettings` (filling, gap, field, temperature, Landau
        widths, exchange, bulk shape), as for the axisymmetric island.
    lifetimes_s
        Quantum lifetime of each sheet by name (s), e.g. from the 1D disorder estimate.
    resolve_strip
        Solve again on a mesh with node rows along the strip's boundaries (default); without it
        the conductor is snapped to the first mesh's nodes (coarse).

    Returns
    -------
    IslandResponse3D

    Raises
    ------
    InputError
        No island, no compressible edge at the field; ConvergenceError if a solve fails.
    """
    from qhdesign.island.stage import (
        FieldPoint,
        _closed_forms,
        _lifetimes,
        edge_term_J,
        landau_sheets,
        operating_field,
        screening_well_report,
    )

    from .model3d import LayoutSolver

    check_settings(settings)
    t0 = time.perf_counter()
    st = settings
    sec = solver.section
    layout = solver.layout.with_voltages(solver.voltages)
    B = st.field_T if st.field_T is not None else operating_field(sec, st)
    T = st.temperature_K if st.temperature_K is not None else sec.temperature_K
    tau, _ = _lifetimes(sec, lifetimes_s, st)
    cfg = {"field_T": B, "filling": st.filling, "strip_gap_J": st.strip_gap_J}
    geom, masks, dens, ip = _geometry(solver, cfg, layout)
    info = {"strip_mesh": "layout mesh (conductor snapped to its nodes)"}
    work = solver
    if resolve_strip and geom.closed:
        spacing = layout.gate_edge_m / solver.options.refine
        first = geom
        passes = []
        for _ in range(ROW_PASSES):
            # rows around the strip as the last solve found it; again from the rows' own solve
            # until the strip's boundaries stay within ROW_SETTLE_M of the rows' anchors
            rows = _strip_rows(
                geom, spacing, layout.gates, 0.5 * spacing, solver.options.strip_chord_m
            )
            work = LayoutSolver(sec, layout, solver.options, comm=solver.comm, curves=rows)
            work.solve()
            anchor = geom
            geom, masks, dens, ip = _geometry(work, cfg, layout)
            shift = (
                geom.inner_radius_m - anchor.inner_radius_m,
                geom.outer_radius_m - anchor.outer_radius_m,
            )
            passes.append({"rows": len(rows), "dofs": int(work.num_dofs), "shift_m": shift})
            if max(abs(shift[0]), abs(shift[1])) <= ROW_SETTLE_M:
                break
        info = {
            "strip_mesh": "mesh with node rows along the strip",
            "rows": len(rows),
            "dofs": int(work.num_dofs),
            "plane_nodes": int(work.plane.num_nodes),
            "row_passes": passes,
            "inner_radius_shift_m": geom.inner_radius_m - first.inner_radius_m,
            "edge_radius_shift_m": geom.outer_radius_m - first.outer_radius_m,
            "timings_s": dict(work.timings),
        }
    elif resolve_strip:
        info["strip_mesh"] += "; the strip reaches a constriction cut, so no second mesh"
    ll = {i: landau_sheets(sec, i, B, st, T, tau) for i in range(len(sec.sheets))}
    dos = []
    for i, s in enumerate(sec.sheets):
        present = dens[i] > EDGE_FRACTION * max(s.density_m2, 1.0)
        if i == ip:
            present &= ~(masks["L"] | masks["I"])
        d = np.zeros(dens.shape[1])
        if np.any(present):
            d[present] = ll[i][0].screening_dos(dens[i][present])
        dos.append(d)
    res = _response(work, masks, dos, ip, st.bulk_shape, layout.seed_m, geom.A_L_m2)
    nu = st.filling
    K_edge = edge_term_J(geom.edge_velocity_m_per_s, nu, geom.perimeter_m)
    K_I = res["K_I_J"] + K_edge
    r = res["K_IL_J"] / K_I
    forms = _closed_forms(
        geom.A_I_m2,
        geom.A_L_m2,
        r,
        nu,
        res["K_L_J"],
        res["K_IL_J"],
        K_I,
        st.quasiparticle_gap_J,
        sc.k * T,
    )
    xy, tri = work.plane.xy_m, work.plane.triangles
    gated = np.unique(tri[work.plane.gate_of_triangle >= 0])
    wells = {}
    for i, s in enumerate(sec.sheets):
        if i == ip:
            continue
        n_c = _p1_at(xy, tri, dens[i], layout.seed_m)
        cut = bool(
            s.density_m2 <= 0
            or (gated.size and np.min(dens[i][gated]) < EDGE_FRACTION * s.density_m2)
        )
        wells[s.name] = screening_well_report(ll[i][0], ll[i][1], n_c, cut, None)
    point = FieldPoint(
        field_T=B,
        strip=geom,
        K_I_electrostatic_J=res["K_I_J"],
        K_I_edge_term_J=K_edge,
        K_L_J=res["K_L_J"],
        K_IL_J=res["K_IL_J"],
        r_reciprocity=res["r_reciprocity"],
        r_direct=res["r_direct"],
        dA_I_dV_m2_per_V=float("nan"),
        forms=forms,
        screening_wells=wells,
        primary_filling=geom.centre_filling,
    )
    info["conductor_nodes"] = int(np.count_nonzero(masks["I"]))
    info["bulk_nodes"] = int(np.count_nonzero(masks["L"]))
    info["response_s"] = time.perf_counter() - t0
    return IslandResponse3D(point=point, strip=geom, info=info)
