"""Per-well sheet model handed from the 1D Schrödinger–Poisson stage to the 2D Thomas–Fermi stage.

Each quantum well becomes a charged sheet at its wavefunction-weighted charge centroid, with the
2D density of states of its material. The frozen fixed charge (donors, plus the surface charge of an
exposed surface) is passed on as a cell-centred density on the 1D grid. Energy zero: the Fermi
level of the grounded 2DEG.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from .results import BandsResult

__all__ = ["SheetModel", "WellSheet", "sheet_model"]


@dataclass(frozen=True)
class WellSheet:
    """One quantum well reduced to a charged sheet.

    Attributes
    ----------
    name, role
        Layer name and role (``"primary"`` or ``"screening"``).
    z_m
        Charge centroid depth (m, positive down); for an empty well the centroid of its lowest
        subband's probability density.
    density_m2
        Sheet density from the 1D solve the model was built from (zero gate bias), m^-2.
    dos_J_m2
        2D density of states m*/(pi hbar^2) with spin degeneracy 2, J^-1 m^-2.
    z_top_m, z_bottom_m
        The well layer's extent (m).
    subband_energy_J
        Lowest subband energy of this well relative to the Fermi level (J).
    """

    name: str
    role: str
    z_m: float
    density_m2: float
    dos_J_m2: float
    z_top_m: float
    z_bottom_m: float
    subband_energy_J: float = float("nan")


@dataclass(frozen=True)
class SheetModel:
    """Everything the 2D Thomas–Fermi stage needs from the 1D stage.

    Attributes
    ----------
    sheets
        Wells top to bottom.
    temperature_K
        Solve temperature (K).
    fixed_charge_z_m, fixed_charge_C_m3
        Cell centres of the 1D grid, shape (N,), and the frozen donor charge density there (C/m^3).
    fixed_charge_edges_m
        The 1D grid's nodes, shape (N+1,): the cells' true edges (on a graded grid these are not
        the midpoints between centres).
    substrate_kind
        The stack's bottom boundary (``"deep"``, ``"back_gate"``, ``"pinned"``).
    surface_charge_C_m2
        Frozen surface charge of an exposed surface (0 for a gate or a pinned surface), C/m^2.
    surface_kind, surface_barrier_J, surface_bias_V
        Top boundary as in the stack.
    layer_z_m, layer_permittivity
        Layer boundaries, shape (L+1,), and relative permittivities, shape (L,).
    """

    sheets: tuple[WellSheet, ...]
    temperature_K: float
    fixed_charge_z_m: np.ndarray
    fixed_charge_C_m3: np.ndarray
    surface_charge_C_m2: float
    surface_kind: str
    surface_barrier_J: float
    surface_bias_V: float
    layer_z_m: np.ndarray
    layer_permittivity: np.ndarray
    surface_charge_mode: str = "frozen"
    fixed_charge_edges_m: np.ndarray | None = None
    substrate_kind: str | None = None


def sheet_model(stack, bands_result: BandsResult) -> SheetModel:
    """Build the per-well sheet model from a 1D solve (normally at zero gate bias).

    Parameters
    ----------
    stack
        The :class:`qhdesign.stack.Stack` that was solved.
    bands_result
        Result of :func:`qhdesign.sp1d.solve_bands` for that stack.

    Returns
    -------
    SheetModel
    """
    r = bands_result
    sheets = []
    for w in r.wells:
        sheets.append(
            WellSheet(
                name=w.name,
                role=w.role,
                z_m=float(w.centroid_m),
                density_m2=float(w.sheet_density_m2),
                dos_J_m2=float(w.dos_J_m2),
                z_top_m=float(w.z_top_m),
                z_bottom_m=float(w.z_bottom_m),
                subband_energy_J=float(w.lowest_subband_J),
            )
        )
    prof = stack.profile()
    layer_z = np.array([p.z_top for p in prof] + [prof[-1].z_bottom], dtype=float)
    layer_eps = np.array([p.permittivity for p in prof], dtype=float)
    surf = stack.surface
    return SheetModel(
        sheets=tuple(sheets),
        temperature_K=float(r.temperature_K),
        fixed_charge_z_m=np.asarray(r.cell_centres_m, dtype=float).copy(),
        fixed_charge_C_m3=np.asarray(r.fixed_charge_C_m3, dtype=float).copy(),
        fixed_charge_edges_m=np.asarray(r.z_m, dtype=float).copy(),
        substrate_kind=str(stack.substrate.kind),
        surface_charge_C_m2=float(r.surface_charge_C_m2) if surf.kind == "exposed" else 0.0,
        surface_kind=str(surf.kind),
        surface_barrier_J=float(surf.barrier),
        surface_bias_V=float(getattr(surf, "bias", 0.0) or 0.0),
        layer_z_m=layer_z,
        layer_permittivity=layer_eps,
        surface_charge_mode=str(getattr(surf, "charge", "frozen")),
    )
