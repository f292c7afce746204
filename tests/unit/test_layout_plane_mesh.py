"""The plane mesh's anisotropic gate-edge band (``mesh.edge_normal``): sizes as documented.

Source: the option's definition (docs/layout-format.md, ``[mesh]``): ``edge_normal`` across the
gate edges, ``gate_edge`` along them, within ``edge_band`` of every gate edge.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import ROOT

from qhdesign.layout import loads_layout
from qhdesign.stack import load_stack

LAYOUT = """
[layout]
name = "edge"
stack = "../ql2417_screened.toml"
domain_x = ["-600 nm", "600 nm"]
domain_y = ["-600 nm", "600 nm"]
[mesh]
gate_edge = "60 nm"
far = "200 nm"
{extra}
[[gates]]
name = "g"
voltage = "-1 V"
vertices = [["-540 nm", "-540 nm"], ["0 nm", "-540 nm"], ["0 nm", "540 nm"], ["-540 nm", "540 nm"]]
"""


def _plane(extra: str):
    import gmsh

    from qhdesign.layout.mesh3d import plane_mesh

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    lay = loads_layout(
        LAYOUT.format(extra=extra), source="e.toml", base=ROOT / "stacks" / "layouts", stack=stack
    )
    gmsh.initialize(interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        return plane_mesh(
            lay, 1.0, edge_normal_m=lay.edge_normal_m, edge_band_m=lay.edge_band_m or 150e-9
        )
    finally:
        gmsh.finalize()


def _extents_near_edge(pm, x_lo, x_hi):
    """x- and y-extent (m) of the triangles whose centroid lies in x_lo < x < x_hi, |y| < 300 nm."""
    p = pm.xy_m[pm.triangles]
    c = p.mean(axis=1)
    sel = (c[:, 0] > x_lo) & (c[:, 0] < x_hi) & (np.abs(c[:, 1]) < 300e-9)
    dx = p[sel, :, 0].max(axis=1) - p[sel, :, 0].min(axis=1)
    dy = p[sel, :, 1].max(axis=1) - p[sel, :, 1].min(axis=1)
    return dx, dy


def test_band_is_fine_across_and_coarse_along_the_edge():
    pm = _plane('edge_normal = "6 nm"\nedge_band = "150 nm"')
    dx, dy = _extents_near_edge(pm, -100e-9, 100e-9)
    assert dx.size > 0
    # across the edge: the requested 6 nm (a triangle spans up to about 1.5 sizes)
    assert np.median(dx) < 1.5 * 6e-9
    # along it: much longer cells (60 nm asked); the band is anisotropic
    assert np.median(dy) > 3 * np.median(dx)
    # gate edges stay mesh edges: no triangle straddles the edge x = 0 (|y| < 540 nm)
    p = pm.xy_m[pm.triangles]
    along = np.abs(p[:, :, 1]).max(axis=1) < 530e-9
    straddle = (p[:, :, 0].min(axis=1) < -1e-12) & (p[:, :, 0].max(axis=1) > 1e-12)
    assert not np.any(along & straddle)


def test_without_the_band_the_mesh_is_isotropic():
    pm = _plane("")
    dx, dy = _extents_near_edge(pm, -100e-9, 100e-9)
    assert np.median(dx) > 20e-9
    assert np.median(dy) == pytest.approx(np.median(dx), rel=0.6)


def test_band_mesh_is_deterministic():
    # the determinism rule (serial == mpiexec needs the same plane mesh in every run)
    a = _plane('edge_normal = "8 nm"')
    b = _plane('edge_normal = "8 nm"')
    assert np.array_equal(a.xy_m, b.xy_m) and np.array_equal(a.triangles, b.triangles)


def _band(vertices_nm, first_nm):
    from qhdesign.layout.layoutfile import Gate, Layout
    from qhdesign.layout.mesh3d import band_nodes

    lay = Layout(
        name="one gate",
        notes="",
        source="test",
        stack_path=ROOT,
        domain_m=((-600e-9, 600e-9), (-600e-9, 600e-9)),
        gate_edge_m=60e-9,
        far_m=200e-9,
        gates=(Gate("g", np.asarray(vertices_nm, dtype=float) * 1e-9, -1.0),),
        seed_m=(300e-9, 0.0),
    )
    return band_nodes(lay, 8.0, 60.0, 40.0, first_nm)


SQUARE_NM = [[-540, -540], [0, -540], [0, 540], [-540, 540]]


def test_band_rows_lie_on_the_exposed_side_whatever_the_polygon_orientation():
    # a layout built in Python may give a gate clockwise; the band must not move under the gate
    ccw = _band(SQUARE_NM, None)
    cw = _band(SQUARE_NM[::-1], None)
    near = lambda p: p[(np.abs(p[:, 1]) < 300) & (np.abs(p[:, 0]) < 100)]  # noqa: E731
    for p in (near(ccw), near(cw)):
        exposed = np.sort(np.unique(np.round(p[p[:, 0] > 0, 0], 6)))
        # 8 nm rows out to the 40 nm band on the exposed side (x > 0), graded ones under the gate
        assert exposed[:5] == pytest.approx([8.0, 16.0, 24.0, 32.0, 40.0])
        assert np.count_nonzero(p[:, 0] > 0) > np.count_nonzero(p[:, 0] < 0)


def test_band_first_row_grades_from_the_first_size():
    p = _band(SQUARE_NM, 1.0)
    p = p[(np.abs(p[:, 1]) < 300) & (np.abs(p[:, 0]) < 100)]
    rows = np.sort(np.unique(np.round(p[p[:, 0] > 0, 0], 6)))
    # 1 nm, then spacings growing by 30 % until they reach 8 nm, then 8 nm
    assert rows[:4] == pytest.approx([1.0, 2.3, 3.99, 6.187])
    gaps = np.diff(rows)
    inside = gaps[rows[1:] <= 40.0 + 1e-9]  # out to the 40 nm band: at most 8 nm, ending at 8
    assert np.all(inside <= 8.0 + 1e-9) and inside[-1] == pytest.approx(8.0)
    assert np.all(np.diff(gaps[rows[1:] > 40.0 + 1e-9]) > 0)  # then growing towards the far mesh
    under = np.sort(-np.unique(np.round(p[p[:, 0] < 0, 0], 6)))
    assert under[:2] == pytest.approx([1.0, 2.3])


def _ring(n=128, r_in=400e-9, r_out=700e-9):
    """A ring gate as two half-annuli that touch along the x axis (as in the island test)."""
    from pathlib import Path

    from qhdesign.layout.layoutfile import Gate, Layout

    def half(sign):
        th = np.linspace(0.0, np.pi, n // 2 + 1)
        inner = np.column_stack([r_in * np.cos(th), sign * r_in * np.sin(th)])
        outer = np.column_stack([r_out * np.cos(th[::-1]), sign * r_out * np.sin(th[::-1])])
        poly = np.vstack([inner, outer])
        return poly[::-1] if sign > 0 else poly

    return Layout(
        name="ring",
        notes="",
        source="test",
        stack_path=Path("."),
        domain_m=((-1e-6, 1e-6), (-1e-6, 1e-6)),
        gate_edge_m=20e-9,
        far_m=200e-9,
        gates=(Gate("up", half(1.0), -1.0), Gate("down", half(-1.0), -1.0)),
        seed_m=(0.0, 0.0),
    )


def test_touching_gates_have_no_edge_at_their_joint_and_the_ring_outline_is_smooth():
    from qhdesign.layout.mesh3d import MILD_TURN_RAD, _metal_edges

    segs, prev_of, turn, joints = _metal_edges(_ring(n=128))
    assert len(joints) == 2
    # 2 x 64 arc sides inside and outside; the two 300 nm joints on the x axis are gone
    assert len(segs) == 256
    sides = sorted(float(np.hypot(*(b - a))) for a, b in segs)
    assert sides[0] == pytest.approx(19.63, abs=0.01) and sides[127] == pytest.approx(
        19.63, abs=0.01
    )
    assert sides[128] == pytest.approx(34.36, abs=0.01)  # 2 pi 400 nm / 128, 2 pi 700 nm / 128
    # every vertex continues a circle: a turn of 2 pi / 128 (left on the outer circle, right on
    # the island's, seen with the metal on the left)
    assert min(prev_of) >= 0
    assert np.allclose(np.abs(turn), 2 * np.pi / 128, rtol=1e-9)
    assert max(np.abs(turn)) < MILD_TURN_RAD


def test_band_cells_at_a_curved_edge_are_not_obtuse():
    # analytic: the P1 gradient error of a triangle grows without bound as its largest angle
    # nears 180 degrees (the maximum angle condition: I. Babuska and A. K. Aziz, SIAM J. Numer.
    # Anal. 13, 214 (1976)). Rows from the side midpoints alone, across from the vertices of a
    # polygon whose sides (19.6 nm) are within one gate_edge (20 nm), gave 168 degrees at the edge.
    import gmsh

    from qhdesign.layout.mesh3d import plane_mesh

    gmsh.initialize(interruptible=False)
    gmsh.option.setNumber("General.Terminal", 0)
    try:
        pm = plane_mesh(_ring(), edge_normal_m=6e-9, edge_band_m=140e-9, edge_first_m=1e-9)
    finally:
        gmsh.finalize()
    p = pm.xy_m[pm.triangles] * 1e9
    r = np.hypot(*p.mean(axis=1).T)
    angles = []
    for k in range(3):
        u, v = p[:, (k + 1) % 3] - p[:, k], p[:, (k + 2) % 3] - p[:, k]
        cos = np.einsum("ij,ij->i", u, v) / np.linalg.norm(u, axis=1) / np.linalg.norm(v, axis=1)
        angles.append(np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))))
    largest = np.max(angles, axis=0)
    island_side = (r > 260.0) & (r < 400.0)  # the band on the island side (measured: at most 91.4)
    assert island_side.sum() > 5000
    assert largest[island_side].max() < 100.0
