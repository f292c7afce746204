"""Local-density exchange–correlation potential of the electrons in the 1D stage.

In the local-density approximation the electrons feel, besides the Hartree (electrostatic)
potential, the exchange–correlation potential of a uniform electron gas at the local density:

    v_xc(z) = d[n eps_xc(n)]/dn  at n = n(z),

where eps_xc is the exchange–correlation energy per electron of the uniform three-dimensional
gas. In a semiconductor the gas lives in a dielectric with the band mass, so lengths and energies
scale to effective atomic units: a* = (eps_r/m) a_0 and Ha* = (m/eps_r^2) Ha (m = m*/m0), and
the density enters through r_s = (3/(4 pi n))^(1/3) / a*. We use the local m and eps_r of each
node (the control-volume average of its two cells).

Exchange (exact for the uniform gas; Kohn–Sham–Gaspar):
    eps_x = -(3/(4 pi)) (9 pi/4)^(1/3) / r_s Ha* = -0.458165/r_s Ha*,   v_x = (4/3) eps_x.

Parametrizations of correlation (spin-unpolarized gas):

- ``"hedin-lundqvist"``: v_xc = beta(r_s) v_x with beta = 1 + B x ln(1 + 1/x), x = r_s/A,
  A = 21, B = 0.7734 (L. Hedin and B. I. Lundqvist, J. Phys. C 4, 2064 (1971)); the form used
  for GaAs heterostructures by F. Stern and S. Das Sarma, Phys. Rev. B 30, 840 (1984) and in
  T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982).
- ``"perdew-zunger"``: the fit of J. P. Perdew and A. Zunger, Phys. Rev. B 23, 5048 (1981)
  (appendix C) to the quantum Monte Carlo energies of D. M. Ceperley and B. J. Alder,
  Phys. Rev. Lett. 45, 566 (1980): eps_c = gamma/(1 + beta1 sqrt(r_s) + beta2 r_s) for
  r_s >= 1, and A ln r_s + B + C r_s ln r_s + D r_s below; v_c = eps_c - (r_s/3) d eps_c/d r_s.
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

__all__ = ["XC_MODELS", "XC_REFERENCES", "effective_units", "rs_of_density", "xc_potential"]

#: Accepted values of the stack key ``models.exchange_correlation``.
XC_MODELS = ("none", "hedin-lundqvist", "perdew-zunger")

#: The published source of each parametrization (reported in the JSON).
XC_REFERENCES = {
    "none": "",
    "hedin-lundqvist": "L. Hedin and B. I. Lundqvist, J. Phys. C 4, 2064 (1971)",
    "perdew-zunger": (
        "J. P. Perdew and A. Zunger, Phys. Rev. B 23, 5048 (1981), fit to "
        "D. M. Ceperley and B. J. Alder, Phys. Rev. Lett. 45, 566 (1980)"
    ),
}

A0 = sc.physical_constants["Bohr radius"][0]
HARTREE = sc.physical_constants["Hartree energy"][0]
#: (3/(4 pi)) (9 pi/4)^(1/3): exchange energy per electron times r_s, in Hartree.
EXCHANGE_COEFF = 3.0 / (4.0 * np.pi) * (9.0 * np.pi / 4.0) ** (1.0 / 3.0)

# Hedin–Lundqvist (1971) constants
_HL_A = 21.0
_HL_B = 0.7734
# Perdew–Zunger (1981), unpolarized, Hartree units
_PZ_GAMMA, _PZ_BETA1, _PZ_BETA2 = -0.1423, 1.0529, 0.3334
_PZ_A, _PZ_B, _PZ_C, _PZ_D = 0.0311, -0.048, 0.0020, -0.0116

#: Below this density (m^-3) the potential is set to zero (r_s of order 1e3 in GaAs).
_N_FLOOR = 1.0


def effective_units(mass_rel, eps_rel):
    """Effective Bohr radius a* (m) and effective Hartree Ha* (J) for band mass m*/m0 and eps_r."""
    m = np.asarray(mass_rel, dtype=float)
    eps = np.asarray(eps_rel, dtype=float)
    return eps / m * A0, m / eps**2 * HARTREE


def rs_of_density(n_m3, a_star_m):
    """Density parameter r_s = (3/(4 pi n))^(1/3) / a* (dimensionless); inf where n <= 0."""
    n = np.asarray(n_m3, dtype=float)
    with np.errstate(divide="ignore"):
        r = np.where(
            n > _N_FLOOR, (3.0 / (4.0 * np.pi * np.maximum(n, _N_FLOOR))) ** (1 / 3), np.inf
        )
    return r / a_star_m


def exchange_energy(rs):
    """Exchange energy per electron of the uniform gas, in units of Ha*: -0.458165/r_s."""
    return -EXCHANGE_COEFF / np.asarray(rs, dtype=float)


def hl_beta(rs):
    """Hedin–Lundqvist enhancement beta(r_s) = v_xc/v_x = 1 + B x ln(1 + 1/x), x = r_s/21."""
    x = np.asarray(rs, dtype=float) / _HL_A
    return 1.0 + _HL_B * x * np.log1p(1.0 / x)


def pz_correlation_energy(rs):
    """Perdew–Zunger correlation energy per electron (unpolarized), in units of Ha*."""
    rs = np.asarray(rs, dtype=float)
    hi = rs >= 1.0
    r_hi = np.where(hi, rs, 1.0)
    r_lo = np.where(hi, 1.0, rs)
    e_hi = _PZ_GAMMA / (1.0 + _PZ_BETA1 * np.sqrt(r_hi) + _PZ_BETA2 * r_hi)
    lr = np.log(r_lo)
    e_lo = _PZ_A * lr + _PZ_B + _PZ_C * r_lo * lr + _PZ_D * r_lo
    return np.where(hi, e_hi, e_lo)


def pz_correlation_potential(rs):
    """Perdew–Zunger correlation potential v_c = eps_c - (r_s/3) d eps_c/d r_s, in units of Ha*."""
    rs = np.asarray(rs, dtype=float)
    hi = rs >= 1.0
    r_hi = np.where(hi, rs, 1.0)
    r_lo = np.where(hi, 1.0, rs)
    sq = np.sqrt(r_hi)
    den = 1.0 + _PZ_BETA1 * sq + _PZ_BETA2 * r_hi
    e_hi = _PZ_GAMMA / den
    v_hi = e_hi * (1.0 + 7.0 / 6.0 * _PZ_BETA1 * sq + 4.0 / 3.0 * _PZ_BETA2 * r_hi) / den
    lr = np.log(r_lo)
    v_lo = (
        _PZ_A * lr
        + (_PZ_B - _PZ_A / 3.0)
        + 2.0 / 3.0 * _PZ_C * r_lo * lr
        + (2.0 * _PZ_D - _PZ_C) / 3.0 * r_lo
    )
    return np.where(hi, v_hi, v_lo)


def xc_potential(n_m3, mass_rel, eps_rel, model: str):
    """Exchange–correlation potential energy v_xc (J) of electrons at density ``n_m3`` (m^-3).

    Parameters
    ----------
    n_m3
        Electron density, any shape, m^-3.
    mass_rel, eps_rel
        Band mass (m*/m0) and relative permittivity, broadcastable to ``n_m3``.
    model
        One of :data:`XC_MODELS`.

    Returns
    -------
    numpy.ndarray
        v_xc in J (negative; zero where the density vanishes and for ``model="none"``).

    References
    ----------
    L. Hedin and B. I. Lundqvist, J. Phys. C 4, 2064 (1971).
    J. P. Perdew and A. Zunger, Phys. Rev. B 23, 5048 (1981).
    """
    n = np.asarray(n_m3, dtype=float)
    if model == "none":
        return np.zeros_like(n)
    if model not in XC_MODELS:
        raise ValueError(f"exchange-correlation model must be one of {XC_MODELS}, got {model!r}")
    a_star, ha_star = effective_units(mass_rel, eps_rel)
    rs = rs_of_density(n, a_star)
    finite = np.isfinite(rs)
    r = np.where(finite, rs, 1.0)
    vx = 4.0 / 3.0 * exchange_energy(r)
    if model == "hedin-lundqvist":
        v = vx * hl_beta(r)
    else:
        v = vx + pz_correlation_potential(r)
    return np.where(finite, v * ha_star, 0.0)
