"""Landau-level density of states of a 2D electron sheet in a perpendicular field, and its
thermodynamic compressibility with the Hartree–Fock exchange correction.

Pure numpy/scipy (no DOLFINx): used by the island stage for the screening wells in the field and
meant for any stage that needs dn/dmu of a sheet at a field B and temperature T.

Model (derivations in docs/island.md, "Screening wells in the field")
-------------------------------------------------------------------
* Levels E_{N,s} = hbar omega_c (N + 1/2) + s g* mu_B B / 2, s = -1, +1 (spin split by the bare
  Zeeman energy; the sign of g* only swaps the labels), N = 0, 1, ...; energies from the subband
  bottom.
* Each spin-resolved level holds eB/h states per area and is broadened by the Gaussian of
  Ando & Uemura / Gerhardts,
      D_N(E) = (eB/h) sqrt(2/pi) / Gamma * exp(-2 (E - E_N)^2 / Gamma^2),
  with Gamma^2 = (2/pi) hbar omega_c hbar / tau_q for short-range scatterers (tau_q the quantum
  lifetime), or a width given directly.
* Thermodynamics: n(mu, T) = int D(E) f(E - mu) dE and dn/dmu = int D(E) (-df/dE) dE, per level
  through the thermally smeared Gaussian (a table of the convolution, interpolated).
* Exchange: the Hartree–Fock exchange energy per particle of the unpolarized 2D gas,
  eps_x = -(4/(3 pi)) (e^2 / (4 pi eps)) k_F, k_F = sqrt(2 pi n), i.e. -8 sqrt(2) / (3 pi r_s) Ry*;
  it lowers dmu/dn by d^2(n eps_x)/dn^2 = -(2/pi)^(1/2) (e^2/(4 pi eps)) n^(-1/2).

References
----------
T. Ando, Y. Uemura, J. Phys. Soc. Jpn. 36, 959 (1974) (level broadening in the self-consistent
Born approximation, width Gamma^2 = (2/pi) hbar omega_c hbar/tau).
R. R. Gerhardts, Z. Phys. B 21, 275 (1975) (the Gaussian line shape from the cumulant expansion).
T. Ando, A. B. Fowler, F. Stern, Rev. Mod. Phys. 54, 437 (1982), sec. VI (both, reviewed).
B. Tanatar, D. M. Ceperley, Phys. Rev. B 39, 5005 (1989) (2D exchange energy -8 sqrt(2)/(3 pi r_s)
Ry, the Hartree–Fock part of their correlation-energy analysis).
G. F. Giuliani, G. Vignale, Quantum Theory of the Electron Liquid (Cambridge, 2005), ch. 2
(2D Hartree–Fock compressibility kappa_0 / kappa = 1 - sqrt(2) r_s / pi).
J. P. Eisenstein, L. N. Pfeiffer, K. W. West, Phys. Rev. Lett. 68, 674 (1992) (negative
compressibility of a 2D sheet measured; dmu/dn with the exchange term above).
C. Weisbuch, C. Hermann, Phys. Rev. B 15, 816 (1977) (g* = -0.44 in GaAs).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy import constants as sc
from scipy.special import erf

from qhdesign import materials
from qhdesign.errors import InputError

__all__ = [
    "G_FACTOR_GAAS",
    "LandauSheet",
    "cyclotron_energy",
    "exchange_dmu_dn",
    "exchange_energy_per_particle",
    "landau_dos",
    "level_energies",
    "level_width_from_lifetime",
    "zero_field_dos",
]

#: |g*| of GaAs conduction electrons, from the materials table (``gaas.g_factor``, -0.44 with
#: its source there).
G_FACTOR_GAAS = abs(materials.electron_g_factor_gaas())
_MU_B = sc.physical_constants["Bohr magneton"][0]


def zero_field_dos(mass_ratio: float) -> float:
    """m*/(pi hbar^2) with spin degeneracy 2 (J^-1 m^-2)."""
    return mass_ratio * sc.m_e / (math.pi * sc.hbar**2)


def cyclotron_energy(field_T: float, mass_ratio: float) -> float:
    """hbar omega_c = hbar e B / m* (J)."""
    return sc.hbar * sc.e * field_T / (mass_ratio * sc.m_e)


def level_width_from_lifetime(field_T: float, mass_ratio: float, lifetime_s: float) -> float:
    """Gaussian level width Gamma (J) from the quantum lifetime, Gamma^2 = (2/pi) hbar omega_c
    hbar / tau_q (Ando & Uemura 1974; Ando, Fowler, Stern, Rev. Mod. Phys. 54, 437 (1982))."""
    if not lifetime_s > 0:
        raise InputError(f"quantum lifetime must be > 0 s, got {lifetime_s!r}")
    return math.sqrt((2.0 / math.pi) * cyclotron_energy(field_T, mass_ratio) * sc.hbar / lifetime_s)


def level_energies(
    field_T: float, mass_ratio: float, g_factor: float, n_orbital: int
) -> np.ndarray:
    """Spin-resolved level energies (J) from the subband bottom, shape (2 n_orbital,), sorted."""
    hw = cyclotron_energy(field_T, mass_ratio)
    ez = 0.5 * abs(g_factor) * _MU_B * field_T
    N = np.arange(n_orbital)
    return np.sort(np.concatenate((hw * (N + 0.5) - ez, hw * (N + 0.5) + ez)))


def landau_dos(
    energy_J: np.ndarray,
    field_T: float,
    mass_ratio: float,
    width_J: float,
    g_factor: float = G_FACTOR_GAAS,
) -> np.ndarray:
    """Broadened Landau-level density of states D(E) (J^-1 m^-2), T = 0, Gaussian line shape.

    Parameters
    ----------
    energy_J
        Energies from the subband bottom (J), any shape.
    field_T, mass_ratio, width_J, g_factor
        Field (T), m*/m0, Gaussian width Gamma (J; D ~ exp(-2 (E - E_N)^2 / Gamma^2)), |g*|.
    """
    E = np.asarray(energy_J, dtype=float)
    hw = cyclotron_energy(field_T, mass_ratio)
    n_orb = int(np.max(E, initial=0.0) / hw + 6.0 * width_J / hw + 3)
    levels = level_energies(field_T, mass_ratio, g_factor, n_orb)
    deg = sc.e * field_T / sc.h
    x = (E[..., None] - levels) / width_J
    return deg * math.sqrt(2.0 / math.pi) / width_J * np.sum(np.exp(-2.0 * x**2), axis=-1)


def exchange_energy_per_particle(n_m2, eps_r: float):
    """Hartree–Fock exchange energy per particle of the unpolarized 2D gas (J):
    -(4/(3 pi)) (e^2/(4 pi eps)) k_F with k_F = sqrt(2 pi n) (Tanatar & Ceperley 1989:
    -8 sqrt(2)/(3 pi r_s) Ry*)."""
    kF = np.sqrt(2.0 * np.pi * np.asarray(n_m2, dtype=float))
    return -(4.0 / (3.0 * np.pi)) * sc.e**2 / (4.0 * np.pi * sc.epsilon_0 * eps_r) * kF


def exchange_dmu_dn(n_m2, eps_r: float):
    """d^2 (n eps_x)/dn^2 = -(2/pi)^(1/2) (e^2/(4 pi eps)) n^(-1/2) (J m^2), the exchange
    correction to dmu/dn of the unpolarized 2D gas."""
    n = np.maximum(np.asarray(n_m2, dtype=float), 1e6)
    return -math.sqrt(2.0 / math.pi) * sc.e**2 / (4.0 * math.pi * sc.epsilon_0 * eps_r) / np.sqrt(n)


@functools.lru_cache(maxsize=64)
def _smeared_tables(width_J: float, kT_J: float, npts: int = 4001):
    """Occupation and DOS of one normalised Gaussian level at temperature T, tabulated against
    delta = mu - E_N: occ(delta) = int g(y) f(y - delta) dy, dos(delta) = d occ / d delta.

    The Gaussian g has standard deviation Gamma/2. The convolution with the thermal kernel
    -df/dx = 1/(4 kT cosh^2(x/2kT)) is done by quadrature on a uniform grid fine enough for both
    scales.
    """
    s = 0.5 * width_J
    span = 8.0 * s + 40.0 * kT_J
    d = np.linspace(-span, span, npts)
    h = min(s, kT_J) / 6.0
    m = int(np.ceil(40.0 * kT_J / h))  # the kernel is below e^-40 beyond 40 kT
    x = np.linspace(-m * h, m * h, 2 * m + 1)  # thermal-kernel variable
    kern = 1.0 / (4.0 * kT_J * np.cosh(np.clip(x / (2.0 * kT_J), -350, 350)) ** 2)
    wts = np.full(x.size, h)
    wts[[0, -1]] *= 0.5
    kern_w = kern * wts
    kern_w /= kern_w.sum()  # exact normalisation of the discrete kernel
    occ = np.empty(d.size)
    dos = np.empty(d.size)
    for i0 in range(0, d.size, 256):
        dd = d[i0 : i0 + 256, None] + x[None, :]
        occ[i0 : i0 + 256] = (0.5 * (1.0 + erf(dd / (math.sqrt(2.0) * s)))) @ kern_w
        dos[i0 : i0 + 256] = (np.exp(-0.5 * (dd / s) ** 2) / (math.sqrt(2 * math.pi) * s)) @ kern_w
    return d, occ, dos


@dataclass(frozen=True)
class LandauSheet:
    """One 2D sheet in a field: its thermodynamic density of states against its density.

    Attributes
    ----------
    field_T
        Perpendicular field B (T), > 0.
    mass_ratio
        m*/m0 (GaAs: 0.067).
    width_J
        Gaussian level width Gamma (J): D_N ~ exp(-2 (E - E_N)^2 / Gamma^2).
    temperature_K
        Temperature (K), > 0.
    g_factor
        |g*| for the Zeeman splitting (default GaAs, 0.44).
    eps_r
        Relative permittivity for the exchange term; None: no exchange correction.

    Examples
    --------
    >>> sheet = LandauSheet(5.0, 0.067, 0.5e-3 * 1.602e-19, 0.3, eps_r=12.9)
    >>> sheet.filling(2.0e15)  # doctest: +SKIP
    """

    field_T: float
    mass_ratio: float
    width_J: float
    temperature_K: float
    g_factor: float = G_FACTOR_GAAS
    eps_r: float | None = None

    def __post_init__(self):
        for key, lo in (("field_T", 0.0), ("mass_ratio", 0.0), ("width_J", 0.0)):
            v = getattr(self, key)
            if not (isinstance(v, int | float) and math.isfinite(v) and v > lo):
                raise InputError(f"{key} must be > {lo:g}, got {v!r}", key=key)
        if not (math.isfinite(self.temperature_K) and self.temperature_K > 0):
            raise InputError(f"temperature must be > 0 K, got {self.temperature_K!r}")
        if self.eps_r is not None and not self.eps_r > 0:
            raise InputError("eps_r must be > 0", key="eps_r")

    @property
    def degeneracy_m2(self) -> float:
        """States per area of one spin-resolved level, eB/h (m^-2)."""
        return sc.e * self.field_T / sc.h

    def filling(self, n_m2):
        """nu = n h / (e B)."""
        return np.asarray(n_m2, dtype=float) / self.degeneracy_m2

    def _levels(self, mu_max: float) -> np.ndarray:
        hw = cyclotron_energy(self.field_T, self.mass_ratio)
        smear = 4.0 * self.width_J + 60.0 * sc.k * self.temperature_K
        n_orb = int(max(mu_max, 0.0) / hw + smear / hw + 3)
        return level_energies(self.field_T, self.mass_ratio, self.g_factor, n_orb)

    def density(self, mu_J) -> np.ndarray:
        """n(mu) (m^-2) at the sheet's temperature; mu from the subband bottom (J)."""
        return self._tabulate(np.asarray(mu_J, dtype=float))[0]

    def dos(self, mu_J) -> np.ndarray:
        """Thermodynamic dn/dmu (J^-1 m^-2) at chemical potential mu, without exchange."""
        return self._tabulate(np.asarray(mu_J, dtype=float))[1]

    def _tabulate(self, mu: np.ndarray):
        kT = sc.k * self.temperature_K
        d, occ, dos = _smeared_tables(self.width_J, kT)
        levels = self._levels(float(np.max(mu, initial=0.0)))
        delta = mu[..., None] - levels
        o = np.interp(delta, d, occ, left=0.0, right=1.0)
        g = np.interp(delta, d, dos, left=0.0, right=0.0)
        deg = self.degeneracy_m2
        return deg * o.sum(axis=-1), deg * g.sum(axis=-1)

    def chemical_potential(self, n_m2) -> np.ndarray:
        """mu(n) (J from the subband bottom) by inverting n(mu) on a fine table."""
        n = np.asarray(n_m2, dtype=float)
        mu_grid, n_grid, _ = self._table(float(np.max(n, initial=0.0)))
        return np.interp(n, n_grid, mu_grid)

    def _table(self, n_max: float):
        kT = sc.k * self.temperature_K
        D0 = zero_field_dos(self.mass_ratio)
        mu_hi = max(n_max, self.degeneracy_m2) / D0 * 1.5 + 8 * self.width_J + 40 * kT
        lo = -(4.0 * self.width_J + 40 * kT)
        step = min(self.width_J / 40.0, kT / 4.0, (mu_hi - lo) / 200.0)
        npts = int(min(200_000, np.ceil((mu_hi - lo) / step) + 1))
        mu = np.linspace(lo, mu_hi, npts)
        n, g = self._tabulate(mu)
        # strictly increasing n for the inversion (flat tails below the lowest level)
        n = np.maximum.accumulate(n + 1e-12 * np.arange(n.size))
        return mu, n, g

    def thermodynamic_dos(self, n_m2) -> np.ndarray:
        """dn/dmu (J^-1 m^-2) at density n: the Landau-level DOS smeared by T, with the exchange
        correction when ``eps_r`` is set: 1 / (1/D_LL + d^2(n eps_x)/dn^2).

        A negative total (exchange-driven negative compressibility) is returned as is; callers
        that need a positive screening response cap it (see :meth:`screening_dos`).
        """
        n = np.asarray(n_m2, dtype=float)
        mu_grid, n_grid, g_grid = self._table(float(np.max(n, initial=0.0)))
        mu = np.interp(n, n_grid, mu_grid)
        D = np.interp(mu, mu_grid, g_grid)
        if self.eps_r is None:
            return D
        with np.errstate(divide="ignore"):
            inv = np.where(D > 0, 1.0 / np.maximum(D, 1e-300), np.inf)
        total = inv + exchange_dmu_dn(n, self.eps_r)
        with np.errstate(divide="ignore"):
            return 1.0 / total

    def screening_dos(self, n_m2, cap: float = 100.0) -> np.ndarray:
        """The thermodynamic DOS as a screening response: values above ``cap`` times the
        zero-field DOS, and negative values (negative compressibility), become ``cap`` D_0 (the
        sheet then screens as a metal)."""
        D = self.thermodynamic_dos(n_m2)
        top = cap * zero_field_dos(self.mass_ratio)
        return np.where((D < 0) | (D > top), top, D)
