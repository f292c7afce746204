"""1D Schrödinger–Poisson stage: subbands, charge split across wells, gate response, calibration.

Public entry points (all SI inside; energies relative to the Fermi level of the 2DEG):

- :func:`solve_bands` -> :class:`BandsResult` (one gate voltage, donors frozen at freeze-out)
- :func:`gate_response` -> :class:`GateResult` (gate sweep with frozen donors, thresholds)
- :func:`calibrate` -> :class:`CalibrationResult` (fit one stack parameter to a measurement)
- :func:`sheet_model` -> :class:`SheetModel` (per-well sheets for the 2D stage)
- :func:`qhdesign.sp1d.scattering.scattering` -> :class:`ScatteringResult` (disorder estimate
  per well: mobility, lifetimes) and :func:`level_broadening` (Gamma = hbar / (2 tau_q))
"""

from __future__ import annotations

from .calibrate import CalibrationResult, calibrate
from .gates import GateResult, gate_response
from .options import BandsOptions
from .results import BandsResult
from .scattering import ScatteringOptions, ScatteringResult, level_broadening
from .selfconsistent import SolveOptions
from .sheets import SheetModel, WellSheet, sheet_model
from .solve import freeze_out, solve_bands

__all__ = [
    "BandsOptions",
    "BandsResult",
    "CalibrationResult",
    "GateResult",
    "ScatteringOptions",
    "ScatteringResult",
    "SheetModel",
    "SolveOptions",
    "WellSheet",
    "calibrate",
    "freeze_out",
    "gate_response",
    "level_broadening",
    "sheet_model",
    "solve_bands",
]
