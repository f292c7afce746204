"""Calibration: fit one stack parameter so that one measured number is reproduced.

Targets: the zero-bias sheet density of a named well, the total zero-bias density of all wells
(what a Hall measurement of the whole wafer gives), or the depletion threshold (gate voltage) of a
named well. The parameter is any stack parameter path (``surface.barrier``,
``doping.delta_upper.sheet``, ...). The fit is a bracketed root search (Brent's method,
``scipy.optimize.brentq``) on model minus measurement; every evaluation is a full freeze-out plus
low-temperature solve of the modified stack.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import constants as sc
from scipy.optimize import brentq

from ..errors import InputError
from ..results import Table, flatten
from .analysis import subband_wells
from .options import BandsOptions
from .solve import check_gate_voltage, freeze_out, solve_at, solve_bands

__all__ = ["CalibrationResult", "calibrate", "threshold_voltage"]

TARGETS = ("density", "total", "threshold")


@dataclass(frozen=True)
class CalibrationResult:
    """Outcome of :func:`calibrate` (SI)."""

    parameter: str
    initial_value: float
    fitted_value: float
    target: str
    well: str
    measured: float
    achieved: float
    evaluations: int
    stack: object

    def to_dict(self) -> dict:
        unit = "V" if self.target == "threshold" else "m2"
        return {
            "parameter": self.parameter,
            "initial_value_SI": self.initial_value,
            "fitted_value_SI": self.fitted_value,
            "target": self.target,
            "well": self.well,
            f"measured_{'sheet_density_m2' if unit == 'm2' else 'threshold_V'}": self.measured,
            f"achieved_{'sheet_density_m2' if unit == 'm2' else 'threshold_V'}": self.achieved,
            "evaluations": self.evaluations,
        }

    def summary(self) -> dict[str, float]:
        """Flat numbers of :meth:`to_dict` (SI, units in the keys)."""
        return flatten(self.to_dict())

    def table(self) -> Table:
        """One row: initial and fitted parameter (SI), measured and achieved target (SI)."""
        cols = ("initial_value_SI", "fitted_value_SI", "measured_SI", "achieved_SI", "evaluations")
        row = (self.initial_value, self.fitted_value, self.measured, self.achieved)
        return Table(cols, np.array([[*row, self.evaluations]], dtype=float))


def _lowest_in_well(stack, frozen, v, t, opts, well_index: int, gated: bool) -> float:
    st = solve_at(stack, frozen, v, t, opts, gated=gated)
    w = subband_wells(frozen.layout, st.psi)[:, list(frozen.layout.well_layers)]
    owner = w.argmax(axis=1)
    k = frozen.layout.well_layers.index(well_index)
    mine = [s for s in range(len(owner)) if owner[s] == k]
    return float(st.energies_J[mine[0]]) if mine else 0.05 * sc.e


def threshold_voltage(
    stack, well: str, *, options: BandsOptions | None = None, guess: float = -0.5
) -> float:
    """Gate voltage where the lowest subband of ``well`` reaches the Fermi level (V)."""
    opts = options or BandsOptions()
    names = [lay.name for lay in stack.layers]
    if well not in names or stack.layers[names.index(well)].well is None:
        raise InputError(f"'{well}' is not a well of this stack", source=stack.source, key="--well")
    frozen = freeze_out(stack, opts)
    t = stack.temperature
    gated = stack.surface.kind == "exposed"
    li = names.index(well)
    vmax = stack.surface.barrier / sc.e - 0.05

    def f(v: float) -> float:
        check_gate_voltage(stack, v, "threshold search")
        return _lowest_in_well(stack, frozen, v, t, opts, li, gated)

    hi = min(0.0, vmax)
    f_hi = f(hi)
    lo = min(guess, hi - 0.1)
    span = 0.25
    while f_hi > 0 and hi < vmax:
        lo, hi = hi, min(hi + span, vmax)
        f_hi = f(hi)
        span *= 2
    if f_hi > 0:
        raise InputError(
            f"well '{well}' stays empty up to the forward limit {vmax:.2f} V", key="--well"
        )
    f_lo = f(lo)
    while f_lo < 0:
        hi, lo = lo, lo - span
        span *= 2
        if lo < -20.0:
            raise InputError(f"well '{well}' does not empty above -20 V", key="--well")
        f_lo = f(lo)
    return float(brentq(f, lo, hi, xtol=1e-6))


def calibrate(
    stack,
    parameter: str,
    *,
    target: str,
    well: str | None = None,
    measured: float,
    bracket: tuple[float, float] | None = None,
    options: BandsOptions | None = None,
) -> CalibrationResult:
    """Fit ``parameter`` so that the model reproduces ``measured``.

    Parameters
    ----------
    stack
        Starting stack.
    parameter
        Stack parameter path (``surface.barrier``, ``doping.delta_upper.sheet``).
    target
        ``"density"`` (zero-bias sheet density of ``well``, m^-2), ``"total"`` (zero-bias sheet
        density summed over all wells, m^-2: the Hall density of a wafer whose wells all
        conduct in parallel) or ``"threshold"`` (depletion voltage of ``well``, V).
    well
        Name of a well layer (not used by ``"total"``).
    measured
        The measured value (SI).
    bracket
        Search interval for the parameter (SI); default +-50% around its current value
        (+-0.3 eV for energies near zero).

    Returns
    -------
    CalibrationResult
        With ``stack`` the calibrated stack (write it with ``stack.to_toml()``).
    """
    opts = options or BandsOptions()
    if target not in TARGETS:
        raise InputError(
            f"target must be one of {', '.join(TARGETS)}, got '{target}'", key="--target"
        )
    names = [lay.name for lay in stack.layers]
    if target != "total" and (well not in names or stack.layers[names.index(well)].well is None):
        wells = ", ".join(lay.name for lay in stack.wells())
        raise InputError(f"'{well}' is not a well; wells: {wells}", key="--well")
    if not math.isfinite(measured) or (target != "threshold" and measured <= 0):
        raise InputError("the measured density must be > 0", key="--measured")
    p0 = stack.get(parameter)
    if not isinstance(p0, float):
        raise InputError(f"'{parameter}' is not a numeric parameter", key="--parameter")
    if bracket is None:
        if abs(p0) < 0.05 * sc.e and parameter.endswith(("barrier", "level", "band_offset")):
            bracket = (p0 - 0.3 * sc.e, p0 + 0.3 * sc.e)
        else:
            bracket = tuple(sorted((0.5 * p0, 1.5 * p0)))
    evals = [0]
    achieved = {}

    def model(p: float) -> float:
        evals[0] += 1
        s = stack.with_value(parameter, p)
        if target == "density":
            r = solve_bands(s, options=opts)
            val = r.well(well).sheet_density_m2
        elif target == "total":
            r = solve_bands(s, options=opts)
            val = sum(w.sheet_density_m2 for w in r.wells)
        else:
            val = threshold_voltage(s, well, options=opts)
        achieved[p] = val
        return val - measured

    a, b = bracket
    fa, fb = model(a), model(b)
    if fa * fb > 0:
        unit = "V" if target == "threshold" else "cm^-2"
        scale = 1.0 if target == "threshold" else 1e4
        raise InputError(
            f"the measured {target} {measured / scale:.4g} {unit} is not reached for {parameter} "
            f"in [{a:.4g}, {b:.4g}] (SI): the model gives {achieved[a] / scale:.4g} to "
            f"{achieved[b] / scale:.4g} {unit}; give a wider --range",
            key="--range",
        )
    xtol = 1e-6 * max(abs(a), abs(b))
    p = brentq(model, a, b, xtol=xtol, rtol=1e-10)
    fitted = stack.with_value(parameter, float(p))
    val = model(p) + measured
    return CalibrationResult(
        parameter=parameter,
        initial_value=float(p0),
        fitted_value=float(p),
        target=target,
        well=well if target != "total" else "all wells",
        measured=float(measured),
        achieved=float(val),
        evaluations=evals[0],
        stack=fitted,
    )
