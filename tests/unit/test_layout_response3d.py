"""The island's strip in the plane (qhdesign.layout.response3d.strip_geometry), pure numpy.

A radially symmetric potential on a polar triangulation: the construction must give the disk
values of the axisymmetric island stage, A_L = pi (r_c + a/2)^2, A_edge = pi r_e^2,
L_in = 2 pi (r_c + a/2), A_I = pi ((r_c + a/2 + r_e)/2)^2 (analytic: Steiner's parallel-curve
formula on a circle; elementary geometry), and the conductor's nodes must be the rings nearest to
the two radii (the nearest-node rule of qhdesign.island.response).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy.spatial import Delaunay

from qhdesign.layout.response3d import strip_geometry
from qhdesign.section.profile import strip_width

R0 = 301e-9  # the linear density reaches zero here
DOS = 0.067 * sc.m_e / (math.pi * sc.hbar**2)  # GaAs m*/(pi hbar^2)
KT = sc.k * 0.05
N_BULK = 1.0e15
ENERGY_EV = 0.0
EPS_R = 12.9
GAP = 3 * 120e-6 * sc.e


def polar_mesh(dr=3e-9, ds=6e-9, rmax=330e-9):
    pts = [(0.0, 0.0)]
    for r in np.arange(dr, rmax + 0.5 * dr, dr):
        n = max(6, math.ceil(2 * math.pi * r / ds))
        th = np.arange(n) * 2 * math.pi / n
        pts += list(zip(r * np.cos(th), r * np.sin(th), strict=True))
    xy = np.array(pts)
    return xy, Delaunay(xy).simplices


def test_strip_of_a_radial_profile_is_the_disk_construction():
    xy, tri = polar_mesh()
    rho = np.hypot(xy[:, 0], xy[:, 1])
    # e (phi - E) = alpha (R0 - rho): the density falls linearly to zero at R0
    alpha = N_BULK / (DOS * R0)  # J/m
    phi = ENERGY_EV + alpha * (R0 - rho) / sc.e
    n = DOS * KT * np.logaddexp(0.0, alpha * (R0 - rho) / KT)
    field = 0.5 * N_BULK * sc.h / sc.e  # n_nu = n_bulk / 2 at filling 1
    geom, masks = strip_geometry(
        xy,
        tri,
        phi,
        n,
        energy_eV=ENERGY_EV,
        dos_J_m2=DOS,
        kT_J=KT,
        bulk_density_m2=N_BULK,
        seed_m=(0.0, 0.0),
        constrictions=(),
        field_T=field,
        filling=1.0,
        strip_gap_J=GAP,
        eps_r=EPS_R,
    )
    g = DOS * alpha  # |dn/drho| (m^-3)
    a = strip_width(EPS_R, GAP, g)
    r_c = 0.5 * R0
    r_in = r_c + 0.5 * a
    r_e = R0 * (1 - 0.01)  # 1 % of the bulk density (kT << alpha * 1 nm)
    assert not geom.pinned_to_fall and geom.closed
    # the P1 gradient of a radial function on triangles that span 3 nm of radius and ~6 nm of arc
    # differs from the radial derivative at second order in the arc (measured 0.2 %)
    assert geom.density_gradient_m3 == pytest.approx(g, rel=5e-3)
    assert geom.incompressible_width_m == pytest.approx(a, rel=3e-3)
    assert geom.A_L_m2 == pytest.approx(math.pi * r_in**2, rel=1e-3)
    assert geom.inner_length_m == pytest.approx(2 * math.pi * r_in, rel=1e-3)
    assert geom.A_edge_m2 == pytest.approx(math.pi * r_e**2, rel=1e-3)
    assert geom.A_I_m2 == pytest.approx(math.pi * (0.5 * (r_in + r_e)) ** 2, rel=1e-3)
    assert geom.perimeter_m == pytest.approx(math.pi * (r_in + r_e), rel=1e-3)
    # conductor: the rings nearest to r_in and r_e and everything between; bulk inside
    rings = np.unique(np.round(rho, 12))
    ring_in = rings[np.argmin(np.abs(rings - r_in))]
    ring_e = rings[np.argmin(np.abs(rings - r_e))]
    I, L = masks["I"], masks["L"]
    expect_I = (rho >= ring_in - 1e-12) & (rho <= ring_e + 1e-12)
    assert np.array_equal(I, expect_I)
    assert np.array_equal(L, rho < ring_in - 1e-12)


def test_conductor_node_rule_is_nearest_node_across_the_boundary(record_check):
    """A node short of the inner boundary joins the conductor only when it is nearer to the
    boundary than every conductor node it shares an edge with (the nearest-node rule; source:
    elementary geometry, the radial grid's snapping in qhdesign.island.response).

    Nodes (signed distance beyond the inner boundary, nm): v at -4 with two core neighbours, u at
    +10 (a long oblique edge) and w at +1. The nearest node across is w (1 nm < 4 nm): v stays
    out. With w at +6 instead, v (4 nm short) is the nearer and joins.
    """
    from qhdesign.layout.response3d import _conductor_nodes

    tri = np.array([[0, 1, 2], [0, 2, 3]])  # v=0, u=1, w=2, x=3 (deep inside L)
    island = np.ones(4, dtype=bool)
    s_out = np.full(4, -20e-9)
    s_in = np.array([-4e-9, 10e-9, 1e-9, -30e-9])
    got = _conductor_nodes(tri, island, s_in, s_out)
    assert got.tolist() == [False, True, True, False]
    s_in[2] = 6e-9
    got = _conductor_nodes(tri, island, s_in, s_out)
    record_check(
        "conductor node rule: a node 4 nm short joins when every neighbour across is farther",
        "elementary geometry (nearest-node snapping of a boundary)",
        float(got[0]),
        1.0,
        0.0,
        kind="abs",
    )
    assert got.tolist() == [True, True, True, False]


def test_curvature_adapted_rows_keep_the_area_of_a_circle():
    """Analytic (elementary geometry): the polygon through N equally spaced points of a circle of
    radius R encloses (N/2) R^2 sin(2 pi/N); with the chord rule h^2/(12 R) <= delta, its
    area-equivalent radius is within delta of R, and a uniform 40 nm sampling is not."""
    from qhdesign.layout.response3d import _resample_closed, _sample_closed

    R, delta = 250e-9, 0.1e-9
    th = np.linspace(0.0, 2 * np.pi, 4000, endpoint=False)
    circle = np.column_stack([R * np.cos(th), R * np.sin(th)])

    def eq_radius(p):
        x, y = p[:, 0], p[:, 1]
        return math.sqrt(0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))) / math.pi)

    fine = _sample_closed(circle, 40e-9, 160e-9, delta)
    n = len(fine)
    assert n >= 2 * math.pi * R / math.sqrt(12 * delta * R)
    assert R - eq_radius(fine) <= delta
    assert eq_radius(fine) == pytest.approx(
        R * math.sqrt(n * math.sin(2 * math.pi / n) / (2 * math.pi)), rel=1e-6
    )
    coarse = _resample_closed(circle, 40e-9)
    assert R - eq_radius(coarse) > 4 * delta  # the 0.5 nm shift the rule removes
    # a straight stretch keeps the row spacing: an elongated ellipse gets both spacings
    ell = np.column_stack([600e-9 * np.cos(th), 150e-9 * np.sin(th)])
    s = _sample_closed(ell, 40e-9, 160e-9, delta)
    d = np.linalg.norm(np.diff(np.vstack([s, s[:1]]), axis=0), axis=1)
    assert d.max() <= 40e-9 * 1.01 and d.min() < 10e-9
