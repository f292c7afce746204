"""3D mesh of a layer stack under a gate layout: a gmsh plane mesh extruded through graded levels.

Layers are slabs, so the 3D mesh is the product of a triangle mesh of the surface plane and the
graded z-levels of the cross-section (a level on every layer boundary and sheet, fine at the
surface and at the sheets, coarse in thick barriers): every triangle times every z-interval is a
prism, cut into three tetrahedra. The plane mesh comes from gmsh (OpenCASCADE): the domain
rectangle fragmented by the gate polygons, so gate edges are mesh edges, with element size
``mesh.gate_edge`` at gate edges and inside the island, growing to ``mesh.far``.

Cutting the prisms: with the triangle's vertices in increasing global order v0 < v1 < v2 and
primes for the level above, the tetrahedra (v0 v1 v2 v0'), (v1 v2 v0' v1'), (v2 v0' v1' v2')
split every side quad along the diagonal from the higher-numbered lower vertex to the
lower-numbered upper vertex, a rule that depends only on the quad, so neighbouring prisms agree
and the mesh is conforming (Dompierre, Labbé, Vallet, Camarero, Proc. 8th International Meshing
Roundtable, 195 (1999), "How to subdivide pyramids, prisms and hexahedra into tetrahedra").

Distribution: only the plane mesh is made on rank 0 (it is small: its size grows like the square
root of the 3D problem); it is broadcast, and every rank builds the tetrahedra and coordinates of
its own block of z-levels, which ``dolfinx.mesh.create_mesh`` then partitions. So the serial part
of mesh generation stays bounded as the number of levels and ranks grows.

Mesh coordinates are in nm with the third coordinate the height (-depth), as in the 2D meshes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layoutfile import Layout
from .polygons import polygon_area

__all__ = ["TAGS3", "PlaneMesh", "build_mesh3d", "plane_mesh", "points_in_polygon"]

NM = 1e-9
#: A polygon vertex turning by at most this much (rad) is a point of a drawn curve: the band's
#: rows run through it along the bisector; a sharper corner interrupts them.
MILD_TURN_RAD = np.deg2rad(20.0)


def edge_parts(length: float, h: float) -> int:
    """Equal parts of a gate edge of this length at spacing at most h (same units): its mesh
    curve's nodes and the band rows' nodes across from them (:func:`band_nodes`)."""
    return max(int(np.ceil(length / h - 1e-9)), 1)


#: Facet tags: gate i is ``gate0 + i``, sheet i is ``sheet0 + i``.
TAGS3 = {"exposed": 2, "bottom": 3, "sides": 4, "levels": 5, "sheet0": 100, "gate0": 1000}


@dataclass(frozen=True, eq=False)
class PlaneMesh:
    """The triangle mesh of the surface plane (SI units).

    Attributes
    ----------
    xy_m
        Node coordinates, shape (Np, 2), m.
    triangles
        Node indices, shape (T, 3), counter-clockwise.
    gate_of_triangle
        Index of the gate covering each triangle, -1 where the surface is exposed, shape (T,).
    """

    xy_m: np.ndarray
    triangles: np.ndarray
    gate_of_triangle: np.ndarray

    @property
    def num_nodes(self) -> int:
        return int(self.xy_m.shape[0])


def points_in_polygon(pts: np.ndarray, poly: np.ndarray) -> np.ndarray:
    """Even-odd test for many points (shape (N, 2)) against one polygon (M, 2): bool (N,)."""
    x, y = pts[:, 0][:, None], pts[:, 1][:, None]
    x1, y1 = poly[:, 0][None, :], poly[:, 1][None, :]
    x2, y2 = np.roll(poly[:, 0], -1)[None, :], np.roll(poly[:, 1], -1)[None, :]
    crosses = (y1 > y) != (y2 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        xc = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
    return (np.sum(crosses & (xc > x), axis=1) % 2) == 1


def _refine_boxes(layout: Layout) -> list[tuple[float, float, float, float]]:
    """Boxes (x0, x1, y0, y1, m) meshed at the gate-edge size: the island and its constrictions."""
    boxes = []
    if layout.island is not None:
        a, b = layout.island.half_extent_m
        xo = a + layout.island.wall_m
        boxes.append((-xo, xo, -b, b))
    for c in layout.constrictions:
        (x0, y0), (x1, y1) = c.path_m
        pad = 2 * layout.gate_edge_m
        boxes.append((min(x0, x1) - pad, max(x0, x1) + pad, min(y0, y1) - pad, max(y0, y1) + pad))
    return boxes


def _on_domain_boundary(curve: int, x0: float, x1: float, y0: float, y1: float) -> bool:
    """True for a curve lying on the domain rectangle's boundary (nm)."""
    import gmsh

    bx0, by0, _, bx1, by1, _ = gmsh.model.getBoundingBox(1, curve)
    tol = 1e-6 * max(x1 - x0, y1 - y0)
    vertical = abs(bx1 - bx0) < tol and min(abs(bx0 - x0), abs(bx0 - x1)) < tol
    horizontal = abs(by1 - by0) < tol and min(abs(by0 - y0), abs(by0 - y1)) < tol
    return vertical or horizontal


