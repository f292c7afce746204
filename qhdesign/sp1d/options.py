"""Options of the 1D stage: numerics, grid, and the thresholds of the grower's flags."""

from __future__ import annotations

from dataclasses import dataclass, field

from scipy import constants as sc

from .grid import GridSpec
from .selfconsistent import SolveOptions

__all__ = ["BandsOptions"]


@dataclass(frozen=True)
class BandsOptions:
    """Everything :func:`qhdesign.sp1d.solve_bands` and :func:`gate_response` can be told.

    Attributes
    ----------
    solve
        Self-consistency tolerances and subband counts.
    grid
        Grid spacing targets.
    quantum_margin_m
        Quantum region extends this far into the barriers beyond the outer wells (m).
    cool_bias_V
        Gate bias while the donors freeze (V).
    field_T
        Perpendicular field for the screening-well filling-factor flag (T); ``None``: no flag.
    second_subband_margin_J
        Flag when the primary well's second subband lies less than this above E_F (J).
        Default 2 meV (common practice: a few kT plus disorder broadening of ~1 meV).
    parallel_threshold_m2
        Flag parallel conduction when a doped layer holds more electrons than this (m^-2).
        Default 1e9 cm^-2 (common practice: well below Hall/transport resolution).
    filling_margin
        Flag a screening well whose filling factor lies within this of an integer.
    tunnel_threshold_J
        Flag a tunnel splitting between neighbouring wells above this (J). Default 10 ueV
        (common practice: small against the ~0.1 meV scale of interferometer energies).
    supply_margin_fraction
        Flag when the donor supply margin is below this fraction of all donors.
    forward_limit_V
        Warn about forward-bias gate leakage above this gate voltage (V). Default +0.5 V
        (common practice for Ti/Au Schottky gates on GaAs heterostructures at low temperature).
    empty_primary_m2
        Flag (as failing) a primary well holding less than this (m^-2). Default 1e10 cm^-2
        (common practice: below it a GaAs 2DEG does not conduct as a usable channel).
    """

    solve: SolveOptions = field(default_factory=SolveOptions)
    grid: GridSpec = field(default_factory=GridSpec)
    quantum_margin_m: float = 20e-9
    cool_bias_V: float = 0.0
    field_T: float | None = None
    second_subband_margin_J: float = 2e-3 * sc.e
    parallel_threshold_m2: float = 1e13
    filling_margin: float = 0.15
    tunnel_threshold_J: float = 10e-6 * sc.e
    supply_margin_fraction: float = 0.1
    forward_limit_V: float = 0.5
    empty_primary_m2: float = 1e14
