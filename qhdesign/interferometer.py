"""Closed-form figures of a quantum Hall Fabry–Pérot interferometer (pure functions, SI).

Everything here follows from one energy functional of the interfering edge I and the localized
bulk L (charges in units of e, counted as electrons; Halperin, Stern, Neder, Rosenow 2011)::

    E = K_I dn_I^2 / 2 + K_L dn_L^2 / 2 + K_IL dn_I dn_L

together with the interference phase of a Laughlin state nu = 1/m (e*/e = nu)::

    theta / 2 pi = nu B Abar_I / Phi0 + dn_I - nu N_L,

where Abar_I is the area the edge encloses when it carries no excess charge, dn_I is the edge's
excess charge (the edge moves out by dA with nu B dA / Phi0 = dn_I, which adds (e*/e) B dA/Phi0
= dn_I to the phase), and N_L counts the quasiholes in the bulk, each of which changes the phase
by -nu (the enclosed charge; Arovas, Schrieffer, Wilczek 1984). The bulk excess charge is
dn_L = nu (B A_L / Phi0 - N_L) - q_L(V_gate). The edge is compressible: it relaxes to
dn_I = -(K_IL/K_I) dn_L, which leaves E(N_L) = K~ dn_L^2 / 2 with K~ = K_L - K_IL^2/K_I.
The derivations of every formula below are in docs/interferometer.md; the tests check them
against a brute-force minimisation of E over N_L (tests/reference/test_interferometer.py).

The API is stable: other stages import these functions. All arguments and returns are SI
(m, m^2, T, V, J, K, rad, m/s, F); ``filling`` is the Laughlin filling nu = 1/m (e*/e = nu);
``ratio`` is r = K_IL/K_I.

References
----------
B. I. Halperin, A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011).
B. Rosenow, A. Stern, Phys. Rev. Lett. 124, 106805 (2020).
D. Arovas, J. R. Schrieffer, F. Wilczek, Phys. Rev. Lett. 53, 722 (1984).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping

import numpy as np
from scipy import constants as sc
from scipy.optimize import brentq

from qhdesign.errors import InputError

__all__ = [
    "PHI0",
    "REGIME_THRESHOLDS",
    "anyonic_phase_from_jump_rad",
    "area_from_period_compressible_m2",
    "charging_energy_J",
    "check_filling",
    "constant_phase_slope_V_per_T",
    "coupling_ratio",
    "dA_dV_from_period_gate_m2_per_V",
    "energy_J",
    "energy_to_kelvin",
    "gap_from_window_J",
    "k_tilde_J",
    "period_compressible_T",
    "period_compressible_general_T",
    "period_gate_ab_V",
    "period_gate_cd_V",
    "period_incompressible_T",
    "phase_jump_rad",
    "propagate",
    "quasiparticle_gap_J",
    "ratio_from_periods",
    "regime",
    "temperature_from_visibility_K",
    "thermal_scale_K",
    "visibility",
    "window_T",
    "window_occupation",
    "window_thermal_T",
]

#: Flux quantum h/e (Wb).
PHI0 = sc.h / sc.e
#: Regime verdict on r = K_IL/K_I (docs/interferometer.md, "Regime"): AB below the first,
#: CD above the second, crossover between.
REGIME_THRESHOLDS = (0.2, 0.8)


def _bad(message: str, name: str) -> InputError:
    return InputError(message, source=f"argument {name}")


def _positive(value: float, name: str) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0):
        raise _bad(f"must be > 0 and finite, got {value!r}", name)
    return v


def check_filling(filling: float) -> float:
    """Return nu if it is a Laughlin filling 1/m (m = 1, 3, 5, ...; e*/e = nu), else raise."""
    nu = float(filling)
    m = round(1.0 / nu) if nu > 0 else 0
    if not (0 < nu <= 1 and m >= 1 and m % 2 == 1 and abs(nu * m - 1.0) < 1e-9):
        raise _bad(
            f"filling {filling!r} is not a Laughlin filling 1/m (1, 1/3, 1/5, ...)", "filling"
        )
    return nu


# ---------------------------------------------------------------------------- the functional
def energy_J(dn_I, dn_L, K_I_J: float, K_L_J: float, K_IL_J: float):
    """E = K_I dn_I^2/2 + K_L dn_L^2/2 + K_IL dn_I dn_L (J); dn in units of e (arrays broadcast)."""
    dn_I, dn_L = np.asarray(dn_I, float), np.asarray(dn_L, float)
    return 0.5 * K_I_J * dn_I**2 + 0.5 * K_L_J * dn_L**2 + K_IL_J * dn_I * dn_L


def coupling_ratio(K_I_J: float, K_IL_J: float) -> float:
    """r = K_IL/K_I (dimensionless)."""
    return float(K_IL_J) / _positive(K_I_J, "K_I_J")


def k_tilde_J(K_I_J: float, K_L_J: float, K_IL_J: float) -> float:
    """K~ = K_L - K_IL^2/K_I (J): the bulk's energy per e^2 once the edge has relaxed."""
    return float(K_L_J) - float(K_IL_J) ** 2 / _positive(K_I_J, "K_I_J")