def _row_offsets(
    h_n: float, band: float, h_t: float, inner: bool, h_first: float | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Distances (nm) of the node rows from a gate edge and the spacing of each row.

    The first row lies ``h_first`` from the edge (default ``h_n``); spacings grow by 30 % per row
    up to ``h_n``, stay ``h_n`` out to ``band`` on the exposed side (none under the gate), then
    grow by 25 % per row until they reach half the tangential size, where the isotropic mesh
    takes over."""
    out, gaps, d = [], [], 0.0
    step = min(h_first if h_first is not None else h_n, h_n)
    while step < h_n - 1e-9:
        d += step
        out.append(d)
        gaps.append(step)
        step *= 1.3
    step = h_n
    if not inner:
        while d + h_n <= band + 1e-9:
            d += h_n
            out.append(d)
            gaps.append(h_n)
    while step < 0.5 * h_t:
        d += step
        out.append(d)
        gaps.append(step)
        step *= 1.25
    return np.array(out), np.array(gaps)


def _segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance of points p (N, 2) to the segment a-b."""
    d = b - a
    t = np.clip(((p - a) @ d) / max(float(d @ d), 1e-300), 0.0, 1.0)
    return np.linalg.norm(p - (a + t[:, None] * d), axis=1)


def _metal_edges(layout: Layout) -> tuple[list, list[int], list[float], list]:
    """The edges of the gate metal (nm): the sides of the counter-clockwise gate polygons less
    the joints where two gates touch (a side whose reverse is another gate's side lies inside
    the metal). For each side, the side before it along the metal's outline (-1 where that is not
    unique: gates touching at a point) and the turn (rad, left positive) from it; and the joints
    (each once)."""
    from collections import defaultdict

    segs = []
    for g in layout.gates:
        v = np.asarray(g.vertices_m, dtype=float) / NM
        # counter-clockwise, so the normals point out of the gate (a layout file's gates are
        # turned so when loaded; a layout built in Python may not be)
        if polygon_area(v) < 0:
            v = v[::-1]
        segs += [(v[k], v[(k + 1) % len(v)]) for k in range(len(v))]

    def key(p):  # a vertex to 1e-6 nm (-0.0 and 0.0 are one key)
        return tuple(np.round(p, 6) + 0.0)

    sides = {(key(a), key(b)) for a, b in segs}
    joints = [(a, b) for a, b in segs if (key(b), key(a)) in sides and key(a) < key(b)]
    segs = [(a, b) for a, b in segs if (key(b), key(a)) not in sides]
    ending, starting = defaultdict(list), defaultdict(list)
    for i, (a, b) in enumerate(segs):
        ending[key(b)].append(i)
        starting[key(a)].append(i)
    prev_of, turn_at = [], []
    for a, b in segs:
        before = ending[key(a)]
        if len(before) != 1 or len(starting[key(a)]) != 1:
            prev_of.append(-1)
            turn_at.append(np.pi)
            continue
        pa, pb = segs[before[0]]
        d0, d1 = pb - pa, b - a
        prev_of.append(before[0])
        turn_at.append(float(np.arctan2(d0[0] * d1[1] - d0[1] * d1[0], float(d0 @ d1))))
    return segs, prev_of, turn_at, joints


def band_nodes(
    layout: Layout, h_n: float, h_t: float, band: float, h_first: float | None = None
) -> np.ndarray:
    """Nodes (nm, shape (N, 2)) of the anisotropic band along the gate edges.

    Rows parallel to every gate edge, ``h_n`` apart across it and ``h_t`` along it (the edge
    is split into equal parts of at most ``h_t``, as its mesh curve is): from ``h_first`` at the
    edge graded up to ``h_n`` (:func:`_row_offsets`), out to ``band`` on the exposed side, a few
    graded rows under the gate. The edges are those of the metal (:func:`_metal_edges`: where two
    gates touch, the joint is no edge). Each row node lies straight across from a node of the
    edge's mesh curve, and where the outline turns mildly (at most ``MILD_TURN_RAD``: a drawn
    curve), the vertex has its row nodes too, on the bisector at the miter distance: the rows
    are offset copies of the curve and the cells between the edge and the first row are right
    triangles. (Rows from the side midpoints alone, as before 2026-12-03, were staggered against
    the vertices of a curve drawn with sides shorter than ``h_t``: the cells at the edge had
    angles near 170 degrees, and on the ring of tests/consistency/test_layout3d_island.py the
    island's density edge sat 2 nm inside the axisymmetric one; docs/layout3d.md.) A node is kept
    only where its own edge is the nearest gate edge (no clashes at corners or between
    neighbouring gates), at least 0.7 row spacings from every other edge and node, and inside the
    domain. Pure numpy and deterministic: the Delaunay mesher then joins these rows into thin
    triangles along the edge.
    """
    from scipy.spatial import cKDTree

    segs, prev_of, turn_at, joints = _metal_edges(layout)
    next_of = {p: i for i, p in enumerate(prev_of) if p >= 0}
    (x0, x1), (y0, y1) = ((a / NM, b / NM) for a, b in layout.domain_m)
    outer, gap_out = _row_offsets(h_n, band, h_t, False, h_first)
    inner, gap_in = _row_offsets(h_n, band, h_t, True, h_first)
    offsets, gaps = np.concatenate((outer, -inner)), np.concatenate((gap_out, gap_in))
    cand, owner, owner2, spacing = [], [], [], []
    for i, (a, b) in enumerate(segs):
        d = b - a
        length = float(np.hypot(*d))
        normal = np.array([d[1], -d[0]]) / length  # outward for a counter-clockwise polygon
        n_t = edge_parts(length, h_t)
        prev, turn = prev_of[i], turn_at[i]
        turn_end = turn_at[next_of[i]] if i in next_of else np.pi
        mild = abs(turn) <= MILD_TURN_RAD
        # the row nodes lie across the edge from the edge's own mesh nodes (its n_t equal parts):
        # the interior division points and, where the polygon turns mildly (a drawn curve), its
        # first vertex, offset along the bisector so that the rows stay parallel to the curve.
        # A sharp corner's vertex gets none (the rows of its two sides would clash); a side of
        # one part between two sharp corners gets its midpoint.
        t = np.arange(1, n_t) / n_t
        if n_t == 1 and not mild and abs(turn_end) > MILD_TURN_RAD:
            t = np.array([0.5])
        base = a + t[:, None] * d
        for off, gap in zip(offsets, gaps, strict=True):
            cand.append(base + off * normal)
            owner.append(np.full(t.size, i))
            owner2.append(np.full(t.size, i))
            spacing.append(np.full(t.size, gap))
        if mild:
            pa, pb = segs[prev]
            dp = pb - pa
            n_prev = np.array([dp[1], -dp[0]]) / float(np.hypot(*dp))
            bis = (n_prev + normal) / np.cos(0.5 * turn) / float(np.hypot(*(n_prev + normal)))
            for off, gap in zip(offsets, gaps, strict=True):
                cand.append((a + off * bis)[None, :])
                owner.append(np.array([i]))
                owner2.append(np.array([prev]))
                spacing.append(np.array([gap]))
    if not cand:
        return np.zeros((0, 2))
    pts, own, gap = np.concatenate(cand), np.concatenate(owner), np.concatenate(spacing)
    own2 = np.concatenate(owner2)
    dist = np.stack([_segment_distance(pts, a, b) for a, b in segs], axis=1)
    rows = np.arange(pts.shape[0])
    mine = np.minimum(dist[rows, own], dist[rows, own2])
    others = dist.copy()
    others[rows, own] = np.inf
    others[rows, own2] = np.inf
    nearest_other = others.min(axis=1)
    for a, b in joints:  # no node on or beside a joint (a mesh edge between two gates)
        nearest_other = np.minimum(nearest_other, _segment_distance(pts, a, b))
    m = 0.7 * gap  # per node: 0.7 of its row's spacing
    keep = (mine <= nearest_other - 1e-9) & (nearest_other >= m)
    keep &= (
        (pts[:, 0] > x0 + m) & (pts[:, 0] < x1 - m) & (pts[:, 1] > y0 + m) & (pts[:, 1] < y1 - m)
    )
    pts, m = pts[keep], m[keep]
    # drop near-duplicates (nearer than 0.7 of the finer row's spacing), first come first kept
    # (deterministic order)
    tree = cKDTree(pts)
    drop = np.zeros(pts.shape[0], dtype=bool)
    for i, j in sorted(tree.query_pairs(float(m.max()) if m.size else 0.0)):
        if not drop[i] and np.hypot(*(pts[i] - pts[j])) < min(m[i], m[j]):
            drop[j] = True
    return pts[~drop]


def plane_mesh(
    layout: Layout,
    refine: float = 1.0,
    *,
    edge_normal_m: float | None = None,
    edge_band_m: float | None = None,
    edge_first_m: float | None = None,
    curves=(),
) -> PlaneMesh:
    """Mesh the surface plane with the gate polygons as embedded boundaries (gmsh, this rank).

    ``refine`` divides every element size. ``curves``: extra closed polylines (each (N, 2), m)
    whose vertices become mesh nodes and whose segments become mesh edges, not subdivided (the
    island's strip boundaries, :mod:`qhdesign.layout.response3d`). gmsh must be initialised by
    the caller.

    Without ``edge_normal_m`` the mesh is isotropic: ``gate_edge`` at the gate edges, growing to
    ``far``. With it, a band along every gate edge is meshed anisotropically: rows of nodes
    ``edge_normal_m`` apart across the edge and ``gate_edge`` apart along it, out to
    ``edge_band_m`` on the exposed side and graded under the gate, the first row
    ``edge_first_m`` from the edge (default ``edge_normal_m``) (:func:`band_nodes`, embedded
    in gmsh's Frontal-Delaunay mesh; deterministic, unlike gmsh's anisotropic BAMG algorithm,
    which gave a different mesh on every call). The band holds what a P1 solution resolves
    worst: the square-root singularity of the potential at a gate edge and the kink of the sheet
    density at the electronic edge, which lies within about one well depth of the gate edge.
    """
    import gmsh

    h_edge = layout.gate_edge_m / refine / NM
    h_far = layout.far_m / refine / NM
    (x0, x1), (y0, y1) = ((a / NM, b / NM) for a, b in layout.domain_m)
    gmsh.model.add("qhdesign_layout_plane")
    occ = gmsh.model.occ
    rect = occ.addRectangle(x0, y0, 0.0, x1 - x0, y1 - y0)
    gate_surfs = []
    for g in layout.gates:
        pts = [occ.addPoint(float(x) / NM, float(y) / NM, 0.0) for x, y in g.vertices_m]
        lines = [occ.addLine(pts[i], pts[(i + 1) % len(pts)]) for i in range(len(pts))]
        loop = occ.addCurveLoop(lines)
        gate_surfs.append(occ.addPlaneSurface([loop]))
    curve_lines = []
    for c in curves:
        pts = [occ.addPoint(float(x) / NM, float(y) / NM, 0.0) for x, y in c]
        curve_lines += [occ.addLine(pts[i], pts[(i + 1) % len(pts)]) for i in range(len(pts))]
    tools = [(2, s) for s in gate_surfs] + [(1, c) for c in curve_lines]
    _, outmap = occ.fragment([(2, rect)], tools)
    occ.synchronize()
    row_tags = set()
    for dim_tags in outmap[1 + len(gate_surfs) :]:
        for dim, tag in dim_tags:
            if dim == 1:  # the curve's own nodes only
                gmsh.model.mesh.setTransfiniteCurve(tag, 2)
                row_tags.add(tag)
    field = gmsh.model.mesh.field
    band_nm = 0.0
    if edge_normal_m is not None:
        h_norm = min(edge_normal_m / refine / NM, h_edge)
        band_nm = (edge_band_m if edge_band_m is not None else 0.0) / NM
        h_first = None if edge_first_m is None else edge_first_m / refine / NM
        nodes = band_nodes(layout, h_norm, h_edge, band_nm, h_first)
        # the gate edges only: the domain boundary carries no singularity, and the embedded
        # curves (strip rows) bring their own nodes
        gate_curves = [
            c[1]
            for c in gmsh.model.getEntities(1)
            if c[1] not in row_tags and not _on_domain_boundary(c[1], x0, x1, y0, y1)
        ]
        # the gate edges split into equal parts of at most gate_edge, as the rows are
        for c in gate_curves:
            length = gmsh.model.occ.getMass(1, c)
            gmsh.model.mesh.setTransfiniteCurve(c, edge_parts(length, h_edge) + 1)
        # each node into the surface that holds it (the exposed part, or a gate for the
        # graded rows under it)
        placed = np.zeros(nodes.shape[0], dtype=bool)
        for _, s_tag in gmsh.model.getEntities(2):
            bx0, by0, _, bx1, by1, _ = gmsh.model.getBoundingBox(2, s_tag)
            inbox = (nodes[:, 0] >= bx0) & (nodes[:, 0] <= bx1)
            inbox &= (nodes[:, 1] >= by0) & (nodes[:, 1] <= by1)
            tags = []
            for k in np.nonzero(inbox & ~placed)[0]:
                if gmsh.model.isInside(2, s_tag, [nodes[k, 0], nodes[k, 1], 0.0]):
                    tags.append(occ.addPoint(nodes[k, 0], nodes[k, 1], 0.0))
                    placed[k] = True
            if tags:
                occ.synchronize()
                gmsh.model.mesh.embed(0, tags, 2, s_tag)
    # size: gate_edge at every gate boundary (and across the band) and inside the island boxes,
    # growing to far
    curves = [c[1] for c in gmsh.model.getEntities(1)]
    f_dist = field.add("Distance")
    field.setNumbers(f_dist, "CurvesList", curves)
    field.setNumber(f_dist, "Sampling", 200)
    f_edge = field.add("Threshold")
    field.setNumber(f_edge, "InField", f_dist)
    field.setNumber(f_edge, "SizeMin", h_edge)
    field.setNumber(f_edge, "SizeMax", h_far)
    field.setNumber(f_edge, "DistMin", max(h_edge, band_nm))
    field.setNumber(f_edge, "DistMax", max(h_edge, band_nm) + 4.0 * h_far)
    fields = [f_edge]
    for bx0, bx1, by0, by1 in _refine_boxes(layout):
        f_box = field.add("Box")
        for k, v in (
            ("VIn", 1.5 * h_edge),
            ("VOut", h_far),
            ("XMin", bx0 / NM),
            ("XMax", bx1 / NM),
            ("YMin", by0 / NM),
            ("YMax", by1 / NM),
            ("Thickness", 4 * h_edge),
        ):
            field.setNumber(f_box, k, v)
        fields.append(f_box)
    f_min = field.add("Min")
    field.setNumbers(f_min, "FieldsList", fields)
    field.setAsBackgroundMesh(f_min)
    for opt, val in (
        ("Mesh.MeshSizeExtendFromBoundary", 0),
        ("Mesh.MeshSizeFromPoints", 0),
        ("Mesh.MeshSizeFromCurvature", 0),
        ("Mesh.Algorithm", 6),
        ("General.NumThreads", 1),
        ("Mesh.RandomFactor", 1e-9),
    ):
        gmsh.option.setNumber(opt, val)
    gmsh.model.mesh.generate(2)
    tags, coords, _ = gmsh.model.mesh.getNodes()
    order = np.argsort(tags)
    tags = tags[order]
    xy = coords.reshape(-1, 3)[order, :2] * NM
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags] = np.arange(tags.size)
    tris = []
    for _, s in gmsh.model.getEntities(2):
        etypes, _, enodes = gmsh.model.mesh.getElements(2, s)
        for et, en in zip(etypes, enodes, strict=True):
            if et == 2:
                tris.append(index[np.asarray(en, dtype=np.int64)].reshape(-1, 3))
    gmsh.model.remove()
    tri = np.concatenate(tris)
    # drop unused nodes (geometry points not in any triangle), renumber compactly
    used = np.unique(tri)
    remap = np.full(xy.shape[0], -1, dtype=np.int64)
    remap[used] = np.arange(used.size)
    xy, tri = xy[used], remap[tri]
    # counter-clockwise
    p = xy[tri]
    area2 = (p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1]) - (p[:, 1, 1] - p[:, 0, 1]) * (
        p[:, 2, 0] - p[:, 0, 0]
    )
    tri[area2 < 0] = tri[area2 < 0][:, ::-1]
    cen = xy[tri].mean(axis=1)
    gate = np.full(tri.shape[0], -1, dtype=np.int64)
    for i, g in enumerate(layout.gates):
        gate[points_in_polygon(cen, g.vertices_m)] = i
    _check_cover(layout, np.abs(area2) * 0.5, gate)
    return PlaneMesh(xy_m=xy, triangles=tri, gate_of_triangle=gate)


