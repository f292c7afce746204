"""Closed forms of qhdesign.interferometer against a brute-force model of the same physics.

The brute-force model takes only the energy functional of Halperin, Stern, Neder, Rosenow,
Phys. Rev. B 83, 155440 (2011) (E = K_I dn_I^2/2 + K_L dn_L^2/2 + K_IL dn_I dn_L) and the phase
bookkeeping stated in docs/interferometer.md (theta/2pi = nu B Abar_I/Phi0 + dn_I - nu N_L,
dn_L = nu (B A_L/Phi0 - N_L) - q_L(V)). It enumerates the quasiparticle number N_L, finds the
edge charge dn_I by a numerical root of dE/d(dn_I), and reads periods, jumps and the window off
the ground state by root finding. None of the closed forms is used inside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad
from scipy.optimize import brentq

from qhdesign import interferometer as itf
from qhdesign.errors import InputError

PHI0 = sc.h / sc.e
UEV = 1e-6 * sc.e
SRC_BF = "brute-force minimisation of the HSNR functional, Halperin et al., PRB 83, 155440 (2011)"


class BruteForce:
    """Ground state of the HSNR functional by enumeration over N_L (quasiholes)."""

    def __init__(self, K_I, K_L, K_IL, nu, A_I, A_L, q0=0.0, beta=0.0, dA_dV=0.0, gap=0.0):
        self.K = (K_I, K_L, K_IL)
        self.nu, self.A_I, self.A_L = nu, A_I, A_L
        self.q0, self.beta, self.dA_dV, self.gap = q0, beta, dA_dV, gap

    def dn_L(self, B, V, N):
        return self.nu * (B * self.A_L / PHI0 - N) - (self.q0 + self.beta * V)

    def edge(self, dn_L):
        """dn_I minimising E at fixed dn_L: a numerical root of the central-difference slope."""
        K_I, K_L, K_IL = self.K

        def slope(x):
            h = 1.0  # E is quadratic: the central difference is exact for any step
            e = itf.energy_J
            return (e(x + h, dn_L, K_I, K_L, K_IL) - e(x - h, dn_L, K_I, K_L, K_IL)) / (2 * h)

        span = 10.0 + 10.0 * abs(dn_L)
        return brentq(slope, -span, span, xtol=1e-15, rtol=1e-15, maxiter=500)

    def energy(self, B, V, N):
        dl = self.dn_L(B, V, N)
        di = self.edge(dl)
        return float(itf.energy_J(di, dl, *self.K)) + abs(N) * self.gap

    def ground(self, B, V=0.0, span=6):
        dl0 = (self.nu * B * self.A_L / PHI0 - self.q0 - self.beta * V) / self.nu
        n0 = round(dl0)
        if self.gap == 0:  # E is a parabola in N around n0
            Ns = range(n0 - span, n0 + span + 1)
        else:  # the gap can hold N anywhere between 0 and n0
            Ns = range(min(n0, 0) - span, max(n0, 0) + span + 1)
        return min(Ns, key=lambda N: self.energy(B, V, N))

    def phase(self, B, V=0.0, N=None):
        """theta / 2 pi of the state with N_L = N (ground state if None)."""
        if N is None:
            N = self.ground(B, V)
        Abar = self.A_I + self.dA_dV * V
        di = self.edge(self.dn_L(B, V, N))
        return self.nu * B * Abar / PHI0 + di - self.nu * N


# Island figures of the size the island stage gives (order of magnitude; the check is exact
# algebra, not these numbers): R ~ 0.8 um, K_I ~ 70 ueV.
A = math.pi * (0.8e-6) ** 2
CASES = [
    (70 * UEV, 40 * UEV, 5 * UEV, 1 / 3, A, A),
    (70 * UEV, 60 * UEV, 30 * UEV, 1 / 3, A, 0.85 * A),
    (20 * UEV, 25 * UEV, 3 * UEV, 1.0, A, 0.9 * A),
    (50 * UEV, 45 * UEV, 20 * UEV, 1 / 5, 1.3 * A, 1.1 * A),
]


@pytest.mark.parametrize("case", CASES)
def test_incompressible_period_matches_brute_force(case, record_check):
    K_I, _, K_IL, nu, A_I, A_L = case
    B0 = 5.0
    # background charge q0 centres dn_L near 0 at B0 (keeps the numbers O(1))
    bf = BruteForce(*case, q0=nu * B0 * A_L / PHI0)
    p0 = bf.phase(B0, N=0)
    guess = itf.period_incompressible_T(A_I, K_IL / K_I, nu, A_L)
    P = brentq(lambda P: bf.phase(B0 + P, N=0) - p0 - 1.0, 0.5 * guess, 2 * guess, xtol=1e-18)
    # analytic reference: the brute-force period at fixed N_L (HSNR 2011 functional)
    record_check(
        f"incompressible flux period, nu = {nu:.3g}, K_IL/K_I = {K_IL / K_I:.3g}, "
        f"A_L/A_I = {A_L / A_I:.3g}",
        "brute-force minimisation of the energy functional of Halperin, Stern, Neder, Rosenow, "
        "Phys. Rev. B 83, 155440 (2011) (docs/derivations.md §11)",
        guess,
        P,
        1e-9,
    )
    assert P == pytest.approx(guess, rel=1e-9)


@pytest.mark.parametrize("case", [c for c in CASES if c[4] == c[5]])
def test_compressible_period_matches_brute_force(case, record_check):
    A_I = case[4]
    bf = BruteForce(*case)
    P = itf.period_compressible_T(A_I)
    devs = []
    for B in np.linspace(4.0, 4.0 + 7.3 * P, 23):
        d = bf.phase(B + P) - bf.phase(B)  # ground states (quasiparticles enter freely)
        devs.append(abs(d - round(d)))
    record_check(
        "compressible period Phi0/A_I: phase change per period minus an integer (2 pi units)",
        SRC_BF,
        max(devs),
        0.0,
        1e-9,
        kind="abs",
    )
    assert max(devs) < 1e-9
    # and it is the smallest period: half of it is not one
    ds = [bf.phase(B + P / 2) - bf.phase(B) for B in np.linspace(4.0, 4.0 + 3 * P, 11)]
    assert max(abs(d - round(d)) for d in ds) > 0.1


@pytest.mark.parametrize("case", [c for c in CASES if c[4] != c[5]])
def test_compressible_general_decomposition(case):
    """theta - nu B (A_I - A_L)/Phi0 is periodic in B with period Phi0/A_L: the fundamental
    harmonic is then at nu (A_I - A_L)/Phi0 + A_L/Phi0 (the closed form)."""
    nu, A_I, A_L = case[3:]
    bf = BruteForce(*case)
    PL = PHI0 / A_L
    for B in np.linspace(4.0, 4.0 + 5.1 * PL, 17):
        g = lambda b: bf.phase(b) - nu * b * (A_I - A_L) / PHI0  # noqa: E731
        d = g(B + PL) - g(B)
        assert abs(d - round(d)) < 1e-9
    f1 = nu * (A_I - A_L) / PHI0 + A_L / PHI0
    period = 1 / f1
    assert period == pytest.approx(itf.period_compressible_general_T(A_I, A_L, nu), rel=1e-12)


@pytest.mark.parametrize("case", CASES)
def test_window_and_jump_match_brute_force(case, record_check):
    K_I, K_L, K_IL, nu, _, A_L = case
    gap = 30 * UEV
    bf = BruteForce(*case, gap=gap)
    EC = itf.charging_energy_J(K_I, K_L, K_IL)
    W = itf.window_T(A_L, nu, gap, EC)
    # centre of the N_L = 0 window: dn_L = 0 at B = 0 with q0 = 0; find both ends by roots of
    # E(0) - E(+-1) (quasiholes at the upper end, quasielectrons at the lower end)
    up = brentq(lambda B: bf.energy(B, 0, 0) - bf.energy(B, 0, 1), 0.0, 3 * W, xtol=1e-18)
    lo = brentq(lambda B: bf.energy(B, 0, 0) - bf.energy(B, 0, -1), -3 * W, 0.0, xtol=1e-18)
    record_check(
        f"fixed-filling window, nu = {nu:.3g}, gap 30 ueV",
        "brute-force ground state of the energy functional of Halperin et al., Phys. Rev. B 83, "
        "155440 (2011), window idea of Rosenow & Stern, Phys. Rev. Lett. 124, 106805 (2020)",
        W,
        up - lo,
        1e-9,
    )
    assert up - lo == pytest.approx(W, rel=1e-9)
    # N_L = 0 is the ground state inside, and a neighbour just outside
    for B in np.linspace(lo, up, 9)[1:-1]:
        assert bf.ground(B) == 0
    assert bf.ground(up * (1 + 1e-6) + 1e-12) == 1
    assert bf.ground(lo * (1 + 1e-6) - 1e-12) == -1
    # the jump at the upper edge, same field, N_L 0 -> 1
    jump = bf.phase(up, N=1) - bf.phase(up, N=0)
    ref = itf.phase_jump_rad(nu, K_IL / K_I)
    record_check(
        "phase jump 2 pi nu (1 - r)", SRC_BF, ref, abs(2 * math.pi * jump), 1e-9, unit="rad"
    )
    assert abs(2 * math.pi * jump) == pytest.approx(ref, rel=1e-9)


def test_thermal_window_matches_brute_force_average(record_check):
    """P(N_L = 0) from the full Boltzmann sum over N_L in [-8, 8], integrated over B, against
    the two-edge closed form. Neglected: weights of |N_L| >= 2 at the edges, relative to
    |N_L| = 1 below exp(-2 E_C nu^2 / k_B T) = exp(-44) here (analytic: E_2 - E_1 = 2 E_C nu^2
    at the window's edge)."""
    K_I, K_L, K_IL, nu, A_I, A_L = CASES[0]
    gap, T = 30 * UEV, 0.001
    bf = BruteForce(K_I, K_L, K_IL, nu, A_I, A_L, gap=gap)
    EC = itf.charging_energy_J(K_I, K_L, K_IL)
    W = itf.window_T(A_L, nu, gap, EC)

    def p0(B):
        E = np.array([bf.energy(B, 0, N) for N in range(-8, 9)])
        w = np.exp(-(E - E.min()) / (sc.k * T))
        return w[8] / w.sum()

    integral = quad(
        p0, -2 * W, 2 * W, epsabs=1e-16, epsrel=1e-11, limit=400, points=[-W / 2, W / 2]
    )
    closed = itf.window_thermal_T(A_L, nu, gap, EC, T)
    record_check(
        "thermal window W/(1 - exp(-W/w))",
        "Boltzmann sum over N_L of the HSNR functional (Halperin et al., PRB 83, 155440 (2011))",
        closed,
        integral[0],
        1e-8,
        unit="T",
    )
    assert integral[0] == pytest.approx(closed, rel=1e-8)
    for b in (-0.6 * W, -W / 2, 0.0, 0.45 * W, W / 2, 0.55 * W):
        assert p0(b) == pytest.approx(itf.window_occupation(b, A_L, nu, gap, EC, T), abs=1e-9)
    # the P0 = 1/2 points are the T = 0 window ends
    assert brentq(lambda b: p0(b) - 0.5, 0, W, xtol=1e-16) == pytest.approx(W / 2, rel=1e-9)


def test_gate_periods_and_slope_signs_match_brute_force(record_check):
    K_I, K_L, K_IL, nu, A_I, A_L = CASES[0]
    B = 6.0
    # AB (no coupling): phase at fixed N_L against V
    dA = 2e-14  # m^2/V (order of a plunger's lever arm on the area)
    bf = BruteForce(K_I, K_L, 0.0, nu, A_I, A_L, dA_dV=dA)
    p0 = bf.phase(B, 0.0, N=0)
    PV = itf.period_gate_ab_V(nu, B, dA)
    got = brentq(lambda V: bf.phase(B, V, N=0) - p0 - 1, 0.5 * PV, 2 * PV, xtol=1e-18)
    record_check("AB gate period (e/e*) Phi0/(B dA/dV)", SRC_BF, PV, got, 1e-9, unit="V")
    assert got == pytest.approx(PV, rel=1e-9)
    # constant-phase line through (B, 0): V(B + dB) by root finding, slope vs closed form
    dB = 1e-4
    V1 = brentq(lambda V: bf.phase(B + dB, V, N=0) - p0, -1, 1, xtol=1e-18)
    slope = V1 / dB
    ref = itf.constant_phase_slope_V_per_T("AB", field_T=B, A_I_m2=A_I, dA_dV_m2_per_V=dA)
    assert slope < 0 and ref < 0
    # the AB line is not straight in (B, V) (1/B in the slope): compare at first order in dB
    assert slope == pytest.approx(ref, rel=2 * dB / B)
    # CD: charge degeneracies of the bulk (gap 0), gate lever arm C_gL = e beta
    C_gL = 5e-17  # F
    bf = BruteForce(K_I, K_L, K_IL, nu, A_I, A_L, beta=C_gL / sc.e)

    def degeneracy(V, N):
        return bf.energy(B, V, N) - bf.energy(B, V, N + 1)

    N0 = bf.ground(B, 0.0)
    v1 = brentq(lambda V: degeneracy(V, N0), -0.1, 0.1, xtol=1e-18)
    v2 = brentq(lambda V: degeneracy(V, N0 - 1), v1 + 1e-9, v1 + 0.1, xtol=1e-18)
    ref = itf.period_gate_cd_V(nu, C_gL)
    record_check("CD gate period e*/C_gL", SRC_BF, ref, abs(v1 - v2), 1e-9, unit="V")
    assert abs(v1 - v2) == pytest.approx(ref, rel=1e-9)
    # slope of the degeneracy line in (B, V)
    v1b = brentq(lambda V: bf.energy(B + dB, V, N0) - bf.energy(B + dB, V, N0 + 1), -0.1, 0.1)
    ref = itf.constant_phase_slope_V_per_T(
        "CD", filling=nu, A_L_m2=A_L, bulk_gate_capacitance_F=C_gL
    )
    assert ref > 0
    assert (v1b - v1) / dB == pytest.approx(ref, rel=1e-6)


def test_visibility_is_the_fermi_average(record_check):
    """x/sinh x = integral of -df/de cos(e tau/hbar) (analytic; checked by quadrature)."""
    v, L, T = 2e4, 2 * math.pi * 0.8e-6, 0.020
    T0 = itf.thermal_scale_K(v, L)
    tau = L / v
    kT = sc.k * T

    def mdf(e):
        return 1.0 / (4 * kT * math.cosh(e / (2 * kT)) ** 2)

    num = quad(lambda e: mdf(e) * math.cos(e * tau / sc.hbar), -60 * kT, 60 * kT, limit=800)[0]
    vis = itf.visibility(T, T0)
    record_check(
        "thermal damping x/sinh x, x = pi k_B T L/(hbar v)",
        "analytic: integral of -df/de cos(e tau/hbar) (scipy quad)",
        vis,
        num,
        1e-9,
    )
    assert num == pytest.approx(vis, rel=1e-9)


GRID = [0.3, 0.7, 1.0, 2.5]


@pytest.mark.parametrize("s", GRID)
@pytest.mark.parametrize("nu", [1.0, 1 / 3, 1 / 5])
def test_inverses_invert_forward_functions(s, nu):
    A_I = s * A
    assert itf.area_from_period_compressible_m2(itf.period_compressible_T(A_I)) == pytest.approx(
        A_I, rel=1e-12
    )
    for r in (0.0, 0.05, 0.3, 0.6):
        for rho in (0.8, 1.0):
            dc = itf.period_compressible_T(A_I)
            di = itf.period_incompressible_T(A_I, r, nu, rho * A_I)
            assert itf.ratio_from_periods(dc, di, nu, rho) == pytest.approx(r, abs=1e-12)
        jump = itf.phase_jump_rad(nu, r)
        assert itf.anyonic_phase_from_jump_rad(jump, r) == pytest.approx(
            2 * math.pi * nu, rel=1e-12
        )
    EC = s * 10 * UEV
    for gap in (1 * UEV, 40 * UEV, 300 * UEV):
        W = itf.window_T(A_I, nu, gap, EC)
        assert itf.gap_from_window_J(W, A_I, nu, EC) == pytest.approx(gap, rel=1e-12)
    for B in (1.0, 5.5):
        dA = s * 1e-14
        P = itf.period_gate_ab_V(nu, B, dA)
        assert itf.dA_dV_from_period_gate_m2_per_V(nu, B, P) == pytest.approx(dA, rel=1e-12)
    T0 = s * 0.05
    for T in (0.001, 0.02, 0.1, 0.4):
        vis = itf.visibility(T, T0)
        assert itf.temperature_from_visibility_K(vis, T0) == pytest.approx(T, rel=1e-12)


def test_propagation_agrees_with_monte_carlo():
    """First-order propagation vs a seeded Monte Carlo of the inputs (within 5 %)."""
    nu = 1 / 3
    dc, di = itf.period_compressible_T(A), itf.period_incompressible_T(A, 0.12, nu)
    jump = itf.phase_jump_rad(nu, 0.12)
    vals = {"dc": dc, "di": di, "jump": jump}
    sig = {"dc": 0.01 * dc, "di": 0.015 * di, "jump": 0.05 * jump}

    def r(dc, di, jump):
        return itf.ratio_from_periods(dc, di, nu)

    def theta(dc, di, jump):
        return itf.anyonic_phase_from_jump_rad(jump, itf.ratio_from_periods(dc, di, nu))

    rng = np.random.default_rng(20261202)
    n = 200_000
    s = {k: vals[k] + sig[k] * rng.standard_normal(n) for k in vals}
    r_mc = 1 - s["dc"] / (nu * s["di"])  # analytic: r = 1 - (e/e*) dB_comp/dB_inc, A_L = A_I
    th_mc = s["jump"] / (1 - r_mc)
    for f, mc in ((r, r_mc), (theta, th_mc)):
        _, sd = itf.propagate(f, vals, sig)
        assert sd == pytest.approx(float(np.std(mc)), rel=0.05)


def test_window_reduces_to_its_limits():
    # Delta_qp -> 0: the window is Phi0/A_L (one flux quantum through the bulk: the e*/e term)
    assert itf.window_T(A, 1 / 3, 0.0, 10 * UEV) == pytest.approx(PHI0 / A, rel=1e-15)
    assert itf.quasiparticle_gap_J(100 * UEV, "activation") == pytest.approx(50 * UEV)
    assert itf.energy_to_kelvin(sc.k * 0.25) == pytest.approx(0.25, rel=1e-15)


def test_regime_verdict_and_bad_input():
    assert itf.regime(0.05) == "AB"
    assert itf.regime(0.5) == "crossover"
    assert itf.regime(0.95) == "CD"
    with pytest.raises(InputError):
        itf.check_filling(2 / 5)  # not Laughlin
    with pytest.raises(InputError):
        itf.period_incompressible_T(A, 1.2, 1 / 3)  # A_I - r A_L < 0
    with pytest.raises(InputError):
        itf.quasiparticle_gap_J(1e-23, "transport")
