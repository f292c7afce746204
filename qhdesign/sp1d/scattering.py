"""Disorder estimates per well: transport and quantum lifetimes, mobility, level broadening.

Born approximation (lowest order in the impurity potential), T = 0, one subband per well, the
scattering potential screened by the well's own 2D electrons (static Thomas–Fermi, which for a
degenerate 2DEG at T = 0 equals the static RPA for every wavevector q <= 2 k_F that elastic
scattering at the Fermi level can transfer). Each well's own 1D wavefunction enters through
form factors. The derivation, the choices and what is left out are in ``docs/disorder.md``.

Sources: ionised donors of every doped layer (frozen ionised densities of the 1D stage, at
their depths), the net frozen surface charge, a uniform background of charged impurities, and
optionally interface roughness. Pure functions of a :class:`~qhdesign.sp1d.BandsResult` and a
:class:`ScatteringOptions`; numpy/scipy only.

References
----------
T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982) (form factors, screening,
Fang–Howard forms, interface roughness).
F. Stern, Phys. Rev. Lett. 18, 546 (1967) (static 2D polarisability).
S. Das Sarma and F. Stern, Phys. Rev. B 32, 8442 (1985) (tau_t versus tau_q).
A. Gold, Phys. Rev. B 35, 723 (1987); A. Gold, Phys. Rev. B 38, 10798 (1988).
J. H. Davies, The Physics of Low-Dimensional Semiconductors (Cambridge, 1998), ch. 9.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from ..errors import InputError
from .formfactors import WellProfile

__all__ = [
    "DEFAULT_BACKGROUND_M3",
    "DEFAULT_MIN_MOBILITY_M2_VS",
    "ScatteringOptions",
    "ScatteringResult",
    "SourceRates",
    "WellProfile",
    "WellScattering",
    "angular_nodes",
    "fermi_wavevector",
    "fit_background",
    "level_broadening",
    "lifetimes",
    "scattering",
    "thomas_fermi_wavevector",
    "well_scattering",
]

#: Default uniform background of charged impurities: 1e14 cm^-3 (common practice: the residual
#: level usually assumed for good MBE-grown GaAs/AlGaAs; clean systems reach ~1e13 cm^-3).
DEFAULT_BACKGROUND_M3 = 1e20
#: Default threshold of the low-mobility flag: 1e6 cm^2/Vs (common practice: the floor below
#: which quantum Hall interferometry on GaAs wells is rarely attempted).
DEFAULT_MIN_MOBILITY_M2_VS = 100.0
_CM2_VS = 1e-4  # m^2/Vs per cm^2/Vs


@dataclass(frozen=True)
class ScatteringOptions:
    """What the disorder estimate is told (SI).

    Attributes
    ----------
    background_m3
        Uniform density of charged background impurities over the whole stack (m^-3), >= 0.
    roughness_height_m
        RMS interface height Delta (m); 0 switches roughness off.
    roughness_length_m
        Gaussian correlation length Lambda of the roughness (m), > 0; needed when the height is.
    surface
        Count the net charge of an exposed surface (surface states) as a sheet of charged
        scatterers at z = 0 (a lower bound: only the net charge is known). Never counted under
        a metal gate.
    screening
        ``"thomas-fermi"`` (static, the well's own electrons) or ``"none"``.
    min_mobility_m2_Vs
        The low-mobility flag is raised when the primary's estimate is below this (m^2/Vs).
    panels, order
        Angular quadrature: geometric panels in the scattering half-angle, Gauss–Legendre order.
    """

    background_m3: float = DEFAULT_BACKGROUND_M3
    roughness_height_m: float = 0.0
    roughness_length_m: float | None = None
    surface: bool = True
    screening: str = "thomas-fermi"
    min_mobility_m2_Vs: float = DEFAULT_MIN_MOBILITY_M2_VS
    panels: int = 12
    order: int = 8

    def __post_init__(self):
        b = self.background_m3
        if not (math.isfinite(b) and 0.0 <= b <= 1e24):
            raise InputError(
                f"background impurity density {b * 1e-6:.3g} cm^-3 is out of range; "
                "allowed 0 to 1e18 cm^-3",
                key="background",
            )
        h = self.roughness_height_m
        if not (math.isfinite(h) and 0.0 <= h <= 10e-9):
            raise InputError(
                f"roughness height {h * 1e9:.3g} nm is out of range; allowed 0 to 10 nm",
                key="roughness_height",
            )
        lam = self.roughness_length_m
        if lam is not None and not (math.isfinite(lam) and 0.0 < lam <= 1e-6):
            raise InputError(
                f"roughness correlation length {lam * 1e9:.3g} nm is out of range; "
                "allowed above 0 nm up to 1000 nm",
                key="roughness_length",
            )
        if h > 0.0 and lam is None:
            raise InputError(
                "a roughness height needs a correlation length (above 0 nm)",
                key="roughness_length",
            )
        if self.screening not in ("thomas-fermi", "none"):
            raise InputError(
                f"screening '{self.screening}' unknown; allowed: thomas-fermi, none",
                key="screening",
            )
        m = self.min_mobility_m2_Vs
        if not (math.isfinite(m) and m > 0.0):
            raise InputError(
                f"minimum mobility {m / _CM2_VS:.3g} cm^2/Vs must be above 0", key="min_mobility"
            )


# --------------------------------------------------------------------------- small formulas
def fermi_wavevector(sheet_density_m2: float) -> float:
    """k_F = sqrt(2 pi n) of a spin-degenerate single-valley 2DEG (m^-1)."""
    return math.sqrt(2.0 * math.pi * max(sheet_density_m2, 0.0))


def thomas_fermi_wavevector(mass_rel: float, permittivity_rel: float) -> float:
    """2D Thomas–Fermi wavevector q_s = e^2 m* / (2 pi eps hbar^2) (m^-1), spin 2, one valley.

    References
    ----------
    T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982).
    """
    eps = permittivity_rel * sc.epsilon_0
    return sc.e**2 * mass_rel * sc.m_e / (2.0 * math.pi * eps * sc.hbar**2)


def level_broadening(quantum_lifetime_s: float) -> float:
    """Landau-level (single-particle) broadening Gamma = hbar / (2 tau_q), in J.

    Call this with a well's ``quantum_lifetime_s`` (from :func:`scattering`) to set the width
    of the Landau levels in an in-field screening model. ``nan`` or ``inf`` lifetimes give
    ``nan`` and ``0`` respectively.

    Parameters
    ----------
    quantum_lifetime_s
        Quantum (single-particle) lifetime tau_q (s), > 0.

    Returns
    -------
    float
        Gamma (J); divide by ``scipy.constants.e`` for eV.

    References
    ----------
    T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982) (level
    width hbar/(2 tau) of the self-consistent Born approximation's Lorentzian form).

    Examples
    --------
    >>> from scipy import constants as sc
    >>> level_broadening(1e-12) == sc.hbar / (2 * 1e-12)  # analytic: Gamma = hbar/(2 tau_q)
    True
    """
    if not quantum_lifetime_s > 0.0:
        if math.isnan(quantum_lifetime_s):
            return math.nan
        raise InputError(f"quantum lifetime must be > 0 s, got {quantum_lifetime_s}")
    return sc.hbar / (2.0 * quantum_lifetime_s)


def angular_nodes(k_F: float, panels: int = 12, order: int = 8):
    """Wavevector nodes q and weights of the two Born angular averages.

    With ``W(q)`` the summed squared screened matrix element (J^2 m^2),
    ``1/tau_t = (m*/hbar^3) sum(w_t W(q))`` and ``1/tau_q = (m*/hbar^3) sum(w_q W(q))``.
    The half-angle phi (q = 2 k_F sin phi) is split in geometric panels from 1e-4 to pi/2 so
    that the small-q peak of remote scattering (width ~ 1/(4 k_F d)) is resolved.

    Returns
    -------
    q, w_t, w_q : ndarray, shape (P*order + order,)
    """
    phi, dphi = _half_angle_nodes(panels, order)
    q = 2.0 * k_F * np.sin(phi)
    w_t = (4.0 / math.pi) * np.sin(phi) ** 2 * dphi
    w_q = (2.0 / math.pi) * dphi
    return q, w_t, w_q


@functools.cache
def _half_angle_nodes(panels: int, order: int) -> tuple[np.ndarray, np.ndarray]:
    x, w = np.polynomial.legendre.leggauss(order)
    edges = np.concatenate(([0.0], np.geomspace(1e-4, 0.5 * math.pi, panels)))
    a, b = edges[:-1, None], edges[1:, None]
    phi = (0.5 * (b - a) * x + 0.5 * (a + b)).ravel()
    dphi = (0.5 * (b - a) * w).ravel()
    phi.flags.writeable = False
    dphi.flags.writeable = False
    return phi, dphi


def lifetimes(strength_J2m2: np.ndarray, mass_rel: float, w_t, w_q) -> tuple[float, float]:
    """(1/tau_t, 1/tau_q) in s^-1 from W(q) on the nodes of :func:`angular_nodes`."""
    pre = mass_rel * sc.m_e / sc.hbar**3
    return float(pre * np.dot(w_t, strength_J2m2)), float(pre * np.dot(w_q, strength_J2m2))


# --------------------------------------------------------------------------- one well
@dataclass(frozen=True)
class SourceRates:
    """One scattering source of one well: its transport and quantum rates (s^-1)."""

    name: str
    kind: str
    transport_rate_s: float
    quantum_rate_s: float


@dataclass(frozen=True)
class WellScattering:
    """The estimate for one well (SI). ``sources`` add up (Matthiessen's rule)."""

    name: str
    role: str
    sheet_density_m2: float
    mass_rel: float
    fermi_wavevector_m: float
    screening_wavevector_m: float
    sources: tuple[SourceRates, ...] = ()

    @property
    def transport_lifetime_s(self) -> float:
        r = sum(s.transport_rate_s for s in self.sources)
        return 1.0 / r if r > 0 else (math.inf if self.sources else math.nan)

    @property
    def quantum_lifetime_s(self) -> float:
        r = sum(s.quantum_rate_s for s in self.sources)
        return 1.0 / r if r > 0 else (math.inf if self.sources else math.nan)

    @property
    def mobility_m2_per_Vs(self) -> float:
        return sc.e * self.transport_lifetime_s / (self.mass_rel * sc.m_e)

    @property
    def level_broadening_J(self) -> float:
        t = self.quantum_lifetime_s
        return 0.0 if math.isinf(t) else level_broadening(t)

    def to_dict(self) -> dict:
        mass = self.mass_rel * sc.m_e
        rt = sum(s.transport_rate_s for s in self.sources)
        rq = sum(s.quantum_rate_s for s in self.sources)
        return {
            "mobility_m2_per_Vs": _num(self.mobility_m2_per_Vs),
            "transport_lifetime_s": _num(self.transport_lifetime_s),
            "quantum_lifetime_s": _num(self.quantum_lifetime_s),
            "level_broadening_J": _num(self.level_broadening_J),
            "scattering_sources": {
                s.name: {
                    "kind": s.kind,
                    "transport_rate_s-1": s.transport_rate_s,
                    "quantum_rate_s-1": s.quantum_rate_s,
                    "mobility_alone_m2_per_Vs": _num(
                        sc.e / (mass * s.transport_rate_s) if s.transport_rate_s > 0 else math.inf
                    ),
                    "transport_share": _num(s.transport_rate_s / rt if rt > 0 else math.nan),
                    "quantum_share": _num(s.quantum_rate_s / rq if rq > 0 else math.nan),
                }
                for s in self.sources
            },
        }


def _num(x):
    return None if isinstance(x, float) and not math.isfinite(x) else x


def well_scattering(
    profile: WellProfile,
    *,
    sheet_density_m2: float,
    mass_rel: float,
    permittivity_rel: float,
    sheets: dict[str, tuple[np.ndarray, np.ndarray]] | None = None,
    background_m3: float = 0.0,
    background_span_m: tuple[float, float] | None = None,
    interfaces: tuple[tuple[float, float], ...] = (),
    roughness: tuple[float, float] | None = None,
    screening: str = "thomas-fermi",
    screening_wavevector_m: float | None = None,
    panels: int = 12,
    order: int = 8,
    name: str = "well",
    role: str = "",
) -> WellScattering:
    """Born rates of one 2DEG with density profile ``profile`` (all SI).

    Parameters
    ----------
    sheets
        Charged impurities by source name: ``(z_m, density_m2)`` arrays (depths, sheet densities
        of unit charges; several thin slices per source are allowed).
    background_m3, background_span_m
        Uniform impurity density (m^-3) over ``[z_a, z_b]``.
    interfaces
        ``(V0_J, rho_at_interface_m)`` per rough interface: the band step and |psi|^2 there.
    roughness
        ``(Delta_m, Lambda_m)``: RMS height and Gaussian correlation length.
    screening, screening_wavevector_m
        ``"thomas-fermi"`` or ``"none"``; q_s defaults to :func:`thomas_fermi_wavevector`.

    Notes
    -----
    W(q) = sum_i N_i [e^2 F(q, z_i) / (2 eps q eps_s(q))]^2 for charges and
    |dE/dz_I|^2 pi Delta^2 Lambda^2 exp(-q^2 Lambda^2 / 4) / eps_s(q)^2 per interface, with
    eps_s(q) = 1 + q_s F_s(q) / q; the rates follow from :func:`angular_nodes`.
    """
    k_F = fermi_wavevector(sheet_density_m2)
    q_s = (
        thomas_fermi_wavevector(mass_rel, permittivity_rel)
        if screening_wavevector_m is None
        else screening_wavevector_m
    )
    q, w_t, w_q = angular_nodes(k_F, panels, order)
    g = profile.grid_form_factor(q)
    eps_s = 1.0 + (q_s / q) * profile.screening_form_factor(q, g) if screening != "none" else 1.0
    coul = (sc.e**2 / (2.0 * permittivity_rel * sc.epsilon_0 * q * eps_s)) ** 2
    out = []
    for src, (zi, ni) in (sheets or {}).items():
        ni = np.asarray(ni, float)
        if not np.any(ni > 0):  # kept with zero rates: the same sources in every design
            out.append(SourceRates(src, "remote charges", 0.0, 0.0))
            continue
        f = profile.form_factor(q, zi, g)
        rt, rq = lifetimes(coul * (f**2 @ ni), mass_rel, w_t, w_q)
        out.append(SourceRates(src, "remote charges", rt, rq))
    if background_span_m is not None:
        rt = rq = 0.0
        if background_m3 > 0.0:
            f2 = profile.squared_layer_integral(q, *background_span_m, g)
            rt, rq = lifetimes(coul * background_m3 * f2, mass_rel, w_t, w_q)
        out.append(SourceRates("background", "uniform background charges", rt, rq))
    if roughness is not None and roughness[0] > 0.0 and interfaces:
        delta, lam = roughness
        step2 = sum((v0 * r0) ** 2 for v0, r0 in interfaces)
        w = step2 * math.pi * delta**2 * lam**2 * np.exp(-((q * lam) ** 2) / 4.0) / eps_s**2
        rt, rq = lifetimes(w, mass_rel, w_t, w_q)
        out.append(SourceRates("roughness", "interface roughness", rt, rq))
    return WellScattering(
        name=name,
        role=role,
        sheet_density_m2=float(sheet_density_m2),
        mass_rel=float(mass_rel),
        fermi_wavevector_m=k_F,
        screening_wavevector_m=float(q_s) if screening != "none" else 0.0,
        sources=tuple(out),
    )


# --------------------------------------------------------------------------- whole stack
#: A well below this sheet density gets no estimate (1e8 cm^-2: no 2DEG to speak of).
_EMPTY_M2 = 1e12


@dataclass(frozen=True)
class ScatteringResult:
    """Per-well disorder estimate of one :class:`~qhdesign.sp1d.BandsResult` (SI)."""

    wells: tuple[WellScattering, ...]
    options: ScatteringOptions
    low_mobility: bool
    warnings: tuple[str, ...] = field(default=())
    surface_counted: bool = False

    def well(self, name: str) -> WellScattering:
        for w in self.wells:
            if w.name == name:
                return w
        raise KeyError(name)

    def merge_into(self, bands: dict) -> dict:
        """Add the estimate to a ``BandsResult.to_dict()`` (``wells.<name>.mobility_m2_per_Vs``,
        ..., ``flags.low_mobility``, a ``disorder`` block with the options); returns it."""
        for w in self.wells:
            bands["wells"].setdefault(w.name, {}).update(w.to_dict())
        bands.setdefault("flags", {})["low_mobility"] = self.low_mobility
        o = self.options
        bands["disorder"] = {
            "model": "Born approximation, T = 0, lowest subband of each well, static "
            + (
                "Thomas-Fermi screening by the well's own electrons"
                if o.screening != "none"
                else "no screening"
            ),
            "background_m3": o.background_m3,
            "roughness_height_m": o.roughness_height_m,
            "roughness_length_m": o.roughness_length_m,
            "surface_charge_counted": self.surface_counted,
            "min_mobility_m2_per_Vs": o.min_mobility_m2_Vs,
        }
        bands.setdefault("warnings", []).extend(self.warnings)
        return bands

    def summary(self) -> dict[str, float]:
        """CSV columns (display units in the names)."""
        out: dict[str, float] = {}
        # the same source columns for every well (NaN where a well has no such source, e.g. an
        # empty well), so that the columns do not depend on which wells hold electrons
        names = list(dict.fromkeys(s.name for w in self.wells for s in w.sources))
        for w in self.wells:
            out[f"{w.name}_mobility_cm^2/Vs"] = w.mobility_m2_per_Vs / _CM2_VS
            out[f"{w.name}_quantum_lifetime_ps"] = w.quantum_lifetime_s * 1e12
            out[f"{w.name}_level_broadening_ueV"] = w.level_broadening_J / sc.e * 1e6
            rates = {s.name: s.transport_rate_s for s in w.sources}
            for name in names:
                r = rates.get(name)
                if r is None:
                    alone = math.nan
                else:
                    alone = sc.e / (w.mass_rel * sc.m_e * r) if r > 0 else math.inf
                out[f"{w.name}_mobility_{name}_cm^2/Vs"] = alone / _CM2_VS
        p = next((w for w in self.wells if w.role == "primary"), None)
        if p is not None:
            out["primary_mobility_cm^2/Vs"] = p.mobility_m2_per_Vs / _CM2_VS
            out["primary_quantum_lifetime_ps"] = p.quantum_lifetime_s * 1e12
        out["flag_low_mobility"] = float(self.low_mobility)
        return out


def _donor_sheets(result) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Ionised donors of each doped layer as thin sheets (one per grid cell), m and m^-2."""
    zc = np.asarray(result.cell_centres_m)
    n_cell = np.asarray(result.fixed_charge_C_m3) * np.diff(result.z_m) / sc.e
    out = {}
    for d in result.doping:
        if not (math.isfinite(d.z_top_m) and math.isfinite(d.z_bottom_m)):
            continue
        m = (zc >= d.z_top_m) & (zc <= d.z_bottom_m) & (n_cell > 0)
        if m.any():
            out[d.name] = (zc[m], n_cell[m])
    return out


def _interfaces(result, w, rho_nodes) -> tuple[tuple[float, float], ...]:
    """(band step, |psi|^2) at the top and bottom interface of well ``w``."""
    z = result.z_m
    u = result.conduction_band_J
    out = []
    for zi in (w.z_top_m, w.z_bottom_m):
        i = int(np.argmin(np.abs(z - zi)))
        if 0 < i < len(z) - 1:
            out.append((abs(float(u[i - 1] - u[i + 1])), float(rho_nodes[i])))
    return tuple(out)


def scattering(result, options: ScatteringOptions | None = None) -> ScatteringResult:
    """Mobility, transport and quantum lifetimes and level broadening of every well.

    Each well's lowest subband is treated as its own 2DEG with the well's whole sheet
    density, screened by its own electrons only (see ``docs/disorder.md`` for what that
    leaves out). Wells holding less than 1e8 cm^-2 get no estimate (NaN).

    Parameters
    ----------
    result
        A :class:`~qhdesign.sp1d.BandsResult`.
    options
        :class:`ScatteringOptions`.

    Returns
    -------
    ScatteringResult

    References
    ----------
    T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982);
    A. Gold, Phys. Rev. B 38, 10798 (1988); S. Das Sarma and F. Stern, Phys. Rev. B 32, 8442
    (1985).
    """
    o = options or ScatteringOptions()
    sheets = _donor_sheets(result)
    # surface states of a bare (exposed) surface are charged scatterers; a metal gate's charge
    # is a smooth sheet, not a random one, and is not counted
    counted = o.surface and result.surface_kind == "exposed"
    if o.surface:
        n_surf = abs(result.surface_charge_C_m2) / sc.e if counted else 0.0
        sheets["surface"] = (np.array([result.z_m[0]]), np.array([n_surf]))
    span = (float(result.z_m[0]), float(result.z_m[-1]))
    wells = []
    warn = []
    for w in result.wells:
        if not w.subbands or w.sheet_density_m2 < _EMPTY_M2:
            wells.append(WellScattering(w.name, w.role, w.sheet_density_m2, math.nan, 0.0, 0.0))
            continue
        s0 = w.subbands[0]
        rho = result.psi[s0] ** 2
        eps = w.permittivity_rel if math.isfinite(w.permittivity_rel) else 12.9
        if len(w.subbands) > 1 and result.subbands[w.subbands[1]].sheet_density_m2 > 1e-3 * (
            w.sheet_density_m2
        ):
            warn.append(
                f"well {w.name}: a second subband is occupied; the disorder estimate treats "
                "the well as one subband (intersubband scattering left out)"
            )
        wells.append(
            well_scattering(
                WellProfile.from_samples(result.z_m, rho),
                sheet_density_m2=w.sheet_density_m2,
                mass_rel=result.subbands[s0].mass_rel,
                permittivity_rel=eps,
                sheets=sheets,
                background_m3=o.background_m3,
                background_span_m=span,
                interfaces=_interfaces(result, w, rho) if o.roughness_height_m > 0 else (),
                roughness=(o.roughness_height_m, o.roughness_length_m or 0.0),
                screening=o.screening,
                panels=o.panels,
                order=o.order,
                name=w.name,
                role=w.role,
            )
        )
    prim = next((w for w in wells if w.role == "primary"), None)
    low = bool(prim is not None and prim.mobility_m2_per_Vs < o.min_mobility_m2_Vs)
    if low:
        warn.append(
            f"estimated mobility of the primary well {prim.mobility_m2_per_Vs / _CM2_VS:.3g} "
            f"cm^2/Vs is below the threshold {o.min_mobility_m2_Vs / _CM2_VS:.3g} cm^2/Vs"
        )
    return ScatteringResult(tuple(wells), o, low, tuple(warn), counted)


def fit_background(
    result, well: str, measured_mobility_m2_Vs: float, options: ScatteringOptions | None = None
) -> tuple[float, ScatteringResult]:
    """Background density that makes ``well``'s estimated mobility equal a measured one.

    The background rate is linear in its density (Born approximation; the screening does not
    depend on it), so the fit is closed-form:
    N_B = (1/mu_meas - 1/mu_others) / (1/mu_B per unit N_B), with mu_others from every other
    source.

    Returns
    -------
    (background_m3, ScatteringResult at the fitted density)

    Raises
    ------
    InputError
        Unknown or empty well, a non-positive measurement, or a measured mobility above what
        the other sources alone allow (no background density >= 0 reproduces it).
    """
    import dataclasses

    o = options or ScatteringOptions()
    names = [w.name for w in result.wells]
    if well not in names:
        raise InputError(f"'{well}' is not a well; wells: {', '.join(names)}", key="--well")
    if not (math.isfinite(measured_mobility_m2_Vs) and measured_mobility_m2_Vs > 0):
        raise InputError("the measured mobility must be above 0 cm^2/Vs", key="--mobility")
    unit = dataclasses.replace(o, background_m3=1e20)
    w = scattering(result, unit).well(well)
    if not w.sources:
        raise InputError(f"well '{well}' holds no electrons; nothing to fit", key="--well")
    mass = w.mass_rel * sc.m_e
    target = sc.e / (mass * measured_mobility_m2_Vs)  # 1/tau_t measured
    bg = sum(s.transport_rate_s for s in w.sources if s.name == "background")
    others = sum(s.transport_rate_s for s in w.sources if s.name != "background")
    if target <= others:
        raise InputError(
            f"the measured mobility {measured_mobility_m2_Vs / _CM2_VS:.4g} cm^2/Vs is above "
            f"what the other sources allow ({sc.e / (mass * others) / _CM2_VS:.4g} cm^2/Vs) "
            "with no background at all; check the stack's donors and the measurement",
            key="--mobility",
        )
    nb = 1e20 * (target - others) / bg
    return nb, scattering(result, dataclasses.replace(o, background_m3=nb))