def charging_energy_J(K_I_J: float, K_L_J: float, K_IL_J: float) -> float:
    """E_C = K~/2 (J), the convention under which the window reads as below."""
    return 0.5 * k_tilde_J(K_I_J, K_L_J, K_IL_J)


def energy_to_kelvin(energy_J: float) -> float:
    """E / k_B (K): an energy as a temperature, to set beside k_B T."""
    return float(energy_J) / sc.k


# ---------------------------------------------------------------------------- periods
def period_incompressible_T(
    A_I_m2: float, ratio: float, filling: float, A_L_m2: float | None = None
) -> float:
    """Field period at fixed quasiparticle number: (e/e*) Phi0 / (A_I - r A_L) (T).

    ``A_L_m2`` defaults to ``A_I_m2``. Raises if A_I - r A_L <= 0 (no periodicity left).
    """
    nu = check_filling(filling)
    A_I = _positive(A_I_m2, "A_I_m2")
    A_L = A_I if A_L_m2 is None else _positive(A_L_m2, "A_L_m2")
    eff = A_I - float(ratio) * A_L
    if not eff > 0:
        raise _bad(f"A_I - r A_L = {eff:.4g} m^2 <= 0: no incompressible period", "ratio")
    return PHI0 / (nu * eff)


def period_compressible_T(A_I_m2: float) -> float:
    """Field period where quasiparticles enter the bulk freely: Phi0 / A_I (T).

    Exact in our model when A_L = A_I (the phase is then periodic in B with this period for
    every r); for A_L != A_I see :func:`period_compressible_general_T`.
    """
    return PHI0 / _positive(A_I_m2, "A_I_m2")


def period_compressible_general_T(A_I_m2: float, A_L_m2: float, filling: float) -> float:
    """Fundamental oscillating harmonic when quasiparticles enter freely and A_L != A_I (T).

    Phi0 / (nu A_I + (1 - nu) A_L): the phase is nu B (A_I - A_L)/Phi0 plus a function of
    period Phi0/A_L; its first harmonic carries this period (docs/interferometer.md). Equals
    :func:`period_compressible_T` for A_L = A_I.
    """
    nu = check_filling(filling)
    A_I, A_L = _positive(A_I_m2, "A_I_m2"), _positive(A_L_m2, "A_L_m2")
    return PHI0 / (nu * A_I + (1.0 - nu) * A_L)


