"""The contract between the 1D stage and the FEM stages: :class:`SheetModel`.

The 1D Schrödinger–Poisson stage reduces a stack to a :class:`SheetModel`; every FEM stage (the
cross-section, :mod:`qhdesign.section`, and the island, :mod:`qhdesign.island`) is built from it
alone and imports neither the 1D stage nor the stack. :mod:`qhdesign.pipeline` is the one place
that runs stack -> bands -> sheet model. numpy only.

Each quantum well becomes a charged sheet at its wavefunction-weighted charge centroid, with the
2D density of states of its material. Everything else the column holds is passed on as it is in
the 1D solution: the frozen fixed charge (donors) and the residual electrons outside the wells
(wavefunction tails, classical electrons) as cell densities on the 1D grid, the surface charge of
an exposed surface, the surface potential, and the bottom boundary. Energy zero: the Fermi level
of the grounded 2DEG; potential convention phi = -(U - E_c0(z) + E_c0(surface layer))/e, so that
phi = V_g - Phi_B/e under a gate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants as sc

__all__ = ["BOTTOM_KINDS", "SheetModel", "WellSheet"]

#: Bottom boundary kinds: zero normal field (a deep substrate) or a fixed potential (a back gate
#: or a pinned substrate).
BOTTOM_KINDS = ("zero_field", "dirichlet")


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
    """Everything the FEM stages need from the 1D stage (SI units).

    Attributes
    ----------
    sheets
        Wells top to bottom.
    temperature_K
        Solve temperature (K).
    fixed_charge_z_m, fixed_charge_C_m3
        Cell centres of the 1D grid, shape (N,), and the frozen donor charge density there (C/m^3).
    surface_charge_C_m2
        Frozen surface charge of an exposed surface (0 for a gate or a pinned surface), C/m^2.
    surface_kind, surface_barrier_J, surface_bias_V
        Top boundary as in the stack: ``"exposed"`` or ``"gate"``, its barrier (J), its bias (V).
    layer_z_m, layer_permittivity
        Layer boundaries, shape (L+1,), and relative permittivities, shape (L,).
    surface_charge_mode
        ``"frozen"`` or ``"pinned"``: how an exposed surface is treated.
    fixed_charge_edges_m
        The 1D grid's nodes, shape (N+1,): the cells' true edges (on a graded grid these are not
        the midpoints between centres).
    substrate_kind
        The stack's bottom boundary (``"deep"``, ``"back_gate"``, ``"pinned"``).
    surface_potential_V
        phi at the surface in the far field from the 1D solution, -U(0)/e (V). None: the pinning
        formula V_s - Phi_s/e (a model built by hand without a 1D solution).
    bottom_kind, bottom_potential_V
        ``"zero_field"`` or ``"dirichlet"`` (a back gate or a pinned substrate, phi fixed at
        ``bottom_potential_V`` in the same potential convention).
    residual_charge_C_m3
        Charge density of the electrons outside the well layers (wavefunction tails, classical
        electrons) on the same cells as the fixed charge, shape (N,), C/m^3 (<= 0); None: none.
    name, source
        Stack name and the file it came from (for reports and error messages).
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
    surface_potential_V: float | None = None
    bottom_kind: str = "zero_field"
    bottom_potential_V: float = 0.0
    residual_charge_C_m3: np.ndarray | None = None
    name: str = ""
    source: str = ""

    def __post_init__(self):
        from qhdesign.errors import InputError

        if self.bottom_kind not in BOTTOM_KINDS:
            raise InputError(
                f"bottom kind '{self.bottom_kind}'; allowed: {', '.join(BOTTOM_KINDS)}",
                key="bottom_kind",
            )

    @property
    def far_surface_potential_V(self) -> float:
        """phi at the surface in the far field (V): the 1D solution's, else the pinning formula."""
        if self.surface_potential_V is not None:
            return float(self.surface_potential_V)
        return float(self.surface_bias_V) - float(self.surface_barrier_J) / sc.e

    @property
    def volume_charge_C_m3(self) -> np.ndarray:
        """Fixed plus residual charge density on the cells (C/m^3), shape (N,)."""
        rho = np.asarray(self.fixed_charge_C_m3, dtype=float)
        if self.residual_charge_C_m3 is None:
            return rho
        return rho + np.asarray(self.residual_charge_C_m3, dtype=float)
