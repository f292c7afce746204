"""Charge models: 2D subband occupation, classical 3D Thomas–Fermi electrons, donor ionisation.

All functions are vectorised and safe from millikelvin to room temperature: the Fermi–Dirac
integrals are evaluated with ``logaddexp``/``expit`` (no overflow as kT -> 0).
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc
from scipy.special import expit

__all__ = [
    "DONOR_DEGENERACY",
    "classical_density",
    "donor_ionized_fraction",
    "fermi_half",
    "subband_dos",
    "subband_sheet_density",
]

#: Spin degeneracy factor g of a hydrogenic donor in N+ = N / (1 + g exp((E_F - E_D)/kT))
#: (common practice; S. M. Sze, Physics of Semiconductor Devices, 2nd ed., Wiley 1981, ch. 1).
DONOR_DEGENERACY = 2.0


def subband_dos(mass_rel: np.ndarray | float) -> np.ndarray | float:
    """2D density of states m*/(pi hbar^2) including spin, J^-1 m^-2."""
    return np.asarray(mass_rel) * sc.m_e / (np.pi * sc.hbar**2)


def subband_sheet_density(energy_J, dos_J_m2, kT_J):
    """Sheet density of a 2D subband with E_F = 0: D kT ln(1 + exp(-E/kT)) (m^-2).

    ``logaddexp(0, x)`` keeps this exact at millikelvin (it tends to D max(-E, 0)).
    """
    return dos_J_m2 * kT_J * np.logaddexp(0.0, -np.asarray(energy_J) / kT_J)


def fermi_half(eta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Normalised Fermi–Dirac integral F_1/2(eta) and its derivative F_-1/2(eta).

    F_1/2(eta) = (2/sqrt(pi)) int_0^inf sqrt(x) / (1 + exp(x - eta)) dx, approximated by
    1 / (exp(-eta) + (3 sqrt(pi)/4) v^(-3/8)),
    v = eta^4 + 50 + 33.6 eta (1 - 0.68 exp(-0.17 (eta+1)^2))
    (D. Bednarczyk and J. Bednarczyk, Phys. Lett. A 64, 409 (1978); coefficients from memory,
    checked against quadrature in tests/unit/test_sp1d_charge.py). Exact in both limits
    (exp(eta) and (4/(3 sqrt(pi))) eta^(3/2)).
    """
    eta = np.asarray(eta, dtype=float)
    et = np.maximum(eta, -700.0)
    c = 0.75 * np.sqrt(np.pi)
    # integer powers by products and v^(-3/8) as exp(-3/8 ln v): same formula, several times
    # faster than numpy's general power (v >= 50 - 33.6*0.7 > 0, so the logarithm is safe)
    e1 = et + 1.0
    gauss = np.exp(-0.17 * e1 * e1)
    g = 1.0 - 0.68 * gauss
    et2 = et * et
    v = et2 * et2 + 50.0 + 33.6 * et * g
    dv = 4.0 * et2 * et + 33.6 * g + (33.6 * 0.68 * 0.34) * et * gauss * e1
    x = np.exp(-et)
    p = np.exp(-0.375 * np.log(v))
    f = 1.0 / (x + c * p)
    df = (x + (c * 0.375) * (p / v) * dv) * f * f
    low = eta < -700.0
    if np.any(low):
        f = np.where(low, 0.0, f)
        df = np.where(low, 0.0, df)
    return f, df


def classical_density(
    potential_J: np.ndarray, mass_rel: np.ndarray, kT_J: float
) -> tuple[np.ndarray, np.ndarray]:
    """Classical (3D Thomas–Fermi) electron density with E_F = 0 and its derivative.

    n = 2 (m kT / (2 pi hbar^2))^(3/2) F_1/2(-U/kT).

    Parameters
    ----------
    potential_J
        Conduction-band edge U relative to the Fermi level (J), any shape.
    mass_rel
        Density-of-states mass in units of m0, broadcastable to ``potential_J``.
    kT_J
        Thermal energy (J).

    Returns
    -------
    n : numpy.ndarray
        Electron density (m^-3).
    dn_dU : numpy.ndarray
        Derivative dn/dU (m^-3 J^-1, negative).
    """
    pref = 2.0 * (np.asarray(mass_rel) * sc.m_e / (2.0 * np.pi * sc.hbar**2)) ** 1.5
    eta = -np.asarray(potential_J, dtype=float) / kT_J
    k15 = kT_J**1.5
    # (kT)^1.5 * F(eta) stays finite at mK: F ~ eta^1.5, so the product is |U|^1.5.
    # Below eta = -60 the density is < 1e-26 of N_c: skip the evaluation there.
    live = eta > -60.0
    n = np.zeros(eta.shape)
    dn = np.zeros(eta.shape)
    if np.any(live):
        f, df = fermi_half(eta[live])
        p = pref[live] if np.ndim(pref) else pref
        n[live] = p * k15 * f
        dn[live] = -p * k15 * df / kT_J
    return n, dn


def donor_ionized_fraction(donor_level_J: np.ndarray, kT_J: float) -> tuple[np.ndarray, np.ndarray]:
    """Ionised fraction N+/N = 1 / (1 + g exp((E_F - E_D)/kT)) with E_F = 0, and d(N+/N)/dE_D.

    Parameters
    ----------
    donor_level_J
        Donor level E_D relative to the Fermi level (J); +inf for always-ionised donors.
    kT_J
        Thermal energy (J).
    """
    x = -np.asarray(donor_level_J) / kT_J + np.log(DONOR_DEGENERACY)
    f = expit(-x)
    return f, f * (1.0 - f) / kT_J
