"""Disorder estimate (qhdesign.sp1d.scattering) against analytic limits and published forms.

Every check value names its source. The remote-donor asymptote and the tau_t/tau_q limit are
derived in docs/disorder.md from the same golden-rule integrals (sections 3-4); the code
evaluates those integrals numerically, with form factors computed from a density profile, so
the checks test quadrature, form factors and screening together.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy.integrate import quad

from qhdesign.sp1d.scattering import (
    WellProfile,
    angular_nodes,
    fermi_wavevector,
    level_broadening,
    lifetimes,
    thomas_fermi_wavevector,
    well_scattering,
)

M_GAAS = 0.067  # GaAs conduction-band mass (Adachi, J. Appl. Phys. 58, R1 (1985))
EPS_GAAS = 12.9  # GaAs static permittivity (same source)


def delta_profile(sigma=0.02e-9, h=0.002e-9):
    """A normalised Gaussian of width sigma at z = 0: a delta-like 2DEG."""
    z = np.arange(-8 * sigma, 8 * sigma + h / 2, h)
    rho = np.exp(-0.5 * (z / sigma) ** 2)
    return WellProfile(float(z[0]), h, rho / (h * (rho.sum() - 0.5 * (rho[0] + rho[-1]))))


def fang_howard(b, h_frac=0.005, extent=40.0):
    """Fang-Howard |psi|^2 = (b^3/2) z^2 exp(-b z), z >= 0, on a fine uniform grid."""
    h = h_frac / b
    z = np.arange(0.0, extent / b, h)
    rho = 0.5 * b**3 * z**2 * np.exp(-b * z)
    return WellProfile(0.0, h, rho)


def remote_mobility(d, n, n_r, q_s, profile=None):
    """Remote sheet n_r at distance d from a delta-like 2DEG. The screening wavevector q_s is
    set through the mass (q_s = e^2 m* / (2 pi eps hbar^2) is proportional to m*): the
    asymptote below holds for the physical q_s of the mass, and does not depend on m*."""
    prof = profile or delta_profile()
    mass = M_GAAS * q_s / thomas_fermi_wavevector(M_GAAS, EPS_GAAS)
    return well_scattering(
        prof,
        sheet_density_m2=n,
        mass_rel=mass,
        permittivity_rel=EPS_GAAS,
        sheets={"remote": (np.array([-d]), np.array([n_r]))},
    )


def asymptote(d, n, n_r):
    """mu = (8 e / (pi hbar)) (k_F d)^3 / n_R: large-spacer, strong-screening limit of remote
    scattering (analytic: derived in docs/disorder.md, section 4, from the golden-rule integral;
    the same closed form is given in J. H. Davies, The Physics of Low-Dimensional Semiconductors
    (Cambridge, 1998), ch. 9 -- from memory, the page could not be retrieved to confirm)."""
    return 8 * sc.e / (math.pi * sc.hbar) * (fermi_wavevector(n) * d) ** 3 / n_r


ASYMPTOTE_SOURCE = (
    "analytic large-spacer limit mu = (8e/(pi hbar)) (k_F d)^3 / N_R, docs/disorder.md section 4 "
    "(the closed form of Davies 1998 ch. 9, from memory)"
)


@pytest.mark.parametrize("kfd", [5.0, 7.0, 10.0, 20.0])
def test_remote_asymptote_prefactor(kfd, record_check):
    n, n_r = 3e15, 1e16  # 3e11 and 1e12 cm^-2
    d = kfd / fermi_wavevector(n)
    # strong screening (q_s d = 1000): the asymptote's assumption q_s >> 1/d; the asymptote
    # does not depend on q_s, m* or eps
    w = remote_mobility(d, n, n_r, q_s=1000.0 / d)
    record_check(
        f"disorder: remote sheet, delta-like 2DEG, q_s d = 1000: mu at k_F d = {kfd:g}",
        ASYMPTOTE_SOURCE,
        w.mobility_m2_per_Vs,
        asymptote(d, n, n_r),
        0.02,
    )
    assert w.mobility_m2_per_Vs == pytest.approx(asymptote(d, n, n_r), rel=0.02)


def test_remote_log_log_slopes(record_check):
    n, n_r = 3e15, 1e16
    kf = fermi_wavevector(n)
    ds = np.geomspace(5.0, 40.0, 6) / kf
    mu = [remote_mobility(d, n, n_r, q_s=1000.0 / ds[0]).mobility_m2_per_Vs for d in ds]
    slope_d = np.polyfit(np.log(ds), np.log(mu), 1)[0]
    record_check(
        "disorder: log-log slope of mu against d, k_F d = 5...40", ASYMPTOTE_SOURCE, slope_d, 3.0,
        0.05, kind="abs",
    )  # fmt: skip
    assert slope_d == pytest.approx(3.0, abs=0.05)  # mu ~ d^3 (asymptote above)
    d = 20.0 / kf
    ns = np.geomspace(1e15, 8e15, 5)
    mu_n = [remote_mobility(d, x, n_r, q_s=1000.0 / d).mobility_m2_per_Vs for x in ns]
    slope_n = np.polyfit(np.log(ns), np.log(mu_n), 1)[0]
    record_check(
        "disorder: log-log slope of mu against n at k_F d = 20", ASYMPTOTE_SOURCE, slope_n, 1.5,
        0.05, kind="abs",
    )  # fmt: skip
    assert slope_n == pytest.approx(1.5, abs=0.05)  # mu ~ n^{3/2} (asymptote above)


def test_remote_slope_with_gaas_screening_tends_to_three(record_check):
    # real GaAs q_s = 2/a_B* ~ 2e8 m^-1 (Ando, Fowler, Stern, RMP 54, 437 (1982)): the d^3 law holds
    # once q_s d >> 1; between 1 and 3 um the local slope is within 2 % of 3
    n, n_r = 3e15, 1e16
    q_s = thomas_fermi_wavevector(M_GAAS, EPS_GAAS)
    assert q_s == pytest.approx(
        2.0 / (4 * math.pi * EPS_GAAS * sc.epsilon_0 * sc.hbar**2 / (M_GAAS * sc.m_e * sc.e**2)),
        rel=1e-12,
    )
    ds = np.array([1e-6, 3e-6])
    mu = [remote_mobility(d, n, n_r, q_s=q_s).mobility_m2_per_Vs for d in ds]
    slope = np.log(mu[1] / mu[0]) / np.log(3.0)
    record_check(
        "disorder: d^3 slope with the GaAs q_s, d = 1...3 um", ASYMPTOTE_SOURCE, slope, 3.0, 0.02
    )
    assert slope == pytest.approx(3.0, rel=0.02)


def test_ratio_grows_with_spacer_remote(record_check):
    # Das Sarma and Stern, Phys. Rev. B 32, 8442 (1985): for remote impurities tau_t/tau_q
    # exceeds 1 and grows with the spacer (small-angle scattering dominates); strong-screening
    # large-d limit tau_t/tau_q -> (2 k_F d)^2 (docs/disorder.md, section 4)
    n, n_r = 3e15, 1e16
    kf = fermi_wavevector(n)
    q_s = thomas_fermi_wavevector(M_GAAS, EPS_GAAS)
    ratios = []
    for d in (2e-9, 5e-9, 10e-9, 20e-9, 40e-9, 80e-9):
        w = remote_mobility(d, n, n_r, q_s=q_s)
        ratios.append(w.transport_lifetime_s / w.quantum_lifetime_s)
    assert ratios[0] > 1.0
    assert all(b > a for a, b in itertools.pairwise(ratios))
    d = 20.0 / kf
    w = remote_mobility(d, n, n_r, q_s=1000.0 / d)
    ratio = w.transport_lifetime_s / w.quantum_lifetime_s
    record_check(
        "disorder: tau_t/tau_q of a remote sheet at k_F d = 20, q_s d = 1000",
        "analytic large-spacer limit (2 k_F d)^2 (docs/disorder.md section 4); growth with the "
        "spacer: Das Sarma and Stern, Phys. Rev. B 32, 8442 (1985)",
        ratio,
        (2 * kf * d) ** 2,
        0.02,
    )
    assert ratio == pytest.approx((2 * kf * d) ** 2, rel=0.02)


def test_short_range_ratio_is_one_and_golden_rule_value(record_check):
    # q-independent matrix element: 1/tau_t = 1/tau_q = m* W0 / hbar^3 (analytic: the angular
    # averages of 1 and of (1 - cos theta) are both 1; Ando, Fowler, Stern, RMP 54, 437 (1982))
    kf = fermi_wavevector(3e15)
    q, wt, wq = angular_nodes(kf)
    w0 = 1e-80  # J^2 m^2
    rt, rq = lifetimes(np.full(q.shape, w0), M_GAAS, wt, wq)
    ref = M_GAAS * sc.m_e * w0 / sc.hbar**3
    record_check(
        "disorder: q-independent scattering, 1/tau_t and 1/tau_q = m* W0 / hbar^3",
        "analytic: angular averages of 1 and of 1 - cos(theta) are both 1 (golden rule)",
        [rt, rq],
        [ref, ref],
        1e-10,
    )
    assert rt == pytest.approx(ref, rel=1e-10)
    assert rq == pytest.approx(ref, rel=1e-10)
    # interface roughness with a correlation length far below 1/k_F and no screening is
    # short-range: W = (V0 rho_I)^2 pi Delta^2 Lambda^2 (Ando, Fowler, Stern, RMP 54, 437 (1982))
    prof = fang_howard(2e8)
    v0, r0, delta, lam = 0.25 * sc.e, 1e7, 0.3e-9, 1e-12
    w = well_scattering(
        prof,
        sheet_density_m2=3e15,
        mass_rel=M_GAAS,
        permittivity_rel=EPS_GAAS,
        interfaces=((v0, r0),),
        roughness=(delta, lam),
        screening="none",
    )
    record_check(
        "disorder: tau_t/tau_q for interface roughness with Lambda = 1 pm, unscreened",
        "analytic: short-range scattering gives tau_t = tau_q",
        w.transport_lifetime_s / w.quantum_lifetime_s,
        1.0,
        1e-6,
    )
    assert w.transport_lifetime_s / w.quantum_lifetime_s == pytest.approx(1.0, abs=1e-6)
    w_ref = (v0 * r0) ** 2 * math.pi * delta**2 * lam**2
    rate = 1 / w.quantum_lifetime_s
    assert rate == pytest.approx(M_GAAS * sc.m_e * w_ref / sc.hbar**3, rel=1e-6)


@pytest.mark.parametrize("eta", [0.05, 0.3, 1.0, 3.0])
def test_fang_howard_form_factors(eta, record_check):
    # T. Ando, A. B. Fowler, F. Stern, Rev. Mod. Phys. 54, 437 (1982):
    # remote impurity at z_i < 0: F = exp(-q|z_i|) (1 + q/b)^-3;
    # screening: F_s = (8 + 9 eta + 3 eta^2) / (8 (1 + eta)^3), eta = q/b
    b = 2e8
    prof = fang_howard(b)
    q = np.array([eta * b])
    zi = np.array([-5e-9, -20e-9])
    f = prof.form_factor(q, zi)[0]
    fs = prof.screening_form_factor(q)[0]
    L = 50e-9
    got = prof.squared_layer_integral(q, -L, 0.0)[0]
    ref = (1 + eta) ** -6 * (1 - np.exp(-2 * q[0] * L)) / (2 * q[0])
    fh = "Fang-Howard closed forms, Ando, Fowler, Stern, Rev. Mod. Phys. 54, 437 (1982)"
    record_check(
        f"disorder: Fang-Howard remote form factor, z_i = -5 and -20 nm, q/b = {eta:g}",
        fh, f, np.exp(q * zi) * (1 + eta) ** -3, 2e-4,
    )  # fmt: skip
    record_check(
        f"disorder: Fang-Howard screening form factor, q/b = {eta:g}",
        fh, fs, (8 + 9 * eta + 3 * eta**2) / (8 * (1 + eta) ** 3), 2e-4,
    )  # fmt: skip
    record_check(
        f"disorder: uniform layer [-50 nm, 0] on the barrier side, integral of F^2, q/b = {eta:g}",
        "analytic from the Fang-Howard remote form: (1+q/b)^-6 (1 - exp(-2qL)) / (2q)",
        got, ref, 3e-4,
    )  # fmt: skip
    np.testing.assert_allclose(f, np.exp(q * zi) * (1 + eta) ** -3, rtol=2e-4)
    assert fs == pytest.approx((8 + 9 * eta + 3 * eta**2) / (8 * (1 + eta) ** 3), rel=2e-4)
    # uniform layer on the barrier side, [-L, 0]: integral of F^2 =
    # (1 + eta)^-6 (1 - exp(-2 q L)) / (2 q)  (analytic, from the remote form above)
    assert got == pytest.approx(ref, rel=3e-4)
    # impurity inside the channel: scipy quad of the defining integral (general-purpose library)
    z_in = 1.5 / b
    ref_in = quad(
        lambda z: 0.5 * b**3 * z**2 * np.exp(-b * z) * np.exp(-q[0] * abs(z - z_in)),
        0,
        60 / b,
        points=[z_in],
        limit=200,
    )[0]
    inside = prof.form_factor(q, [z_in])[0, 0]
    record_check(
        f"disorder: Fang-Howard form factor of an impurity inside the channel, q/b = {eta:g}",
        "scipy.integrate.quad of the defining integral",
        inside,
        ref_in,
        2e-4,
    )
    assert inside == pytest.approx(ref_in, rel=2e-4)


def test_infinite_background_identity(record_check):
    # analytic: int_{-inf}^{inf} F(q, z_i) dz_i = int rho(z) int exp(-q|z - z_i|) dz_i dz = 2/q
    # for any normalised rho; integrated numerically over a 4 um window
    prof = fang_howard(2e8)
    q = np.array([1e7, 1e8])
    zi = np.linspace(-2e-6, 2e-6, 400001)
    f = prof.form_factor(q, zi)
    total = np.trapezoid(f, zi, axis=1)
    record_check(
        "disorder: integral of F(q, z_i) over z_i (Fang-Howard profile, q = 1e7, 1e8 m^-1)",
        "analytic: 2/q for any normalised density",
        total,
        2 / q,
        1e-3,
    )
    np.testing.assert_allclose(total, 2 / q, rtol=1e-3)


def test_level_broadening_definition(record_check):
    # Gamma = hbar / (2 tau_q) (definition; Ando, Fowler, Stern, RMP 54, 437 (1982)): 329 ueV/ps
    assert level_broadening(1e-12) / sc.e * 1e6 == pytest.approx(
        sc.hbar / 2e-12 / sc.e * 1e6, rel=1e-15
    )
    record_check(
        "disorder: level broadening of tau_q = 1 ps",
        "definition Gamma = hbar/(2 tau_q), CODATA hbar (scipy.constants)",
        level_broadening(1e-12),
        sc.hbar / 2e-12,
        1e-15,
    )
    assert level_broadening(1e-12) / sc.e * 1e6 == pytest.approx(329.1, abs=0.1)
