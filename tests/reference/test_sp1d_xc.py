"""LDA exchange–correlation potentials against their published forms and limits.

Check values and their sources:
- exchange of the uniform gas, eps_x = -(3/4pi)(9pi/4)^(1/3)/r_s = -0.4582/r_s Ha and
  v_x = -e^2 k_F/(pi 4 pi eps) (analytic; W. Kohn and L. J. Sham, Phys. Rev. 140, A1133 (1965));
- Hedin–Lundqvist: "beta varies between 1 for very high densities and about 1.5 for very low
  densities" (L. Hedin and B. I. Lundqvist, J. Phys. C 4, 2064 (1971), abstract);
- Perdew–Zunger: the high-density term A ln r_s with A = (1 - ln 2)/pi^2 Ha (M. Gell-Mann and
  K. A. Brueckner, Phys. Rev. 106, 364 (1957)), and the join of the two branches at r_s = 1
  (J. P. Perdew and A. Zunger, Phys. Rev. B 23, 5048 (1981), appendix C: energy and potential
  continuous there, up to the rounding of the published coefficients);
- every potential equals d(n eps_xc)/dn (analytic: definition of the LDA potential), checked by
  numerical differentiation;
- effective Bohr radius of GaAs (m* = 0.067, eps_r = 12.9): a* = eps_r/m a_0 = 10.19 nm (analytic).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.sp1d import xc

A0 = sc.physical_constants["Bohr radius"][0]
HA = sc.physical_constants["Hartree energy"][0]


def n_of_rs(rs, a_star=A0):
    return 3.0 / (4.0 * np.pi * (rs * a_star) ** 3)


def test_exchange_energy_coefficient_is_0_4582(record_check):
    # -0.4582/r_s Hartree (analytic constant 0.458165...)
    record_check(
        "LDA exchange energy per electron at r_s = 1 (Ha)",
        "analytic: -(3/4pi)(9pi/4)^(1/3)/r_s (Kohn & Sham, Phys. Rev. 140, A1133 (1965))",
        xc.exchange_energy(1.0),
        -0.4582,
        5e-5,
        kind="abs",
        unit="Ha",
    )
    assert xc.exchange_energy(1.0) == pytest.approx(-0.4582, abs=5e-5)
    assert xc.EXCHANGE_COEFF == pytest.approx(3 / (4 * np.pi) * (9 * np.pi / 4) ** (1 / 3), 1e-14)


@pytest.mark.parametrize("n_cm3", [1e15, 1e17, 3e18])
def test_exchange_potential_is_kohn_sham_gaspar(n_cm3, record_check):
    # v_x = -e^2 k_F / (pi 4 pi eps0 eps_r), k_F = (3 pi^2 n)^(1/3), in GaAs units
    n = n_cm3 * 1e6
    m, eps = 0.067, 12.9
    kf = (3 * np.pi**2 * n) ** (1 / 3)
    expected = -(sc.e**2) * kf / (np.pi * 4 * np.pi * sc.epsilon_0 * eps)
    a_star, ha_star = xc.effective_units(m, eps)
    rs = xc.rs_of_density(n, a_star)
    got = 4 / 3 * xc.exchange_energy(rs) * ha_star
    record_check(
        f"LDA exchange potential in GaAs at n = {n_cm3:.0e} cm^-3",
        "analytic: v_x = -e^2 k_F/(pi 4 pi eps), Kohn & Sham, Phys. Rev. 140, A1133 (1965)",
        got,
        expected,
        1e-6,
    )
    assert got == pytest.approx(expected, rel=1e-6)  # CODATA a0 vs e, eps0, m_e: 1e-9 level


def test_gaas_effective_bohr_radius():
    a_star, _ = xc.effective_units(0.067, 12.9)
    assert a_star == pytest.approx(12.9 / 0.067 * A0, rel=1e-12)
    assert a_star == pytest.approx(10.19e-9, abs=0.01e-9)


def test_hedin_lundqvist_beta_limits(record_check):
    # HL 1971 abstract: beta -> 1 at very high density, about 1.5 at very low density
    record_check(
        "Hedin–Lundqvist beta(r_s) at high density (r_s = 1e-3)",
        "Hedin & Lundqvist, J. Phys. C 4, 2064 (1971), abstract: beta -> 1",
        xc.hl_beta(1e-3),
        1.0,
        1e-3,
        kind="abs",
    )
    record_check(
        "Hedin–Lundqvist beta(r_s) at low density (r_s = 10-25)",
        "Hedin & Lundqvist, J. Phys. C 4, 2064 (1971), abstract: about 1.5",
        xc.hl_beta(np.array([10.0, 15.0, 20.0, 25.0])),
        1.5,
        0.1,
        kind="abs",
    )
    assert xc.hl_beta(1e-3) == pytest.approx(1.0, abs=1e-3)
    for rs in (10.0, 15.0, 20.0, 25.0):
        beta = xc.hl_beta(rs)
        assert beta == pytest.approx(1.5, abs=0.1)  # the closed interval [1.4, 1.6]
    # monotone in between
    r = np.geomspace(1e-3, 50, 200)
    assert np.all(np.diff(xc.hl_beta(r)) > 0)


def test_perdew_zunger_high_density_slope_is_gell_mann_brueckner(record_check):
    # d eps_c / d ln r_s -> A = (1 - ln 2)/pi^2 Ha = 0.031091 Ha as r_s -> 0 (GMB 1957); PZ
    # quote A = 0.0311 (rounded)
    r1, r2 = 1e-6, 2e-6
    slope = (xc.pz_correlation_energy(r2) - xc.pz_correlation_energy(r1)) / np.log(r2 / r1)
    record_check(
        "Perdew–Zunger correlation: d eps_c/d ln r_s as r_s -> 0 (Ha)",
        "Gell-Mann & Brueckner, Phys. Rev. 106, 364 (1957): (1 - ln 2)/pi^2",
        slope,
        (1 - np.log(2)) / np.pi**2,
        2e-5,
        kind="abs",
        unit="Ha",
    )
    assert slope == pytest.approx((1 - np.log(2)) / np.pi**2, abs=2e-5)


def test_perdew_zunger_branches_join_at_rs_1(record_check):
    eps = 1e-9
    e_lo, e_hi = xc.pz_correlation_energy(1 - eps), xc.pz_correlation_energy(1 + eps)
    v_lo, v_hi = xc.pz_correlation_potential(1 - eps), xc.pz_correlation_potential(1 + eps)
    # continuous up to the rounding of the published four-digit coefficients (1e-4 Ha)
    record_check(
        "Perdew–Zunger eps_c: the two branches at r_s = 1 (Ha)",
        "Perdew & Zunger, Phys. Rev. B 23, 5048 (1981), appendix C (continuous at r_s = 1)",
        e_lo,
        e_hi,
        1e-4,
        kind="abs",
        unit="Ha",
    )
    assert abs(e_lo - e_hi) < 1e-4
    assert abs(v_lo - v_hi) < 2e-4


@pytest.mark.parametrize("rs", [0.3, 0.8, 1.5, 3.0, 8.0, 30.0])
def test_potentials_are_derivatives_of_the_energy(rs):
    # v = d(n eps)/dn = eps - (r_s/3) d eps/d r_s, numerically (central differences in r_s)
    h = 1e-5 * rs
    for energy, potential in (
        (xc.exchange_energy, lambda r: 4 / 3 * xc.exchange_energy(r)),
        (xc.pz_correlation_energy, xc.pz_correlation_potential),
    ):
        d = (energy(rs + h) - energy(rs - h)) / (2 * h)
        assert potential(rs) == pytest.approx(energy(rs) - rs / 3 * d, rel=1e-7, abs=1e-12)


def test_xc_potential_in_si_and_the_two_parametrizations_agree(record_check):
    # Two independent published parametrizations of the same uniform-gas physics (HL: many-body
    # theory of 1971; PZ: a fit to Ceperley–Alder Monte Carlo): within 5 % for 0.5 <= r_s <= 20
    # (common practice: LDA parametrizations agree to a few per cent in this range).
    m, eps = 0.067, 12.9
    a_star, ha_star = xc.effective_units(m, eps)
    rs = np.array([0.5, 1, 2, 3, 5, 10, 20])
    n = n_of_rs(rs, a_star)
    hl = xc.xc_potential(n, m, eps, "hedin-lundqvist")
    pz = xc.xc_potential(n, m, eps, "perdew-zunger")
    assert np.all(hl < 0) and np.all(pz < 0)
    record_check(
        "Hedin–Lundqvist v_xc against Perdew–Zunger v_xc, r_s = 0.5-20",
        "Hedin & Lundqvist, J. Phys. C 4, 2064 (1971) vs Perdew & Zunger, PRB 23, 5048 (1981)",
        hl,
        pz,
        0.05,
    )
    assert np.all(np.abs(hl / pz - 1) < 0.05)
    # the SI value is the Ha* value: HL at r_s = 2 is beta(2) * (4/3) eps_x(2) Ha*
    assert hl[2] == pytest.approx(xc.hl_beta(2.0) * 4 / 3 * xc.exchange_energy(2.0) * ha_star)
    assert np.all(xc.xc_potential(n, m, eps, "none") == 0.0)
    assert xc.xc_potential(0.0, m, eps, "perdew-zunger") == 0.0


def test_unknown_model_is_refused():
    with pytest.raises(ValueError, match="exchange-correlation"):
        xc.xc_potential(1e23, 0.067, 12.9, "slater")
