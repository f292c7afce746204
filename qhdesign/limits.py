"""Model limits shared by every stage: one rule each, written once.

The physics raises :class:`~qhdesign.errors.InputError` keyed by its own argument name
(``key="gate_voltage_V"``, no ``source``); the command line names the option the user typed and
a sweep names the spec key (see ``qhdesign.cli.common.translate`` and ``qhdesign.sweep.stages``).
"""

from __future__ import annotations

import math

from scipy import constants as sc

from .errors import InputError

__all__ = [
    "MAX_FIELD_T",
    "MIN_GATE_VOLTAGE_V",
    "MIN_LAYER_THICKNESS_M",
    "REFINE_RANGE",
    "check_field",
    "check_gate_voltage",
    "check_refine",
    "check_solve_temperature",
]

#: Most negative gate bias modelled (V): beyond it the gate dielectric or the Schottky contact
#: breaks down in practice (common practice for GaAs depletion gates).
MIN_GATE_VOLTAGE_V = -20.0
#: Largest perpendicular magnetic field accepted (T): above the highest static laboratory
#: fields (common practice).
MAX_FIELD_T = 100.0
#: Thinnest layer accepted: one monolayer of GaAs, a/2 with a = 0.56533 nm (Vurgaftman, Meyer,
#: Ram-Mohan, J. Appl. Phys. 89, 5815 (2001), Table III). A thinner "layer" is not a layer.
MIN_LAYER_THICKNESS_M = 0.5 * 0.56533e-9


def check_gate_voltage(
    v: float,
    barrier_J: float,
    key: str = "gate_voltage_V",
    *,
    what: str = "gate voltage",
    barrier_name: str = "surface.barrier",
) -> float:
    """The one gate-voltage rule of every stage: ``-20 V <= v <= barrier / e``.

    Past the Schottky barrier a metal gate conducts (forward current), so a voltage above the
    barrier is refused, in 1D and in 2D alike; the barrier itself (flat band under the gate) is
    the last voltage accepted. (Before, the 1D stage refused v = barrier and the 2D stage
    accepted it; the analytic 2D checks start at a zero barrier and 0 V.)

    Parameters
    ----------
    v
        Gate voltage (V).
    barrier_J
        Schottky barrier of the gate metal (J).
    key
        The caller's argument name, the key of the error.
    what
        How the message names the value ("gate voltage", "cool-down bias").
    barrier_name
        Where the barrier comes from, for the message.
    """
    vmax = barrier_J / sc.e
    if v is None or isinstance(v, bool) or not math.isfinite(v):
        raise InputError(f"{what} must be a finite number, got {v}", key=key)
    if v > vmax:
        raise InputError(
            f"{what} {v:+.3f} V is past the Schottky barrier ({vmax:.3f} eV, {barrier_name}): "
            f"the gate would conduct; allowed at or below {vmax:+.3f} V, down to "
            f"{MIN_GATE_VOLTAGE_V:g} V",
            key=key,
        )
    if v < MIN_GATE_VOLTAGE_V:
        raise InputError(
            f"{what} {v:+.3f} V is below {MIN_GATE_VOLTAGE_V:g} V (gate breakdown range); "
            f"allowed {MIN_GATE_VOLTAGE_V:g} V up to {vmax:+.3f} V (at or below the barrier)",
            key=key,
        )
    return float(v)


def check_field(b: float | None, key: str = "field_T") -> float | None:
    """A perpendicular field: ``0 T < B <= 100 T`` (``None`` passes: no field)."""
    if b is None:
        return None
    if isinstance(b, bool) or not math.isfinite(b) or not 0.0 < b <= MAX_FIELD_T:
        raise InputError(
            f"field {b:g} T is out of range; allowed above 0 T up to {MAX_FIELD_T:g} T", key=key
        )
    return float(b)


def check_solve_temperature(t: float, freeze_temperature: float, key: str = "temperature") -> float:
    """A solve temperature: above 0 K, at most 400 K and at most the donor freeze-out
    temperature (the donors' charge is frozen there; a hotter solve would unfreeze it)."""
    if t is None or isinstance(t, bool) or not math.isfinite(t) or not 0.0 < t <= 400.0:
        raise InputError(
            f"temperature {t} K is out of range; allowed above 0 K up to 400 K", key=key
        )
    if t > freeze_temperature:
        raise InputError(
            f"temperature {t:g} K is above the donor freeze-out temperature "
            f"{freeze_temperature:g} K (wafer.freeze_temperature); allowed up to "
            f"{freeze_temperature:g} K",
            key=key,
        )
    return float(t)


# One mesh refinement range for every FEM stage (0.25 to 4), defined with the FEM grids.
from qhdesign.fem.grid import REFINE_RANGE, check_refine  # noqa: E402
