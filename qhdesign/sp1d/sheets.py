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

__all__ = [
    "SheetModel",
    "WellSheet",
    "layer_residual_charge",
    "owned_subband_charge",
    "sheet_model",
]


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
    residual = _layer_residual_all_cells(r)
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
    # a gate dielectric (z < 0 on the 1D grid) holds no charge: the columns start at the surface
    keep = np.asarray(r.cell_centres_m, dtype=float) > 0.0
    nodes = np.asarray(r.z_m, dtype=float)
    t_d = float(getattr(surf, "dielectric_thickness", 0.0) or 0.0) if surf.kind == "gate" else 0.0
    dielectric = {
        "gate_dielectric_thickness_m": t_d,
        "gate_dielectric_permittivity": float(getattr(surf, "dielectric_permittivity", 1.0))
        if t_d > 0.0
        else 1.0,
    }
    if residual is not None:
        residual = residual[keep]
    return SheetModel(
        sheets=tuple(sheets),
        temperature_K=float(r.temperature_K),
        fixed_charge_z_m=np.asarray(r.cell_centres_m, dtype=float)[keep].copy(),
        fixed_charge_C_m3=np.asarray(r.fixed_charge_C_m3, dtype=float)[keep].copy(),
        fixed_charge_edges_m=nodes[nodes >= -1e-15].copy(),
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
        **dielectric,
    )


def _layer_residual_all_cells(r) -> np.ndarray | None:
    """Charge density (C/m^3) of the electrons outside the well layers on every 1D cell."""
    z = np.asarray(r.z_m)
    n_node = np.asarray(getattr(r, "electron_density_m3", np.zeros(0)), dtype=float)
    zc = np.asarray(r.cell_centres_m, dtype=float)
    if not (n_node.size == z.size and z.size == zc.size + 1):
        return None
    n_cell = 0.5 * (n_node[1:] + n_node[:-1])
    for w in r.wells:
        n_cell[(zc >= w.z_top_m) & (zc <= w.z_bottom_m)] = 0.0
    return -(sc.e * n_cell)


def layer_residual_charge(bands_result: BandsResult) -> np.ndarray | None:
    """The residual charge of :func:`sheet_model`: electrons outside the well layers (C/m^3) on
    the semiconductor's cells (the sheet model's ``residual_charge_C_m3``)."""
    res = _layer_residual_all_cells(bands_result)
    if res is None:
        return None
    return res[np.asarray(bands_result.cell_centres_m, dtype=float) > 0.0]


def owned_subband_charge(bands_result: BandsResult) -> tuple[dict, np.ndarray | None]:
    """Electrons of each well's own subbands, and the charge of every other electron.

    A subband belongs to the well holding most of its probability (the 1D stage's rule); its
    electrons, tails in the barriers included, are the well's (m^-2, by well name). What is left
    of the electron density (classical electrons, subbands of no well) is returned as a charge
    density (C/m^3) on the semiconductor's cells, like :func:`layer_residual_charge`.
    """
    r = bands_result
    owned = {w.name: 0.0 for w in r.wells}
    z = np.asarray(r.z_m, dtype=float)
    h = np.diff(z)
    n_node = np.asarray(getattr(r, "electron_density_m3", np.zeros(0)), dtype=float)
    psi = np.asarray(getattr(r, "psi", np.zeros((0, 0))), dtype=float)
    zc = np.asarray(r.cell_centres_m, dtype=float)
    residual = None
    fits = n_node.size == z.size and psi.ndim == 2 and psi.shape[1] == z.size
    n_cell = 0.5 * (n_node[1:] + n_node[:-1]) if fits else None
    for k, sb in enumerate(r.subbands):
        if sb.well not in owned:
            continue
        owned[sb.well] += float(sb.sheet_density_m2)
        if fits and k < psi.shape[0]:
            p2 = psi[k] ** 2
            cell = 0.5 * (p2[:-1] + p2[1:])
            cell = cell / max(float(np.sum(cell * h)), 1e-300)
            n_cell = n_cell - sb.sheet_density_m2 * cell
    if fits:
        residual = -(sc.e * n_cell)[zc > 0.0]
    return owned, residual
