"""qhdesign.landau: Landau-level DOS sum rule and zero-field limit, thermodynamics, and the 2D
Hartree–Fock exchange term against a direct integration and the published compressibility."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate

from qhdesign.errors import InputError
from qhdesign.landau import (
    LandauSheet,
    cyclotron_energy,
    exchange_dmu_dn,
    exchange_energy_per_particle,
    landau_dos,
    level_energies,
    level_width_from_lifetime,
    zero_field_dos,
)

MEV = 1e-3 * sc.e
M = 0.067


def test_each_spin_resolved_level_holds_eB_over_h(record_check):
    # analytic: a level holds eB/h states per area (Landau degeneracy 1/(2 pi l_B^2), per spin)
    B, width = 5.0, 0.2 * MEV  # levels 8.6 meV apart, split by 0.13 meV: integrate pairs
    hw = cyclotron_energy(B, M)
    for k in range(1, 5):  # up to the gap above orbital level k-1: 2k spin-resolved levels
        upper = k * hw
        E = np.linspace(-10 * MEV, upper, 400_001)
        total = np.trapezoid(landau_dos(E, B, M, width), E)
        record_check(
            f"Landau DOS: {2 * k} spin-resolved levels hold {2 * k} eB/h (B = 5 T)",
            "analytic: Landau degeneracy eB/h per spin-resolved level",
            total / (sc.e * B / sc.h),
            2 * k,
            1e-6,
        )
        assert total / (sc.e * B / sc.h) == pytest.approx(2 * k, rel=1e-6, abs=0)


def test_zero_field_limit_is_m_over_pi_hbar2(record_check):
    # analytic: the 2D DOS m*/(pi hbar^2) (spin 2) as B -> 0; the widths grow as sqrt(B) while
    # the spacing shrinks as B, so the oscillations die out
    D0 = M * sc.m_e / (math.pi * sc.hbar**2)
    assert zero_field_dos(M) == pytest.approx(D0, rel=1e-12, abs=0)
    assert D0 == pytest.approx(
        2.7988e10 * 1e4 / MEV, rel=1e-4, abs=0
    )  # 2.7988e10 cm^-2 meV^-1 (analytic)
    E = np.linspace(5 * MEV, 6 * MEV, 21)
    for B, tol in ((0.05, 1e-5), (0.01, 1e-9)):
        width = level_width_from_lifetime(B, M, 1e-12)
        record_check(
            f"Landau DOS at B = {B} T (tau_q = 1 ps) -> m*/(pi hbar^2)",
            "analytic: 2D DOS m*/(pi hbar^2), spin 2",
            landau_dos(E, B, M, width),
            D0,
            tol,
        )
        assert np.max(np.abs(landau_dos(E, B, M, width) / D0 - 1.0)) < tol


def test_level_energies_and_width():
    hw = cyclotron_energy(1.0, M)
    assert hw == pytest.approx(1.7279 * MEV, rel=1e-4, abs=0)  # hbar e B/m*, analytic: 1.7279 meV/T
    lv = level_energies(1.0, M, 0.44, 2)
    ez = 0.44 * sc.physical_constants["Bohr magneton"][0]
    assert lv[1] - lv[0] == pytest.approx(ez, rel=1e-12, abs=0)
    assert lv[2] - lv[0] == pytest.approx(hw, rel=1e-12, abs=0)
    # Gamma^2 = (2/pi) hbar omega_c hbar/tau (Ando & Uemura 1974)
    g = level_width_from_lifetime(1.0, M, 1e-12)
    assert g**2 == pytest.approx(2 / math.pi * hw * sc.hbar / 1e-12, rel=1e-12, abs=0)


def test_dos_is_derivative_of_density_and_integer_filling_is_incompressible():
    B = 4.0
    s = LandauSheet(B, M, 0.3 * MEV, 0.3)
    mu = np.linspace(-1 * MEV, 20 * MEV, 4001)
    n = s.density(mu)
    num = np.gradient(n, mu)
    D = s.dos(mu)
    assert np.max(np.abs(num - D)) < 2e-3 * np.max(D)
    # filling 2 with well-separated levels: dn/dmu at the gap is tiny compared to m*/(pi hbar^2)
    n2 = 2 * s.degeneracy_m2
    assert s.filling(n2) == pytest.approx(2.0)
    assert s.thermodynamic_dos(n2) < 1e-3 * zero_field_dos(M)
    # half-filled level: large
    assert s.thermodynamic_dos(0.5 * s.degeneracy_m2) > zero_field_dos(M)


def _disk_pair_integral() -> float:
    """I = int_{|k|<1} int_{|k'|<1} d^2k d^2k' / |k - k'|, by direct integration: around each k,
    int d^2k'/|k-k'| = int_0^{2 pi} s_max(theta) d theta with s_max the distance to the circle."""

    def inner(rho):
        f = lambda t: -rho * math.cos(t) + math.sqrt(1.0 - (rho * math.sin(t)) ** 2)  # noqa: E731
        return integrate.quad(f, 0.0, 2 * math.pi, limit=200)[0]

    return 2 * math.pi * integrate.quad(lambda r: r * inner(r), 0.0, 1.0, limit=200)[0]


def test_exchange_energy_against_direct_integration(record_check):
    # Hartree–Fock exchange of the unpolarized 2D gas, E_x/A = -(e^2/(4 pi eps)) I k_F^3/(8 pi^3)
    # (two spins, v(q) = 2 pi e^2/(4 pi eps q)), per particle with n = k_F^2/(2 pi): the published
    # -8 sqrt(2)/(3 pi r_s) Ry* (Tanatar & Ceperley, Phys. Rev. B 39, 5005 (1989)) corresponds to
    # I = 16 pi / 3.
    I = _disk_pair_integral()
    assert I == pytest.approx(16 * math.pi / 3, rel=1e-7, abs=0)
    n, eps = 1.1e15, 12.9
    kF = math.sqrt(2 * math.pi * n)
    direct = -(sc.e**2 / (4 * math.pi * sc.epsilon_0 * eps)) * I * kF**3 / (8 * math.pi**3) / n
    record_check(
        "HF exchange energy per particle, 2D unpolarized, n = 1.1e11 cm^-2",
        "direct integration of the exchange integral; Tanatar & Ceperley, PRB 39, 5005 (1989)",
        exchange_energy_per_particle(n, eps),
        direct,
        1e-7,
    )
    assert exchange_energy_per_particle(n, eps) == pytest.approx(direct, rel=1e-7, abs=0)
    # in Rydberg form
    aB = 4 * math.pi * sc.epsilon_0 * eps * sc.hbar**2 / (M * sc.m_e * sc.e**2)
    Ry = sc.e**2 / (8 * math.pi * sc.epsilon_0 * eps * aB)
    rs = 1 / (math.sqrt(math.pi * n) * aB)
    assert exchange_energy_per_particle(n, eps) == pytest.approx(
        -8 * math.sqrt(2) / (3 * math.pi * rs) * Ry, rel=1e-12, abs=0
    )
    # the correction to dmu/dn is the second derivative of n eps_x (finite difference)
    h = 1e-3 * n
    f = lambda x: x * exchange_energy_per_particle(x, eps)  # noqa: E731
    fd = (f(n + h) - 2 * f(n) + f(n - h)) / h**2
    assert exchange_dmu_dn(n, eps) == pytest.approx(fd, rel=1e-5, abs=0)


def test_exchange_lowers_dmu_dn_at_1p1e11_as_published(record_check):
    # Giuliani & Vignale, Quantum Theory of the Electron Liquid (2005), ch. 2: Hartree–Fock 2D
    # compressibility kappa_0/kappa = 1 - sqrt(2) r_s / pi. At n = 1.1e11 cm^-2, m* = 0.067,
    # eps_r = 12.9: r_s = 1.669, a -75.2 % change of dmu/dn. (The issue text quoted -38 % from an
    # exchange energy per particle of -(2/(3 pi)) e^2 k_F/(4 pi eps), half the published one.)
    n, eps = 1.1e15, 12.9
    aB = 4 * math.pi * sc.epsilon_0 * eps * sc.hbar**2 / (M * sc.m_e * sc.e**2)
    rs = 1 / (math.sqrt(math.pi * n) * aB)
    assert rs == pytest.approx(1.669, abs=1e-3)
    change = exchange_dmu_dn(n, eps) * zero_field_dos(M)
    record_check(
        "HF exchange change of dmu/dn at 1.1e11 cm^-2, m* 0.067, eps 12.9 (-75.2 %)",
        "Giuliani & Vignale, Quantum Theory of the Electron Liquid (2005), ch. 2",
        change,
        -math.sqrt(2) * rs / math.pi,
        1e-9,
    )
    assert change == pytest.approx(-math.sqrt(2) * rs / math.pi, rel=1e-9, abs=0)
    assert change == pytest.approx(-0.752, abs=1e-3)


def test_screening_dos_caps_negative_compressibility():
    s = LandauSheet(12.0, M, 3 * MEV, 0.3, eps_r=12.9)
    D0 = zero_field_dos(M)
    n = np.array([0.6 * s.degeneracy_m2])
    assert s.thermodynamic_dos(n)[0] < 0  # exchange beats the broadened level: negative
    assert s.screening_dos(n, cap=50.0)[0] == pytest.approx(50.0 * D0)


def test_bad_input():
    with pytest.raises(InputError):
        LandauSheet(0.0, M, MEV, 0.3)
    with pytest.raises(InputError):
        LandauSheet(1.0, M, MEV, -1.0)
    with pytest.raises(InputError):
        level_width_from_lifetime(1.0, M, 0.0)
