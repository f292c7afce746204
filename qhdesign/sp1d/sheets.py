"""Build the sheet model (:class:`qhdesign.sheets.SheetModel`, the contract with the FEM stages)
from a 1D Schrödinger–Poisson solution.

Each quantum well becomes a charged sheet at its wavefunction-weighted charge centroid, with the
2D density of states of its material. The frozen fixed charge (donors) and the electrons outside
the well layers are passed on as cell densities on the 1D grid; the surface potential is the 1D
solution's own, and a back gate or a pinned substrate becomes a fixed-potential bottom.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from scipy import constants as sc

from qhdesign.sheets import SheetModel, WellSheet

if TYPE_CHECKING:  # pragma: no cover
    from .results import BandsResult

__all__ = ["SheetModel", "WellSheet", "sheet_model"]


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

    Examples
    --------
    >>> from qhdesign.sp1d import solve_bands
    >>> from qhdesign.stack import load_stack
    >>> stack = load_stack("stacks/ql2409_doped_well.toml")
    >>> bands = solve_bands(stack)
    >>> model = sheet_model(stack, bands)
    >>> [s.name for s in model.sheets], model.bottom_kind
    (['well'], 'zero_field')
    >>> model.sheets[0].density_m2 == bands.wells[0].sheet_density_m2
    True
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
    # Potential convention: phi = -(U - E_c0(z) + E_c0(surface layer))/e, so that phi = V_g -
    # Phi_B/e under a gate. The far-field surface potential is the 1D solution's own -U(0)/e
    # (for a frozen surface it differs from the pinned level by the low-temperature
    # redistribution).
    z = np.asarray(r.z_m)
    u = np.asarray(r.conduction_band_J)
    surface_potential = float(-u[int(np.argmin(np.abs(z)))] / sc.e)
    # Electrons outside the well layers (wavefunction tails, classical electrons) are in no
    # sheet: they are passed on where the 1D solution has them, so the column carries every charge.
    residual = None
    n_node = np.asarray(getattr(r, "electron_density_m3", np.zeros(0)), dtype=float)
    zc = np.asarray(r.cell_centres_m, dtype=float)
    if n_node.size == z.size and z.size == zc.size + 1:
        n_cell = 0.5 * (n_node[1:] + n_node[:-1])
        for w in r.wells:
            n_cell[(zc >= w.z_top_m) & (zc <= w.z_bottom_m)] = 0.0
        residual = -(sc.e * n_cell)
    # A back gate or a pinned substrate fixes the potential at the bottom of the last layer.
    sub = stack.substrate
    bottom = {"bottom_kind": "zero_field", "bottom_potential_V": 0.0}
    if sub.kind in ("back_gate", "pinned"):
        u_bottom = sub.barrier - (sc.e * sub.bias if sub.kind == "back_gate" else 0.0)
        offset = prof[-1].band_offset - prof[0].band_offset
        bottom = {
            "bottom_kind": "dirichlet",
            "bottom_potential_V": float((offset - u_bottom) / sc.e),
        }
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
        surface_potential_V=surface_potential,
        residual_charge_C_m3=residual,
        name=str(getattr(stack, "name", "") or ""),
        source=str(getattr(stack, "source", "") or ""),
        **bottom,
    )
