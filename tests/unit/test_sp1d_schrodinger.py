"""Warm-started (certified Rayleigh-quotient) subband solve against analytic levels and the
cold bisection solve."""

import numpy as np
from scipy import constants as sc

from qhdesign.sp1d.schrodinger import refine_subbands, solve_subbands, subband_energies

L, M = 10e-9, 0.067


def _box(n=401):
    return np.linspace(0.0, L, n)


def _exact(k):
    # analytic: infinite square well E_n = n^2 pi^2 hbar^2 / (2 m* L^2)
    n = np.arange(1, k + 1)
    return n**2 * np.pi**2 * sc.hbar**2 / (2 * M * sc.m_e * L**2)


def test_refine_from_nearby_start_matches_cold_solve():
    z = _box()
    mass = np.full(len(z) - 1, M)
    u0 = np.zeros(len(z))
    _, psi0 = solve_subbands(z, u0, mass, 3)
    # a gentle tilt (2 meV across the box) stands in for one outer iteration's change
    u1 = 2e-3 * sc.e * z / L
    got = refine_subbands(z, u1, mass, psi0)
    assert got is not None
    en, psi = got
    en_c, psi_c = solve_subbands(z, u1, mass, 3)
    # cold solve: bisection tolerance 0 (machine precision); levels to 1e-12 eV
    # (analytic residual bound |E - rho| <= ||r|| with ||r|| < 1e-12 eV)
    np.testing.assert_allclose(en / sc.e, en_c / sc.e, rtol=0, atol=1e-11)
    np.testing.assert_allclose(np.abs(psi), np.abs(psi_c), rtol=0, atol=1e-6 * np.abs(psi_c).max())
    # without the tilt the levels approach the analytic box levels (discretisation 1e-4)
    en0 = refine_subbands(z, u0, mass, psi_c)[0]
    np.testing.assert_allclose(en0, _exact(3), rtol=1e-4)


def test_refine_refuses_a_start_that_misses_the_ground_state():
    z = _box()
    mass = np.full(len(z) - 1, M)
    u = np.zeros(len(z))
    _, psi = solve_subbands(z, u, mass, 4)
    # start from levels 2..4 only: the iteration converges to them, and the Sturm count
    # (analytic: one more level lies below) must refuse the result
    assert refine_subbands(z, u, mass, psi[1:]) is None


def test_energies_only_equal_the_full_solve():
    z = _box()
    mass = np.full(len(z) - 1, M)
    u = 5e-3 * sc.e * (z / L) ** 2
    # same bisection: identical eigenvalues (common practice: LAPACK stebz is deterministic)
    np.testing.assert_array_equal(subband_energies(z, u, mass, 2), solve_subbands(z, u, mass, 2)[0])
