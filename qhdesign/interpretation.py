"""What a measured interferometer says back: K_IL/K_I, the area and the corrected anyonic phase.

Pure functions on top of :mod:`qhdesign.interferometer` (no FEM). The inputs are measured values
with standard uncertainties (SI); the outputs carry first-order propagated uncertainties
(:func:`qhdesign.interferometer.propagate`, checked against Monte Carlo in the tests).
Derivations: docs/interferometer.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from qhdesign import interferometer as itf
from qhdesign.errors import InputError

__all__ = ["Measured", "Measurement", "interpret_measurement"]


@dataclass(frozen=True)
class Measured:
    """A measured value and its standard uncertainty (same SI unit; sigma 0 = exact)."""

    value: float
    sigma: float = 0.0

    def __post_init__(self):
        if not (math.isfinite(self.value) and math.isfinite(self.sigma) and self.sigma >= 0):
            raise InputError(f"bad measured value {self.value!r} +- {self.sigma!r}")


@dataclass(frozen=True)
class Measurement:
    """Measured interferometer figures (SI).

    Attributes
    ----------
    period_compressible_T, period_incompressible_T
        Field periods where quasiparticles enter freely, and at fixed quasiparticle number.
    filling
        Laughlin filling nu = 1/m (e*/e = nu).
    area_ratio
        A_L / A_I (default exactly 1).
    period_gate_V, field_T
        Optional plunger-gate period (AB regime) and the field it was taken at.
    jump_rad
        Optional measured phase jump per added quasiparticle (rad).
    """

    period_compressible_T: Measured
    period_incompressible_T: Measured
    filling: float = 1 / 3
    area_ratio: Measured = Measured(1.0)
    period_gate_V: Measured | None = None
    field_T: Measured | None = None
    jump_rad: Measured | None = None

    def __post_init__(self):
        itf.check_filling(self.filling)
        if (self.period_gate_V is None) != (self.field_T is None):
            raise InputError(
                "a gate period needs the field it was measured at (and vice versa)",
                key="field_T" if self.field_T is None else "period_gate_V",  # the missing one
            )


def interpret_measurement(m: Measurement) -> dict:
    """K_IL/K_I, A_I, the effective radius, dA/dV and the corrected anyonic phase (SI, with
    ``*_uncertainty`` entries: one standard deviation, first order)."""
    nu = m.filling
    vals = {
        "dc": m.period_compressible_T.value,
        "di": m.period_incompressible_T.value,
        "rho": m.area_ratio.value,
    }
    sig = {
        "dc": m.period_compressible_T.sigma,
        "di": m.period_incompressible_T.sigma,
        "rho": m.area_ratio.sigma,
    }

    def ratio(dc, di, rho, **_):
        return itf.ratio_from_periods(dc, di, nu, rho)

    def area(dc, **_):
        return itf.area_from_period_compressible_m2(dc)

    def radius(dc, **_):
        return math.sqrt(itf.area_from_period_compressible_m2(dc) / math.pi)

    r, sr = itf.propagate(ratio, vals, sig)
    A, sA = itf.propagate(area, vals, sig)
    R, sR = itf.propagate(radius, vals, sig)
    out: dict = {
        "filling": nu,
        "K_IL_over_K_I": r,
        "K_IL_over_K_I_uncertainty": sr,
        "A_I_m2": A,
        "A_I_uncertainty_m2": sA,
        "A_L_m2": A * m.area_ratio.value,
        "effective_radius_m": R,
        "effective_radius_uncertainty_m": sR,
        "regime": itf.regime(r),
        "dA_I_dV_m2_per_V": None,
        "dA_I_dV_uncertainty_m2_per_V": None,
        "anyonic_phase_rad": None,
        "anyonic_phase_uncertainty_rad": None,
        "anyonic_phase_over_2pi": None,
        "anyonic_phase_expected_over_2pi": nu,
        "jump_expected_rad": itf.phase_jump_rad(nu, r) if r < 1 else None,
    }
    if m.period_gate_V is not None and m.field_T is not None:
        vals_g = {"pv": m.period_gate_V.value, "B": m.field_T.value}
        sig_g = {"pv": m.period_gate_V.sigma, "B": m.field_T.sigma}
        d, sd = itf.propagate(
            lambda pv, B: itf.dA_dV_from_period_gate_m2_per_V(nu, B, pv), vals_g, sig_g
        )
        out["dA_I_dV_m2_per_V"], out["dA_I_dV_uncertainty_m2_per_V"] = d, sd
    if m.jump_rad is not None:
        if not r < 1:
            raise InputError(
                f"K_IL/K_I = {r:.3g} >= 1 from these periods: the jump cannot be corrected",
                key="period_incompressible_T",
            )
        vals_j = {**vals, "jump": m.jump_rad.value}
        sig_j = {**sig, "jump": m.jump_rad.sigma}

        def phase(dc, di, rho, jump):
            return itf.anyonic_phase_from_jump_rad(jump, itf.ratio_from_periods(dc, di, nu, rho))

        th, sth = itf.propagate(phase, vals_j, sig_j)
        out["anyonic_phase_rad"] = th
        out["anyonic_phase_uncertainty_rad"] = sth
        out["anyonic_phase_over_2pi"] = th / (2 * math.pi)
    return out
