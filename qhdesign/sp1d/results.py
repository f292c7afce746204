"""Results of the 1D stage: band profile, subbands, per-well charge, flags; JSON and CSV forms."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from ..results import Table

__all__ = ["BandsResult", "DopingResult", "Flags", "SubbandResult", "WellResult"]

_MEV = 1e-3 * sc.e
_CM2 = 1e4  # m^-2 per cm^-2


@dataclass(frozen=True)
class WellResult:
    """One quantum well after the solve (SI)."""

    name: str
    role: str
    z_top_m: float
    z_bottom_m: float
    sheet_density_m2: float
    centroid_m: float
    dos_J_m2: float
    lowest_subband_J: float
    subbands: tuple[int, ...]
    filling_factor: float = math.nan
    permittivity_rel: float = math.nan


@dataclass(frozen=True)
class SubbandResult:
    """One subband: energy relative to E_F (J), the well holding most of |psi|^2, its fraction."""

    energy_J: float
    well: str
    fraction_in_well: float
    mass_rel: float
    sheet_density_m2: float


@dataclass(frozen=True)
class DopingResult:
    """One doped layer: donors, ionised donors (frozen state), electrons held (parallel channel)."""

    name: str
    donors_m2: float
    ionized_m2: float
    electrons_m2: float
    z_top_m: float = math.nan
    z_bottom_m: float = math.nan

    @property
    def ionized_fraction(self) -> float:
        return self.ionized_m2 / self.donors_m2 if self.donors_m2 > 0 else math.nan


@dataclass(frozen=True)
class Flags:
    """What a grower needs to know (booleans plus the numbers behind them)."""

    second_subband_occupied: bool
    e2_minus_ef_J: float
    e2_minus_e1_J: float
    parallel_conduction: bool
    parallel_layers: tuple[str, ...]
    poor_screening: bool
    poor_screening_wells: tuple[str, ...]
    tunnel_coupled: bool
    tunnel_splittings_J: dict = field(default_factory=dict)
    donor_supply_margin_m2: float = math.nan
    donor_supply_low: bool = False
    forward_leakage: bool = False
    primary_empty: bool = False


@dataclass(frozen=True)
class BandsResult:
    """Self-consistent 1D solution of a stack at one gate voltage.

    Arrays: ``z_m`` nodes (N+1,), ``conduction_band_J`` E_c - E_F at the nodes (N+1,),
    ``psi`` (S, N+1) in m^-1/2, ``electron_density_m3`` (N+1,); ``cell_centres_m`` (N,) and
    ``fixed_charge_C_m3`` (N,) the frozen donor charge. Energies are relative to the Fermi level.
    """

    stack_name: str
    source: str
    temperature_K: float
    freeze_temperature_K: float
    gate_voltage_V: float
    cool_bias_V: float
    surface_kind: str
    converged: bool
    iterations: int
    residuals_V: tuple[float, ...]
    z_m: np.ndarray
    conduction_band_J: np.ndarray
    electron_density_m3: np.ndarray
    psi: np.ndarray
    subbands: tuple[SubbandResult, ...]
    wells: tuple[WellResult, ...]
    doping: tuple[DopingResult, ...]
    surface_charge_C_m2: float
    bottom_charge_C_m2: float
    charge_balance_m2: float
    charge_balance_relative: float
    flags: Flags
    cell_centres_m: np.ndarray
    fixed_charge_C_m3: np.ndarray
    grid_min_spacing_m: float
    grid_max_spacing_m: float
    quantum_region_m: tuple[float, float]
    warnings: tuple[str, ...] = ()
    fermi_level_J: float = 0.0
    other_layers_electrons_m2: dict = field(default_factory=dict)

    def well(self, name: str) -> WellResult:
        """The well called ``name``."""
        for w in self.wells:
            if w.name == name:
                return w
        raise KeyError(name)

    @property
    def primary(self) -> WellResult:
        return next(w for w in self.wells if w.role == "primary")

    def to_dict(self, *, arrays: bool = True) -> dict:
        """JSON-ready dict, SI with the unit in every key (energies in eV, relative to E_F)."""
        f = self.flags
        out = {
            "stack": self.stack_name,
            "source": self.source,
            "converged": self.converged,
            "iterations": self.iterations,
            "residual_history_V": list(self.residuals_V),
            "temperature_K": self.temperature_K,
            "freeze_temperature_K": self.freeze_temperature_K,
            "gate_voltage_V": self.gate_voltage_V,
            "cool_bias_V": self.cool_bias_V,
            "surface_kind": self.surface_kind,
            "fermi_level_eV": self.fermi_level_J / sc.e,
            "wells": {
                w.name: {
                    "role": w.role,
                    "z_top_m": w.z_top_m,
                    "z_bottom_m": w.z_bottom_m,
                    "sheet_density_m2": w.sheet_density_m2,
                    "centroid_m": w.centroid_m,
                    "dos_J-1_m2": w.dos_J_m2,
                    "lowest_subband_eV": w.lowest_subband_J / sc.e,
                    "filling_factor": _num(w.filling_factor),
                    "subbands": list(w.subbands),
                }
                for w in self.wells
            },
            "subbands": [
                {
                    "energy_eV": s.energy_J / sc.e,
                    "well": s.well,
                    "fraction_in_well": s.fraction_in_well,
                    "mass_m0": s.mass_rel,
                    "sheet_density_m2": s.sheet_density_m2,
                }
                for s in self.subbands
            ],
            "doping_layers": {
                d.name: {
                    "donors_m2": d.donors_m2,
                    "ionized_m2": d.ionized_m2,
                    "ionized_fraction": _num(d.ionized_fraction),
                    "electrons_m2": d.electrons_m2,
                }
                for d in self.doping
            },
            "other_layers": {
                k: {"electrons_m2": v} for k, v in self.other_layers_electrons_m2.items()
            },
            "surface_charge_C_m2": self.surface_charge_C_m2,
            "bottom_charge_C_m2": self.bottom_charge_C_m2,
            "charge_balance_m2": self.charge_balance_m2,
            "charge_balance_relative": self.charge_balance_relative,
            "flags": {
                "second_subband_occupied": f.second_subband_occupied,
                "E2_minus_EF_eV": _num(f.e2_minus_ef_J / sc.e),
                "E2_minus_E1_eV": _num(f.e2_minus_e1_J / sc.e),
                "parallel_conduction": f.parallel_conduction,
                "parallel_layers": list(f.parallel_layers),
                "poor_screening": f.poor_screening,
                "poor_screening_wells": list(f.poor_screening_wells),
                "tunnel_coupled": f.tunnel_coupled,
                "tunnel_splitting_eV": {k: v / sc.e for k, v in f.tunnel_splittings_J.items()},
                "donor_supply_margin_m2": f.donor_supply_margin_m2,
                "donor_supply_low": f.donor_supply_low,
                "forward_leakage": f.forward_leakage,
                "primary_empty": f.primary_empty,
            },
            "grid": {
                "nodes": len(self.z_m),
                "min_spacing_m": self.grid_min_spacing_m,
                "max_spacing_m": self.grid_max_spacing_m,
                "quantum_region_m": list(self.quantum_region_m),
            },
            "warnings": list(self.warnings),
        }
        if arrays:
            out["profile"] = {
                "z_m": self.z_m.tolist(),
                "conduction_band_eV": (self.conduction_band_J / sc.e).tolist(),
                "electron_density_m3": self.electron_density_m3.tolist(),
                # one list per subband, same order as "subbands"; normalised to
                # sum_j w_j psi_j^2 = 1 with the control-volume widths w_j
                "psi_m-1/2": self.psi.tolist(),
            }
        return out

    def summary(self) -> dict[str, float]:
        """Flat CSV-ready numbers, display units in the column names."""
        f = self.flags
        out: dict[str, float] = {
            "converged": float(self.converged),
            "iterations": float(self.iterations),
            "temperature_K": self.temperature_K,
            "gate_V": self.gate_voltage_V,
        }
        for w in self.wells:
            out[f"{w.name}_density_cm^-2"] = w.sheet_density_m2 / _CM2
            out[f"{w.name}_centroid_nm"] = w.centroid_m * 1e9
            out[f"{w.name}_E1_minus_EF_meV"] = w.lowest_subband_J / _MEV
            if not math.isnan(w.filling_factor):
                out[f"{w.name}_filling_factor"] = w.filling_factor
        p = self.primary
        out["primary_density_cm^-2"] = p.sheet_density_m2 / _CM2
        out["E2_minus_EF_meV"] = f.e2_minus_ef_J / _MEV
        out["E2_minus_E1_meV"] = f.e2_minus_e1_J / _MEV
        for d in self.doping:
            out[f"{d.name}_ionized_fraction"] = d.ionized_fraction
            out[f"{d.name}_electrons_cm^-2"] = d.electrons_m2 / _CM2
        for k, v in f.tunnel_splittings_J.items():
            out[f"tunnel_{k}_ueV"] = v / sc.e * 1e6
        out["surface_charge_cm^-2"] = self.surface_charge_C_m2 / sc.e / _CM2
        out["donor_supply_margin_cm^-2"] = f.donor_supply_margin_m2 / _CM2
        out["charge_balance_relative"] = self.charge_balance_relative
        out["flag_second_subband"] = float(f.second_subband_occupied)
        out["flag_parallel_conduction"] = float(f.parallel_conduction)
        out["flag_poor_screening"] = float(f.poor_screening)
        out["flag_tunnel_coupled"] = float(f.tunnel_coupled)
        out["flag_donor_supply_low"] = float(f.donor_supply_low)
        out["flag_primary_empty"] = float(f.primary_empty)
        return out

    def table(self) -> Table:
        """The band profile on the 1D nodes: depth (nm), E_c - E_F (eV), electrons (cm^-3)."""
        cols = ("z_nm", "conduction_band_eV", "electron_density_cm^-3")
        rows = np.column_stack(
            (self.z_m * 1e9, self.conduction_band_J / sc.e, self.electron_density_m3 * 1e-6)
        )
        return Table(cols, rows)


def _num(x: float):
    """NaN becomes None in JSON."""
    return None if x is None or (isinstance(x, float) and math.isnan(x)) else x