def window_T(A_L_m2: float, filling: float, gap_qp_J: float, charging_energy_J: float) -> float:
    """Fixed-filling window at T = 0: (Phi0/(nu A_L)) [e*/e + (e/e*) Delta_qp / E_C] (T).

    The field range over which the bulk holds no quasiparticle (N_L = 0 is the ground state),
    not the transport plateau width. ``gap_qp_J`` is the creation energy of ONE quasiparticle
    (see :func:`quasiparticle_gap_J`); ``charging_energy_J`` is E_C = K~/2.
    """
    nu = check_filling(filling)
    A_L = _positive(A_L_m2, "A_L_m2")
    gap = float(gap_qp_J)
    if not (math.isfinite(gap) and gap >= 0):
        raise _bad(f"must be >= 0, got {gap_qp_J!r}", "gap_qp_J")
    E_C = _positive(charging_energy_J, "charging_energy_J")
    return PHI0 / (nu * A_L) * (nu + gap / (nu * E_C))


def _logistic(x):
    return 0.5 * (1.0 + np.tanh(0.5 * np.asarray(x, float)))


def window_occupation(
    field_offset_T,
    A_L_m2: float,
    filling: float,
    gap_qp_J: float,
    charging_energy_J: float,
    temperature_K: float,
):
    """Probability that the bulk holds no quasiparticle, against the field (two-edge form).

    ``field_offset_T`` is measured from the window's centre. Each edge is a Fermi function of
    width w = k_B T Phi0 / (2 E_C nu^2 A_L) in B (the energy difference of N_L = 0 and 1 is
    linear in B with slope 2 E_C nu^2 A_L / Phi0); P0 = f((W/2 - b)/w) f((W/2 + b)/w).
    Neglects states two or more quasiparticles away: at an edge the second quasiparticle costs
    only 2 E_C nu^2 more than the first, so the form holds for k_B T << 2 E_C nu^2.
    """
    nu = check_filling(filling)
    W = window_T(A_L_m2, filling, gap_qp_J, charging_energy_J)
    T = _positive(temperature_K, "temperature_K")
    w = sc.k * T * PHI0 / (2.0 * charging_energy_J * nu**2 * A_L_m2)
    b = np.asarray(field_offset_T, float)
    return _logistic((0.5 * W - b) / w) * _logistic((0.5 * W + b) / w)


def window_thermal_T(
    A_L_m2: float,
    filling: float,
    gap_qp_J: float,
    charging_energy_J: float,
    temperature_K: float,
) -> float:
    """Thermal window: the integral of :func:`window_occupation` over B (T).

    Closed form W / (1 - exp(-W/w)) with W the T = 0 window and w the edge width; tends to W
    for k_B T << the energies, and to w when the window is washed out (docs/interferometer.md).
    The field range where P0 > 1/2 stays W.
    """
    nu = check_filling(filling)
    W = window_T(A_L_m2, filling, gap_qp_J, charging_energy_J)
    T = _positive(temperature_K, "temperature_K")
    w = sc.k * T * PHI0 / (2.0 * charging_energy_J * nu**2 * A_L_m2)
    return W / -math.expm1(-W / w)


def quasiparticle_gap_J(value_J: float, kind: str = "quasiparticle") -> float:
    """The creation energy of one quasiparticle, from either gap a user may quote (J).

    ``kind="quasiparticle"`` returns the value; ``kind="activation"`` takes the transport
    activation gap Delta_act of R_xx ~ exp(-Delta_act / (2 k_B T)), the energy of a
    quasiparticle-quasihole pair, and returns Delta_act / 2 (common practice).
    """
    v = _positive(value_J, "gap")
    if kind == "quasiparticle":
        return v
    if kind == "activation":
        return 0.5 * v
    raise _bad(f"gap kind '{kind}'; allowed: quasiparticle, activation", "kind")


def gap_from_window_J(
    window_T_: float, A_L_m2: float, filling: float, charging_energy_J: float
) -> float:
    """Inverse of :func:`window_T` in the gap: Delta_qp (J) from a window width (T)."""
    nu = check_filling(filling)
    x = float(window_T_) * nu * _positive(A_L_m2, "A_L_m2") / PHI0 - nu
    return x * nu * _positive(charging_energy_J, "charging_energy_J")


