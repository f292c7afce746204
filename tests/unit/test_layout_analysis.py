"""Island area, outline and constriction profiles on P1 density maps, against exact results for
fields whose level sets are straight lines (analytic: the P1 interpolant of a linear field is the
field itself, so the superlevel set is a half-plane and its area is elementary geometry)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from qhdesign.layout.analysis import clip_by_values, constriction_profile, island_shape


def _square_mesh(n: int, size: float = 1.0):
    x = np.linspace(-size, size, n + 1)
    X, Y = np.meshgrid(x, x)
    xy = np.column_stack((X.ravel(), Y.ravel()))
    idx = np.arange((n + 1) ** 2).reshape(n + 1, n + 1)
    a, b, c, d = idx[:-1, :-1], idx[:-1, 1:], idx[1:, 1:], idx[1:, :-1]
    tri = np.concatenate(
        (np.stack((a, b, c), -1).reshape(-1, 3), np.stack((a, c, d), -1).reshape(-1, 3))
    )
    return xy, tri


def test_clip_by_values_half_square():
    sq = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    p, v = clip_by_values(sq, np.array([-1.0, 1.0, 1.0, -1.0]))  # keeps x >= 1/2
    x, y = p[:, 0], p[:, 1]
    area = 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))
    assert area == pytest.approx(0.5)  # analytic
    assert np.all(v >= 0)


@pytest.mark.parametrize("n", [7, 20])
def test_area_of_linear_field_is_exact(n):
    # n(x, y) = bulk * (0.5 + 0.3 (x + 0.4 y)): n >= bulk/2 where x + 0.4 y >= 0, a half-plane
    # through the centre of the square [-1, 1]^2: area 2 exactly (analytic), on any mesh
    xy, tri = _square_mesh(n)
    bulk = 1e15
    dens = bulk * (0.5 + 0.3 * (xy[:, 0] + 0.4 * xy[:, 1]))
    shape = island_shape(xy, tri, dens, bulk, seed_m=(0.9, 0.0))
    assert shape.area_m2 == pytest.approx(2.0, rel=1e-12)
    # every outline point lies on the line x + 0.4 y = 0
    pts = shape.outline_m.reshape(-1, 2)
    assert np.max(np.abs(pts[:, 0] + 0.4 * pts[:, 1])) < 1e-12


def test_cut_line_closes_the_island():
    # uniform density everywhere; a constriction path from (0.2, 0) to (0.6, 0) cuts at x = 0.4:
    # the island is x <= 0.4 of the square: area 2 * 1.4 = 2.8 (analytic)
    xy, tri = _square_mesh(10)
    dens = np.full(len(xy), 1e15)
    c = SimpleNamespace(path_m=((0.2, 0.0), (0.6, 0.0)))
    shape = island_shape(xy, tri, dens, 1e15, seed_m=(0.0, 0.0), constrictions=[c])
    assert shape.area_m2 == pytest.approx(2.8, rel=1e-12)


def test_disconnected_region_is_not_counted():
    # density high in two bands |x| > 0.5, zero between: the seed's band only (area 0.5 * 2 = 1)
    xy, tri = _square_mesh(20)
    dens = np.where(np.abs(xy[:, 0]) >= 0.5 - 1e-12, 1.0, 0.0) * 1e15
    shape = island_shape(xy, tri, dens, 1e15, seed_m=(0.8, 0.0))
    # P1 on cells of 0.1: the half-density line sits half a cell into the gap, at x = 0.45,
    # so the band is 0.55 wide and 2 high (analytic)
    assert shape.area_m2 == pytest.approx(2 * 0.55, rel=1e-12)


def test_profile_of_linear_field():
    xy, tri = _square_mesh(9)
    vals = 3.0 * xy[:, 0] - 2.0 * xy[:, 1] + 1.0
    s, prof = constriction_profile(xy, tri, vals, ((-0.5, -0.5), (0.5, 0.7)), samples=31)
    t = s / s[-1]
    x, y = -0.5 + t, -0.5 + 1.2 * t
    assert np.allclose(prof, 3 * x - 2 * y + 1, atol=1e-12)  # analytic: P1 reproduces linear
