"""Parameter spaces produce the documented points (docs/sweeps.md, "Spaces")."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from qhdesign.sweep.spaces import GridSpace, LatinHypercubeSpace, Range, ZipSpace, latin_hypercube


def test_grid_is_full_factorial_last_parameter_fastest():
    space = GridSpace(("a", "b"), ((1.0, 2.0, 3.0), (10.0, 20.0)))
    pts = list(space)
    # documented order: itertools.product, last parameter varies fastest
    assert pts == [
        {"a": 1.0, "b": 10.0},
        {"a": 1.0, "b": 20.0},
        {"a": 2.0, "b": 10.0},
        {"a": 2.0, "b": 20.0},
        {"a": 3.0, "b": 10.0},
        {"a": 3.0, "b": 20.0},
    ]
    assert len(space) == 6
    assert list(space.corners()) == [
        {"a": 1.0, "b": 10.0},
        {"a": 1.0, "b": 20.0},
        {"a": 3.0, "b": 10.0},
        {"a": 3.0, "b": 20.0},
    ]


def test_zip_takes_the_ith_value_of_every_list():
    space = ZipSpace(("a", "b"), ((1.0, 2.0, 3.0), (7.0, 8.0, 9.0)))
    assert list(space) == [{"a": 1.0, "b": 7.0}, {"a": 2.0, "b": 8.0}, {"a": 3.0, "b": 9.0}]


def test_range_points_linear_and_log_keep_exact_ends():
    lin = Range("p", 2e-8, 4e-8).points(5)
    # analytic: evenly spaced 20, 25, 30, 35, 40 nm
    np.testing.assert_allclose(lin, [2e-8, 2.5e-8, 3e-8, 3.5e-8, 4e-8], rtol=1e-14)
    assert lin[0] == 2e-8 and lin[-1] == 4e-8
    log = Range("p", 1e15, 1e17, "log").points(3)
    # analytic: geometric mean of the ends in the middle
    np.testing.assert_allclose(log, [1e15, 1e16, 1e17], rtol=1e-12)


@pytest.mark.parametrize(("n", "d", "seed"), [(1, 1, 0), (7, 3, 1), (200, 4, 42)])
def test_latin_hypercube_puts_exactly_one_point_in_every_stratum(n, d, seed):
    u = latin_hypercube(n, d, seed)
    assert u.shape == (n, d)
    assert np.all((u >= 0) & (u < 1))
    for j in range(d):
        strata = np.floor(u[:, j] * n).astype(int)
        # definition of a Latin hypercube (McKay et al. 1979): each of the n strata once
        assert sorted(strata) == list(range(n))


def test_latin_hypercube_marginals_are_uniform_and_seeded():
    u = latin_hypercube(2000, 2, 3)
    for j in range(2):
        # Kolmogorov-Smirnov against U(0, 1) (scipy.stats.kstest); stratification makes the
        # statistic far below the 1 % critical value 1.63/sqrt(n)
        assert stats.kstest(u[:, j], "uniform").statistic < 1.63 / np.sqrt(2000)
    assert np.array_equal(u, latin_hypercube(2000, 2, 3))
    assert not np.array_equal(u, latin_hypercube(2000, 2, 4))
    # independent pairing of the strata: rank correlation consistent with zero (|rho| < 4/sqrt(n))
    assert abs(stats.spearmanr(u[:, 0], u[:, 1]).statistic) < 4 / np.sqrt(2000)


def test_latin_hypercube_space_maps_strata_onto_ranges():
    space = LatinHypercubeSpace((Range("t", 1e-8, 3e-8), Range("n", 1e15, 1e17, "log")), 50, 9)
    pts = list(space)
    t = np.array([p["t"] for p in pts])
    n = np.array([p["n"] for p in pts])
    # linear axis: one point in each of the 50 equal sub-intervals of [10, 30] nm
    assert sorted(np.floor((t - 1e-8) / (2e-8 / 50)).astype(int)) == list(range(50))
    # log axis: one point in each of the 50 equal sub-intervals of log10 n in [15, 17]
    assert sorted(np.floor((np.log10(n) - 15) / (2 / 50)).astype(int)) == list(range(50))