def _check_cover(layout: Layout, area_m2: np.ndarray, gate: np.ndarray) -> None:
    """The triangles tile the domain and every gate (relative 1e-9 in area), or MeshError.

    gmsh can drop a surface silently (a node embedded on another surface's boundary did, in a
    band under development): a solve on such a mesh would look like a result and be wrong."""
    from qhdesign.errors import MeshError

    (x0, x1), (y0, y1) = layout.domain_m
    want = [("the domain", (x1 - x0) * (y1 - y0), float(area_m2.sum()))]
    for i, g in enumerate(layout.gates):
        poly = abs(polygon_area(np.asarray(g.vertices_m, dtype=float)))
        want.append((f"gate '{g.name}'", poly, float(area_m2[gate == i].sum())))
    for what, exact, got in want:
        if abs(got - exact) > 1e-9 * exact:
            raise MeshError(
                f"the plane mesh covers {got / exact:.6f} of {what}'s area (gmsh lost part of "
                "the geometry; try another mesh.gate_edge or mesh.edge_normal)"
            )


def _prism_tets(tri: np.ndarray, k: int, n_plane: int) -> np.ndarray:
    """Tetrahedra (global node numbers) of the prisms between levels k and k+1."""
    s = np.sort(tri, axis=1)
    lo = s + k * n_plane
    hi = s + (k + 1) * n_plane
    v0, v1, v2 = lo[:, 0], lo[:, 1], lo[:, 2]
    w0, w1, w2 = hi[:, 0], hi[:, 1], hi[:, 2]
    return np.concatenate(
        (
            np.stack((v0, v1, v2, w0), 1),
            np.stack((v1, v2, w0, w1), 1),
            np.stack((v2, w0, w1, w2), 1),
        )
    )


