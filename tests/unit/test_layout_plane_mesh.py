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
