"""SheetLaw (qhdesign.sheetlaw) and the isotonic smoothing of 1D tables (qhdesign.pipeline).

References: scipy's PchipInterpolator (Fritsch & Carlson, SIAM J. Numer. Anal. 17, 238 (1980))
for the interpolant and its derivative; scipy.optimize (SLSQP) for the least-squares isotonic
fit on small random sequences (pool adjacent violators must find the same optimum: Barlow et al.,
Statistical Inference under Order Restrictions, Wiley 1972, ch. 1).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator
from scipy.optimize import minimize

from qhdesign.errors import InputError
from qhdesign.pipeline import _isotonic
from qhdesign.sheetlaw import SheetLaw

X = np.linspace(-0.02, 0.03, 26)
N = 1e15 * np.logaddexp(0.0, X / 0.004)


def test_density_and_slope_are_scipy_pchip_inside():
    law = SheetLaw(X, N)
    p = PchipInterpolator(X, N)
    xs = np.linspace(X[0], X[-1], 997)
    assert np.allclose(law.density(xs), p(xs), rtol=1e-14, atol=0)
    assert np.allclose(law.slope(xs), p.derivative()(xs), rtol=1e-12, atol=1e3)


def test_outside_the_knots_flat_below_linear_above():
    law = SheetLaw(X, N)
    assert law.density(-1.0) == N[0]
    assert law.slope(-1.0) == 0.0
    s = law.top_slope
    assert law.density(X[-1] + 0.01) == pytest.approx(N[-1] + s * 0.01, rel=1e-14)
    assert law.slope(1.0) == s


def test_inverse_round_trip_inside_and_above():
    law = SheetLaw(X, N)
    for n in (N[3] * 1.01, N[12], 0.5 * (N[20] + N[21]), 2 * N[-1]):
        assert law.density(law.inverse(n)) == pytest.approx(n, rel=1e-10)


def test_reported_scales_with_the_charge_and_inverts():
    rep = 0.95 * N
    law = SheetLaw(X, N, reported_m2=rep)
    xs = np.linspace(X[0], X[-1] + 0.01, 50)
    assert np.allclose(law.reported(xs), 0.95 * law.density(xs), rtol=1e-12)
    n = 0.95 * N[15]
    assert law.reported(law.inverse_reported(n)) == pytest.approx(n, rel=1e-10)


@pytest.mark.parametrize(
    "x,n",
    [
        (np.array([0.0, 0.0, 1.0]), np.array([0.0, 1.0, 2.0])),  # repeated knot
        (np.array([0.0, 1.0, 2.0]), np.array([0.0, 2.0, 1.0])),  # falling density
        (np.array([0.0, 1.0]), np.array([-1.0, 1.0])),  # negative density
        (np.array([0.0]), np.array([1.0])),  # one knot
    ],
)
def test_bad_tables_are_refused(x, n):
    with pytest.raises(InputError):
        SheetLaw(x, n)


def test_isotonic_matches_a_constrained_least_squares_solve():
    rng = np.random.default_rng(7)
    for _ in range(20):
        y = np.cumsum(rng.normal(0.2, 1.0, size=8))
        got = _isotonic(y)
        assert np.all(np.diff(got) >= -1e-12)
        cons = [{"type": "ineq", "fun": (lambda z, i=i: z[i + 1] - z[i])} for i in range(7)]
        ref = minimize(
            lambda z, y=y: np.sum((z - y) ** 2),
            np.sort(y),
            constraints=cons,
            method="SLSQP",
            options={"ftol": 1e-14, "maxiter": 500},
        )
        assert np.sum((got - y) ** 2) <= ref.fun + 1e-8
        assert np.allclose(got, ref.x, atol=1e-4)
