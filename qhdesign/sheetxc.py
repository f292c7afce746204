"""Exchange and correlation of a 2D electron sheet: the sheet's own chemical potential mu(n) and
a monotone sheet law n(x) for the FEM stages.

The FEM stages reduce every well to a Thomas–Fermi sheet, n = D k_B T ln(1 + exp(mu/k_B T)) with
mu the chemical potential measured from the subband edge. This module adds the in-plane
exchange (and optionally correlation) energy of the sheet's own electrons to that
relation, as in the local-density treatment of a 2D electron gas:

    mu(n) = k_B T ln(exp(n/(D k_B T)) - 1) + mu_x(n) + mu_c(n),
    mu_x = d(n eps_x)/dn = (3/2) eps_x,     mu_c = d(n eps_c)/dn = eps_c - (r_s/2) d eps_c/d r_s,

and tabulates its inverse as a relative :class:`~qhdesign.sheetlaw.SheetLaw` (x = mu/e).

Exchange (Hartree–Fock, unpolarized 2D gas, exact for the uniform gas):
    eps_x = -(4/(3 pi)) (e^2/(4 pi eps)) k_F = -8 sqrt(2)/(3 pi r_s) Ry*,   k_F = sqrt(2 pi n),
so dmu_x/dn = (3/4) eps_x/n; relative to the kinetic pi hbar^2/m* it is -(2/pi)/(k_F a_B*) =
-sqrt(2) r_s/pi (:mod:`qhdesign.landau` holds the same two formulas for the island's linear
response; they are reused here).

Correlation (optional): the fit of Attaccalite, Moroni, Gori-Giorgi and Bachelet to their
fixed-node diffusion Monte Carlo energies of the 2D gas, unpolarized part (zeta = 0):
    eps_c = alpha_0(r_s) = A + (B r_s + C r_s^2 + D r_s^3) ln(1 + 1/(E r_s + F r_s^(3/2)
            + G r_s^2 + H r_s^3)),   D = -A H,
in effective Hartree (Ha* = (m*/m0)/eps_r^2 Ha) with r_s = 1/(sqrt(pi n) a_B*).

Negative compressibility and the floor
--------------------------------------
With exchange, dmu/dn turns negative below about 6e10 cm^-2 in GaAs (r_s > pi/sqrt(2) for
exchange alone; a little higher with correlation). A local sheet law n(mu) is then not single-
valued, and the nonlinear Poisson problem of the FEM stages loses its unique solution (a local
negative dmu/dn wins over the Coulomb term at the shortest wavelengths, where the true, non-local
exchange does not act). The treatment here is a **compressibility floor**: dmu/dn is replaced by
max(dmu/dn, f pi hbar^2/m*) with a floor fraction f (default :data:`DEFAULT_COMPRESSIBILITY_FLOOR`;
the island's linear response caps the DOS the same way, at 100 times m*/(pi hbar^2)), and mu(n)
is its integral from the empty sheet:

    mu_f(n) = mu(n) + Delta(n),   Delta(n) = int_0^n max(0, f/D - dmu/dn) dn'.

So the sheet starts to fill at its subband edge as the published model does (an empty well is
placed by its subband energy), dmu/dn is the published one wherever the floor does not bind, and
above the window where it binds mu_f - mu is a constant, Delta_f (reported: the potential by
which the floor reduces the swing between a full and an empty sheet).

numpy and scipy only.

References
----------
G. F. Giuliani, G. Vignale, Quantum Theory of the Electron Liquid (Cambridge, 2005), ch. 1-2
(2D Hartree–Fock exchange energy and compressibility).
B. Tanatar, D. M. Ceperley, Phys. Rev. B 39, 5005 (1989) (the 2D exchange energy
-8 sqrt(2)/(3 pi r_s) Ry; 2D quantum Monte Carlo energies).
C. Attaccalite, S. Moroni, P. Gori-Giorgi, G. B. Bachelet, Phys. Rev. Lett. 88, 256601 (2002);
erratum Phys. Rev. Lett. 91, 109902(E) (2003) (the correlation fit and its parameters).
J. P. Eisenstein, L. N. Pfeiffer, K. W. West, Phys. Rev. Lett. 68, 674 (1992) (negative
compressibility of a 2D sheet, measured).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.landau import exchange_dmu_dn, exchange_energy_per_particle

__all__ = [
    "DEFAULT_COMPRESSIBILITY_FLOOR",
    "SHEET_XC_MODELS",
    "SHEET_XC_REFERENCES",
    "check_sheet_xc",
    "correlation_dmu_dn",
    "correlation_energy_per_particle",
    "correlation_potential",
    "describe_sheet_xc",
    "effective_units",
    "exchange_potential",
    "rs_2d",
    "sheet_chemical_potential",
    "sheet_xc_law",
    "with_sheet_xc",
]

#: Models of the sheets' own exchange and correlation (the ``sheet_xc`` argument).
SHEET_XC_MODELS = ("none", "exchange", "exchange+correlation")

#: The published source of each model (reported in the JSON).
SHEET_XC_REFERENCES = {
    "none": "",
    "exchange": (
        "2D Hartree-Fock exchange, eps_x = -8 sqrt(2)/(3 pi r_s) Ry* (G. F. Giuliani and "
        "G. Vignale, Quantum Theory of the Electron Liquid, 2005, ch. 2; B. Tanatar and "
        "D. M. Ceperley, Phys. Rev. B 39, 5005 (1989))"
    ),
    "exchange+correlation": (
        "2D Hartree-Fock exchange plus the correlation fit of C. Attaccalite, S. Moroni, "
        "P. Gori-Giorgi and G. B. Bachelet, Phys. Rev. Lett. 88, 256601 (2002) (unpolarized)"
    ),
}

#: Default floor on dmu/dn as a fraction of the bare pi hbar^2/m* (see the module notes).
DEFAULT_COMPRESSIBILITY_FLOOR = 0.1

# Attaccalite, Moroni, Gori-Giorgi, Bachelet (2002), unpolarized row (alpha_0) of their parameter
# table, Hartree atomic units; D = -A H.
_AMGB_A = -0.1925
_AMGB_B = 0.0863136
_AMGB_C = 0.0572384
_AMGB_E = 1.0022
_AMGB_F = -0.02069
_AMGB_G = 0.33997
_AMGB_H = 1.747e-2
_AMGB_D = -_AMGB_A * _AMGB_H

_A0 = sc.physical_constants["Bohr radius"][0]
_HARTREE = sc.physical_constants["Hartree energy"][0]


def effective_units(mass_ratio: float, eps_r: float) -> tuple[float, float]:
    """Effective Bohr radius a_B* = (eps_r/m) a_0 (m) and Hartree Ha* = (m/eps_r^2) Ha (J)."""
    return eps_r / mass_ratio * _A0, mass_ratio / eps_r**2 * _HARTREE


def rs_2d(n_m2, mass_ratio: float, eps_r: float):
    """2D density parameter r_s = 1/(sqrt(pi n) a_B*) (dimensionless); inf where n <= 0."""
    n = np.asarray(n_m2, dtype=float)
    a, _ = effective_units(mass_ratio, eps_r)
    with np.errstate(divide="ignore"):
        return np.where(n > 0, 1.0 / (np.sqrt(np.pi * np.maximum(n, 1e-300)) * a), np.inf)


def _amgb(rs):
    """alpha_0(r_s) and its first two r_s-derivatives (Hartree)."""
    r = np.asarray(rs, dtype=float)
    P = _AMGB_B * r + _AMGB_C * r**2 + _AMGB_D * r**3
    P1 = _AMGB_B + 2 * _AMGB_C * r + 3 * _AMGB_D * r**2
    P2 = 2 * _AMGB_C + 6 * _AMGB_D * r
    sq = np.sqrt(r)
    Q = _AMGB_E * r + _AMGB_F * r * sq + _AMGB_G * r**2 + _AMGB_H * r**3
    Q1 = _AMGB_E + 1.5 * _AMGB_F * sq + 2 * _AMGB_G * r + 3 * _AMGB_H * r**2
    with np.errstate(divide="ignore", invalid="ignore"):
        Q2 = 0.75 * _AMGB_F / sq + 2 * _AMGB_G + 6 * _AMGB_H * r
        L = np.log1p(1.0 / Q)
        QQ = Q * (Q + 1.0)
        L1 = -Q1 / QQ
        L2 = -(Q2 * QQ - Q1 * Q1 * (2.0 * Q + 1.0)) / QQ**2
    return _AMGB_A + P * L, P1 * L + P * L1, P2 * L + 2 * P1 * L1 + P * L2


def correlation_energy_per_particle(n_m2, mass_ratio: float, eps_r: float):
    """Correlation energy per particle eps_c of the unpolarized 2D gas (J), the fit of
    Attaccalite et al., Phys. Rev. Lett. 88, 256601 (2002), in effective Hartree."""
    _, ha = effective_units(mass_ratio, eps_r)
    return ha * _amgb(rs_2d(n_m2, mass_ratio, eps_r))[0]


def correlation_potential(n_m2, mass_ratio: float, eps_r: float):
    """mu_c = d(n eps_c)/dn = eps_c - (r_s/2) d eps_c/d r_s (J) (2D: r_s ~ n^(-1/2))."""
    _, ha = effective_units(mass_ratio, eps_r)
    rs = rs_2d(n_m2, mass_ratio, eps_r)
    e0, e1, _ = _amgb(rs)
    return ha * (e0 - 0.5 * rs * e1)


def correlation_dmu_dn(n_m2, mass_ratio: float, eps_r: float):
    """dmu_c/dn (J m^2): (d mu_c/d r_s)(d r_s/dn) with d r_s/dn = -r_s/(2n)."""
    n = np.asarray(n_m2, dtype=float)
    _, ha = effective_units(mass_ratio, eps_r)
    rs = rs_2d(n, mass_ratio, eps_r)
    _, e1, e2 = _amgb(rs)
    dmu_drs = 0.5 * e1 - 0.5 * rs * e2
    with np.errstate(divide="ignore", invalid="ignore"):
        return ha * dmu_drs * (-rs / (2.0 * n))


def exchange_potential(n_m2, eps_r: float):
    """mu_x = d(n eps_x)/dn = (3/2) eps_x (J), unpolarized 2D Hartree–Fock exchange."""
    return 1.5 * exchange_energy_per_particle(n_m2, eps_r)


def check_sheet_xc(sheet_xc: str, compressibility_floor: float) -> None:
    """Refuse an unknown model (key ``sheet_xc``) or a floor outside (0, 1]
    (key ``compressibility_floor``) before any solve."""
    _check_model(sheet_xc)
    _check_floor(compressibility_floor)


def _check_model(sheet_xc: str) -> None:
    if sheet_xc not in SHEET_XC_MODELS:
        raise InputError(
            f"'{sheet_xc}' is not a sheet exchange-correlation model; allowed: "
            f"{', '.join(SHEET_XC_MODELS)}",
            key="sheet_xc",
        )


def _check_floor(floor: float) -> None:
    if not (isinstance(floor, int | float) and math.isfinite(floor) and 0.0 < floor <= 1.0):
        raise InputError(
            f"compressibility floor must lie in (0, 1] (a fraction of pi hbar^2/m*), got {floor!r}",
            key="compressibility_floor",
        )


def _kinetic(n, D, kT):
    """Thomas–Fermi sheet at temperature T: mu_kin(n) = kT ln(expm1(y)), y = n/(D kT), and its
    derivative 1/(D (1 - exp(-y)))."""
    y = n / (D * kT)
    mu = np.where(y > 30.0, kT * (y + np.log1p(-np.exp(-np.minimum(y, 700.0)))), 0.0)
    small = y <= 30.0
    mu = np.where(small, kT * np.log(np.expm1(np.where(small, y, 1.0))), mu)
    g = 1.0 / (D * -np.expm1(-y))
    return mu, g


def sheet_chemical_potential(
    n_m2,
    dos_J_m2: float,
    eps_r: float,
    temperature_K: float,
    sheet_xc: str = "exchange",
    *,
    compressibility_floor: float | None = None,
):
    """mu(n) (J from the subband edge) and dmu/dn (J m^2) of a sheet, shape of ``n_m2``.

    Parameters
    ----------
    n_m2
        Densities (m^-2), > 0, any shape.
    dos_J_m2
        Density of states m*/(pi hbar^2) with spin 2 (J^-1 m^-2).
    eps_r
        Relative permittivity around the sheet.
    temperature_K
        Temperature (K), > 0.
    sheet_xc
        One of :data:`SHEET_XC_MODELS`.
    compressibility_floor
        None: the published mu(n) as it is (dmu/dn may be negative). A fraction f in (0, 1]:
        dmu/dn floored at f/D, and mu(n) = published mu(n) + int_0^n max(0, f/D - dmu/dn) dn'
        (equal to the published value for the empty sheet), see the module notes.
    """
    _check_model(sheet_xc)
    n = np.asarray(n_m2, dtype=float)
    if np.any(~(n > 0)):
        raise InputError("sheet densities must be > 0", key="n_m2")
    if not (dos_J_m2 > 0 and eps_r > 0 and temperature_K > 0):
        raise InputError("need DOS > 0, eps_r > 0 and T > 0", key="dos_J_m2")
    D = float(dos_J_m2)
    kT = sc.k * float(temperature_K)
    m = D * math.pi * sc.hbar**2 / sc.m_e

    def parts(nn):
        mu, g = _kinetic(nn, D, kT)
        if sheet_xc != "none":
            mu = mu + exchange_potential(nn, eps_r)
            g = g + exchange_dmu_dn(nn, eps_r)
        if sheet_xc == "exchange+correlation":
            mu = mu + correlation_potential(nn, m, eps_r)
            g = g + correlation_dmu_dn(nn, m, eps_r)
        return mu, g

    if compressibility_floor is None:
        return parts(n)
    _check_floor(compressibility_floor)
    mu, g = parts(n)
    return mu + _floor_shift(n, parts, D, kT, compressibility_floor), np.maximum(
        g, compressibility_floor / D
    )


def _floor_shift(n, parts, D, kT, floor):
    """int_0^n max(0, f/D - dmu/dn) dn' (J) at each n: the floor's excess, integrated up from the
    empty sheet on a fine log grid. The excess is continuous and vanishes in the Boltzmann tail
    (there dmu/dn = k_B T/n dominates), so the lower limit is any density deep in that tail."""
    n = np.asarray(n, dtype=float)
    lo = min(1e-6 * D * kT, 1e6, float(np.min(n)))
    hi = float(np.max(n))
    if not hi > lo:
        return np.zeros_like(n)
    grid = np.geomspace(lo, hi, 40001)
    _, g = parts(grid)
    excess = np.maximum(0.0, floor / D - g)
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (excess[1:] + excess[:-1]) * np.diff(grid))))
    return np.interp(n, grid, cum)


def sheet_xc_law(
    dos_J_m2: float,
    eps_r: float,
    temperature_K: float,
    sheet_xc: str = "exchange",
    *,
    compressibility_floor: float = DEFAULT_COMPRESSIBILITY_FLOOR,
    n_max_m2: float = 1.0e16,
    knots: int = 2000,
):
    """The Thomas–Fermi sheet with its own exchange (and correlation) as a relative sheet law.

    Tabulates n against x = mu(n)/e (V, from the subband edge) on ``knots`` densities spaced
    geometrically from far below the thermal density D k_B T (or far below where the floor
    binds) up to ``n_max_m2``, plus a first knot at n = 0 ten k_B T/e lower; above
    ``n_max_m2`` the law continues with its last slope.

    Parameters
    ----------
    dos_J_m2, eps_r, temperature_K, sheet_xc
        As in :func:`sheet_chemical_potential`; ``sheet_xc`` is ``"exchange"`` or
        ``"exchange+correlation"``.
    compressibility_floor
        Floor on dmu/dn as a fraction of pi hbar^2/m*, in (0, 1].
    n_max_m2
        Top of the table (m^-2), at least 1e14 (the law's mu is the published one there).
    knots
        Number of knots (200 to 20000).

    Returns
    -------
    qhdesign.sheetlaw.SheetLaw
        ``absolute=False``; its label names the model and the floor.
    """
    from qhdesign.sheetlaw import SheetLaw

    _check_model(sheet_xc)
    if sheet_xc == "none":
        raise InputError(
            "sheet_xc 'none' is the closed-form Thomas-Fermi sheet; it needs no law",
            key="sheet_xc",
        )
    _check_floor(compressibility_floor)
    if not (1e14 <= n_max_m2 <= 1e18):
        raise InputError("n_max_m2 must lie in [1e14, 1e18] m^-2", key="n_max_m2")
    if not (200 <= int(knots) <= 20000):
        raise InputError("knots must lie in 200..20000", key="knots")
    D = float(dos_J_m2)
    kT = sc.k * float(temperature_K)
    # lowest density: far into the Boltzmann tail of the thermal sheet, and far below any density
    # where exchange matters (there mu_x ~ -n^(1/2) is below a micro-eV)
    n_lo = min(1e-6 * D * kT, 1e6)
    n = np.geomspace(n_lo, float(n_max_m2), int(knots))
    mu, _ = sheet_chemical_potential(
        n,
        D,
        eps_r,
        temperature_K,
        sheet_xc,
        compressibility_floor=compressibility_floor,
    )
    x = mu / sc.e
    x0 = x[0] - 10.0 * kT / sc.e
    label = f"TF + {sheet_xc} (floor {compressibility_floor:g} pi hbar^2/m*)"
    return SheetLaw(
        np.concatenate(([x0], x)), np.concatenate(([0.0], n)), absolute=False, label=label
    )


def _eps_at(section, z_m: float) -> float:
    """Relative permittivity of the layer that holds depth ``z_m``."""
    z = np.asarray(section.layer_z_m, dtype=float)
    eps = np.asarray(section.layer_permittivity, dtype=float)
    k = int(np.clip(np.searchsorted(z, z_m, side="right") - 1, 0, eps.size - 1))
    return float(eps[k])


def _table_top(section) -> float:
    return max([4.0 * s.density_m2 for s in section.sheets] + [1e16])


def with_sheet_xc(
    section,
    sheet_xc: str,
    *,
    compressibility_floor: float = DEFAULT_COMPRESSIBILITY_FLOOR,
):
    """A cross-section whose sheets carry the exchange(-correlation) law (``law`` field of each
    :class:`~qhdesign.section.model.SheetSpec`), or the section unchanged for ``"none"``.

    Each sheet's law uses its own DOS, the section's temperature and the permittivity of the
    layer that holds the sheet; the table reaches four times the largest far-field density (at
    least 1e12 cm^-2). Pure: ``dataclasses.replace`` on the section and its sheets.
    """
    from dataclasses import replace

    _check_model(sheet_xc)
    _check_floor(compressibility_floor)
    if sheet_xc == "none":
        return section
    if any(getattr(getattr(s, "law", None), "absolute", False) for s in section.sheets):
        raise InputError(
            "the sheets already follow tables from gated 1D solves, which carry the 1D stage's "
            "own exchange-correlation; the sheets' own exchange-correlation needs constant-DOS "
            "sheets",
            key="sheet_xc",
        )
    top = _table_top(section)
    sheets = []
    for s in section.sheets:
        law = sheet_xc_law(
            s.dos_J_m2,
            _eps_at(section, s.z_m),
            section.temperature_K,
            sheet_xc,
            compressibility_floor=compressibility_floor,
            n_max_m2=top,
        )
        sheets.append(replace(s, law=law))
    return replace(section, sheets=tuple(sheets))


def describe_sheet_xc(
    section,
    sheet_xc: str,
    *,
    compressibility_floor: float = DEFAULT_COMPRESSIBILITY_FLOOR,
) -> dict:
    """What the sheet exchange(-correlation) option does to each sheet of ``section``, for the
    JSON reports (SI, units in the keys).

    Per sheet: the law's label, eps_r, the ratio of the published dmu/dn to the bare
    pi hbar^2/m* at the far-field density, the density below which the published dmu/dn is
    negative, the density window where the floor binds, and Delta_f (eV; see the module notes).
    """
    _check_model(sheet_xc)
    _check_floor(compressibility_floor)
    out = {
        "model": sheet_xc,
        "reference": SHEET_XC_REFERENCES[sheet_xc],
        "compressibility_floor": compressibility_floor if sheet_xc != "none" else None,
        "treatment": (
            "dmu/dn floored at compressibility_floor * pi hbar^2/m* (negative compressibility)"
            if sheet_xc != "none"
            else "closed-form Thomas-Fermi sheet"
        ),
        "sheets": {},
    }
    if sheet_xc == "none":
        return out
    top = _table_top(section)
    for s in section.sheets:
        eps = _eps_at(section, s.z_m)
        D = s.dos_J_m2
        T = section.temperature_K
        grid = np.geomspace(1e12, top, 4001)
        _, g = sheet_chemical_potential(grid, D, eps, T, sheet_xc)
        negative = grid[g < 0]
        binds = grid[g < compressibility_floor / D]
        mu_f, _ = sheet_chemical_potential(
            np.array([top]), D, eps, T, sheet_xc, compressibility_floor=compressibility_floor
        )
        mu, _ = sheet_chemical_potential(np.array([top]), D, eps, T, sheet_xc)
        ratio = None
        if s.density_m2 > 0:
            ratio = float(sheet_chemical_potential(s.density_m2, D, eps, T, sheet_xc)[1] * D)
        out["sheets"][s.name] = {
            "law": sheet_xc_law(
                D,
                eps,
                T,
                sheet_xc,
                compressibility_floor=compressibility_floor,
                n_max_m2=top,
                knots=200,
            ).label,
            "eps_r": eps,
            "dmu_dn_over_bare_at_density": ratio,
            "negative_below_m2": float(negative.max()) if negative.size else None,
            "floor_binds_below_m2": float(binds.max()) if binds.size else None,
            "floor_shift_eV": float((mu_f[0] - mu[0]) / sc.e),
        }
    return out