@dataclass(frozen=True, eq=False)
class Mesh3D:
    """A distributed 3D mesh with its tags and the plane mesh it came from."""

    mesh: object
    cell_tags: object
    facet_tags: object
    plane: PlaneMesh
    levels_m: np.ndarray
    layer_of_interval: np.ndarray


def build_mesh3d(
    layout: Layout,
    levels_m: np.ndarray,
    layer_of_interval: np.ndarray,
    sheet_level: np.ndarray,
    charged_levels: np.ndarray,
    comm,
    refine: float = 1.0,
    curves=(),
    *,
    edge_normal_m: float | None = None,
    edge_band_m: float | None = None,
    edge_first_m: float | None = None,
) -> tuple[Mesh3D, dict]:
    """Build and distribute the 3D mesh.

    Parameters
    ----------
    layout
        The gate layout.
    levels_m, layer_of_interval, sheet_level
        z-levels (m, from the surface down), the layer of each interval, the level of each sheet.
    charged_levels
        Interior levels that carry frozen line charge (tagged ``levels``).
    comm
        MPI communicator.
    refine, edge_normal_m, edge_band_m, edge_first_m
        Plane-mesh sizes, see :func:`plane_mesh`.
    curves
        Extra closed polylines embedded in the plane mesh (:func:`plane_mesh`).

    Returns
    -------
    (Mesh3D, timings in s: ``plane``, ``extrude``, ``distribute``, ``tags``)
    """
    import time

    import basix.ufl
    import ufl

    from qhdesign.fem.backend import load

    _, dolfinx = load()
    t = {}
    t0 = time.perf_counter()
    plane = None
    if comm.rank == 0:
        import gmsh

        started = False
        if not gmsh.isInitialized():
            gmsh.initialize(interruptible=False)
            started = True
        gmsh.option.setNumber("General.Terminal", 0)
        try:
            plane = plane_mesh(
                layout,
                refine,
                edge_normal_m=edge_normal_m,
                edge_band_m=edge_band_m,
                edge_first_m=edge_first_m,
                curves=curves,
            )
        finally:
            if started:
                gmsh.finalize()
    plane = comm.bcast(plane, root=0)
    t["plane"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    z = np.asarray(levels_m, dtype=float)
    nz, n_plane = z.size, plane.num_nodes
    # this rank's block of levels (nodes) and of intervals (cells)
    bounds = np.linspace(0, nz, comm.size + 1).round().astype(int)
    k0, k1 = int(bounds[comm.rank]), int(bounds[comm.rank + 1])
    xs = np.tile(plane.xy_m / NM, (k1 - k0, 1))
    zs = np.repeat(-z[k0:k1] / NM, n_plane)
    x_local = np.column_stack((xs, zs))
    last_interval = nz - 1
    cells = [_prism_tets(plane.triangles, k, n_plane) for k in range(k0, min(k1, last_interval))]
    cells = np.concatenate(cells).astype(np.int64) if cells else np.zeros((0, 4), dtype=np.int64)
    t["extrude"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    domain = ufl.Mesh(basix.ufl.element("Lagrange", "tetrahedron", 1, shape=(3,)))
    partitioner = dolfinx.mesh.create_cell_partitioner(dolfinx.mesh.GhostMode.shared_facet, 2)
    msh = dolfinx.mesh.create_mesh(comm, cells, domain, x_local, partitioner=partitioner)
    t["distribute"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    tdim = 3
    msh.topology.create_connectivity(tdim - 1, tdim)
    msh.topology.create_connectivity(tdim, tdim - 1)
    # cell tags = layer + 1, from the cell's mean height
    n_cells = msh.topology.index_map(tdim).size_local + msh.topology.index_map(tdim).num_ghosts
    cells_all = np.arange(n_cells, dtype=np.int32)
    mid = dolfinx.mesh.compute_midpoints(msh, tdim, cells_all)
    depth = -mid[:, 2] * NM
    k = np.clip(np.searchsorted(z, depth) - 1, 0, nz - 2)
    cell_tags = dolfinx.mesh.meshtags(
        msh, tdim, cells_all, (layer_of_interval[k] + 1).astype(np.int32)
    )

    tol = 1e-6  # nm
    idx_parts, val_parts = [], []

    def level_facets(zk: float) -> np.ndarray:
        return dolfinx.mesh.locate_entities(msh, tdim - 1, lambda x: np.abs(x[2] + zk / NM) < tol)

    top = level_facets(z[0])
    fmid = dolfinx.mesh.compute_midpoints(msh, tdim - 1, top)[:, :2] * NM
    gate_val = np.full(top.size, TAGS3["exposed"], dtype=np.int32)
    for i, g in enumerate(layout.gates):
        gate_val[points_in_polygon(fmid, g.vertices_m)] = TAGS3["gate0"] + i
    idx_parts.append(top)
    val_parts.append(gate_val)
    bottom = level_facets(z[-1])
    idx_parts.append(bottom)
    val_parts.append(np.full(bottom.size, TAGS3["bottom"], dtype=np.int32))
    sheet_set = {int(s) for s in sheet_level}
    for i, ks in enumerate(sheet_level):
        f = level_facets(z[int(ks)])
        idx_parts.append(f)
        val_parts.append(np.full(f.size, TAGS3["sheet0"] + i, dtype=np.int32))
    for kc in charged_levels:
        kc = int(kc)
        if kc in sheet_set or kc == 0 or kc == nz - 1:
            continue
        f = level_facets(z[kc])
        idx_parts.append(f)
        val_parts.append(np.full(f.size, TAGS3["levels"], dtype=np.int32))
    idx = np.concatenate(idx_parts).astype(np.int32)
    val = np.concatenate(val_parts)
    order = np.argsort(idx)
    facet_tags = dolfinx.mesh.meshtags(msh, tdim - 1, idx[order], val[order])
    t["tags"] = time.perf_counter() - t0
    return Mesh3D(msh, cell_tags, facet_tags, plane, z, np.asarray(layer_of_interval)), t