# ---------------------------------------------------------------------------- phase jump
def phase_jump_rad(filling: float, ratio: float) -> float:
    """Magnitude of the observed phase jump when one quasiparticle enters: 2 pi nu (1 - r).

    The anyonic value 2 pi nu (= 2 pi/3 at nu = 1/3) is reduced because the edge gives back
    the fraction r of the added charge. Sign convention in docs/interferometer.md.
    """
    return 2.0 * math.pi * check_filling(filling) * (1.0 - float(ratio))


def anyonic_phase_from_jump_rad(jump_rad: float, ratio: float) -> float:
    """The anyonic phase corrected for bulk–edge coupling: jump / (1 - r) (rad)."""
    r = float(ratio)
    if not r < 1:
        raise _bad(f"r = {r:.4g} >= 1: the jump carries no phase information", "ratio")
    return float(jump_rad) / (1.0 - r)


# ---------------------------------------------------------------------------- inverses
def area_from_period_compressible_m2(period_T: float) -> float:
    """A_I = Phi0 / dB_comp (m^2); the inverse of :func:`period_compressible_T`."""
    return PHI0 / _positive(period_T, "period_T")


def ratio_from_periods(
    period_compressible_T_: float,
    period_incompressible_T_: float,
    filling: float,
    area_ratio: float = 1.0,
) -> float:
    """r = K_IL/K_I from the two field periods (A_I from the compressible one, A_L = rho A_I).

    r = (1 - (e/e*) dB_comp / dB_inc) / rho with rho = A_L/A_I (default 1).
    """
    nu = check_filling(filling)
    rho = _positive(area_ratio, "area_ratio")
    dc = _positive(period_compressible_T_, "period_compressible_T")
    di = _positive(period_incompressible_T_, "period_incompressible_T")
    return (1.0 - dc / (nu * di)) / rho


# ---------------------------------------------------------------------------- gate periods
def period_gate_ab_V(filling: float, field_T: float, dA_dV_m2_per_V: float) -> float:
    """Plunger-gate period in the AB regime: (e/e*) Phi0 / (B |dA_I/dV|) (V)."""
    nu = check_filling(filling)
    B = _positive(abs(field_T), "field_T")
    s = _positive(abs(dA_dV_m2_per_V), "dA_dV_m2_per_V")
    return PHI0 / (nu * B * s)


def dA_dV_from_period_gate_m2_per_V(filling: float, field_T: float, period_V: float) -> float:
    """|dA_I/dV| (m^2/V) from an AB gate period; the inverse of :func:`period_gate_ab_V`."""
    nu = check_filling(filling)
    return PHI0 / (nu * _positive(abs(field_T), "field_T") * _positive(period_V, "period_V"))


def period_gate_cd_V(filling: float, bulk_gate_capacitance_F: float) -> float:
    """Plunger-gate period in the Coulomb-dominated regime: e* / |C_gL| (V).

    C_gL is the charge the gate induces on the bulk per volt with the edge held at the
    contacts' potential (the gate–island lever arm times C_LL = e^2/K~).
    """
    nu = check_filling(filling)
    return nu * sc.e / _positive(abs(bulk_gate_capacitance_F), "bulk_gate_capacitance_F")


def constant_phase_slope_V_per_T(
    regime_: str,
    *,
    filling: float | None = None,
    field_T: float | None = None,
    A_I_m2: float | None = None,
    dA_dV_m2_per_V: float | None = None,
    A_L_m2: float | None = None,
    bulk_gate_capacitance_F: float | None = None,
) -> float:
    """Slope dV/dB (V/T) of the constant-phase lines in the field–gate plane.

    AB: the phase grows with B A_I, so dV/dB = -A_I / (B dA_I/dV) (negative for a plunger
    that widens the island). CD: the lines follow the bulk's charge degeneracy nu B A_L/Phi0 =
    C_gL V / e, so dV/dB = nu e A_L / (Phi0 C_gL) (positive). Opposite signs (HSNR 2011).
    """
    if regime_ == "AB":
        if field_T is None or A_I_m2 is None or dA_dV_m2_per_V is None:
            raise _bad("AB slope needs field_T, A_I_m2 and dA_dV_m2_per_V", "regime")
        return -_positive(A_I_m2, "A_I_m2") / (float(field_T) * float(dA_dV_m2_per_V))
    if regime_ == "CD":
        if filling is None or A_L_m2 is None or bulk_gate_capacitance_F is None:
            raise _bad("CD slope needs filling, A_L_m2 and bulk_gate_capacitance_F", "regime")
        nu = check_filling(filling)
        return nu * sc.e * _positive(A_L_m2, "A_L_m2") / (PHI0 * float(bulk_gate_capacitance_F))
    raise _bad(f"regime '{regime_}' has no single slope; allowed: AB, CD", "regime")


def regime(ratio: float, thresholds: tuple[float, float] = REGIME_THRESHOLDS) -> str:
    """``"AB"``, ``"crossover"`` or ``"CD"`` from r = K_IL/K_I (docs/interferometer.md).

    AB when r < 0.2 (the incompressible flux slope A_I - r A_L is within 20 % of the uncoupled
    value and the jump keeps >= 80 % of its anyonic value), CD when r > 0.8 (the flux slope at
    fixed charge has fallen below 20 %: the pattern is set by charging), crossover between.
    """
    r = float(ratio)
    if not math.isfinite(r):
        raise _bad(f"r = {ratio!r} is not finite", "ratio")
    lo, hi = thresholds
    return "AB" if r < lo else ("CD" if r > hi else "crossover")


# ---------------------------------------------------------------------------- coherence
def thermal_scale_K(edge_velocity_m_s: float, path_length_m: float) -> float:
    """T0 = hbar v / (pi k_B L) (K): visibility x/sinh x with x = T/T0 (integer-edge form).

    L is the extra path of one round trip (the loop's circumference for a Fabry–Pérot).
    Derived from the thermal average of exp(i eps L/(hbar v)) over -df/deps.
    """
    v = _positive(edge_velocity_m_s, "edge_velocity_m_s")
    L = _positive(path_length_m, "path_length_m")
    return sc.hbar * v / (math.pi * sc.k * L)


def visibility(temperature_K: float, T0_K: float) -> float:
    """Thermal damping factor x / sinh x, x = T/T0 (1 at T = 0; ~ 2x exp(-x) for x >> 1)."""
    x = float(temperature_K) / _positive(T0_K, "T0_K")
    if x < 0:
        raise _bad(f"temperature must be >= 0, got {temperature_K!r}", "temperature_K")
    if x < 1e-4:
        return 1.0 - x * x / 6.0
    if x > 700:
        return 0.0
    return x / math.sinh(x)


def temperature_from_visibility_K(vis: float, T0_K: float) -> float:
    """Inverse of :func:`visibility` (K); vis in (0, 1]."""
    v = float(vis)
    if not 0 < v <= 1:
        raise _bad(f"visibility must lie in (0, 1], got {vis!r}", "visibility")
    if v == 1.0:
        return 0.0
    T0 = _positive(T0_K, "T0_K")
    hi = 1.0
    while hi / math.sinh(hi) > v:
        hi *= 2.0
    x = brentq(lambda x: x / math.sinh(x) - v, 1e-12, hi, xtol=1e-15, rtol=1e-15, maxiter=500)
    return x * T0


# ---------------------------------------------------------------------------- uncertainty
def propagate(
    func: Callable[..., float],
    values: Mapping[str, float],
    sigmas: Mapping[str, float],
) -> tuple[float, float]:
    """Value and first-order standard uncertainty of ``func(**values)`` (independent inputs).

    Derivatives by central differences with steps of 1e-6 of each sigma (or of the value);
    inputs without a sigma are exact.
    """
    f0 = float(func(**values))
    var = 0.0
    for name, s in sigmas.items():
        if not s:
            continue
        h = 1e-6 * abs(s)
        up, dn = dict(values), dict(values)
        up[name] = values[name] + h
        dn[name] = values[name] - h
        d = (float(func(**up)) - float(func(**dn))) / (2.0 * h)
        var += (d * s) ** 2
    return f0, math.sqrt(var)
