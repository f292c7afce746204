"""From a stack file to a cross-section: run the 1D stage and hand its charges to the 2D stage."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError

from .model import CrossSection

__all__ = ["refuse_gate_dielectric", "section_from_stack"]


def refuse_gate_dielectric(stack, stage: str) -> None:
    """The 2D and island models put gate metal directly on the semiconductor: refuse a stack
    with a gate dielectric (one-line InputError naming the key)."""
    if float(getattr(stack.surface, "dielectric_thickness", 0.0) or 0.0) > 0.0:
        raise InputError(
            f"{stage} puts gate metal directly on the semiconductor; a gate dielectric is "
            "not modelled yet (allowed: surface.dielectric_thickness = 0)",
            source=str(getattr(stack, "source", "") or "stack"),
            key="surface.dielectric_thickness",
        )


def section_from_stack(stack, *, gate_barrier_J: float | None = None) -> CrossSection:
    """Run the 1D stage on a stack and build the cross-section (donors frozen at their 1D state).

    Raises
    ------
    InputError
        If the 1D stage is not available or the stack is invalid.
    """
    from .model import cross_section_from_sheet_model

    try:
        from qhdesign.sp1d import solve_bands
        from qhdesign.sp1d.sheets import sheet_model
    except ImportError as exc:  # the 1D stage is a separate issue
        raise InputError(f"the 1D stage is not available ({exc})") from None
    result = solve_bands(stack)
    section = cross_section_from_sheet_model(
        sheet_model(stack, result), gate_barrier_J=gate_barrier_J
    )
    # Potential convention: phi = -(U - E_c0(z) + E_c0(surface layer))/e, so that phi = V_g -
    # Phi_B/e under a gate. The far-field surface potential is the 1D solution's own
    # -U(0)/e (for a frozen surface it differs from the pinned level by the low-temperature
    # redistribution); a back gate or a pinned substrate becomes a Dirichlet bottom.
    z = np.asarray(result.z_m)
    u = np.asarray(result.conduction_band_J)
    changes: dict = {"surface_potential_V": float(-u[int(np.argmin(np.abs(z)))] / sc.e)}
    # Electrons outside the well layers (wavefunction tails, classical electrons) are not in any
    # sheet: freeze them where the 1D solution has them, so the column carries every charge.
    n_node = np.asarray(getattr(result, "electron_density_m3", np.zeros(0)), dtype=float)
    zc = np.asarray(section.charge_z_m)
    if n_node.size == z.size and z.size == zc.size + 1:
        n_cell = 0.5 * (n_node[1:] + n_node[:-1])
        for w in result.wells:
            n_cell[(zc >= w.z_top_m) & (zc <= w.z_bottom_m)] = 0.0
        changes["charge_C_m3"] = np.asarray(section.charge_C_m3) - sc.e * n_cell
    t_d = float(getattr(stack.surface, "dielectric_thickness", 0.0) or 0.0)
    if stack.surface.kind == "gate" and t_d > 0.0:
        # the 1D grid starts at z = -t (the dielectric holds no charge): keep the semiconductor
        keep = np.asarray(section.charge_z_m) > 0.0
        edges = np.asarray(section.charge_edges_m)
        changes |= {
            "charge_z_m": np.asarray(section.charge_z_m)[keep],
            "charge_C_m3": np.asarray(changes.get("charge_C_m3", section.charge_C_m3))[keep],
            "charge_edges_m": edges[edges >= -1e-15] if edges.size else edges,
            "gate_dielectric_thickness_m": t_d,
            "gate_dielectric_permittivity": float(stack.surface.dielectric_permittivity),
        }
    prof = stack.profile()
    sub = stack.substrate
    if sub.kind in ("back_gate", "pinned"):
        u_bottom = sub.barrier - (sc.e * sub.bias if sub.kind == "back_gate" else 0.0)
        offset = prof[-1].band_offset - prof[0].band_offset
        changes |= {"bottom": "gate", "bottom_potential_V": float((offset - u_bottom) / sc.e)}
    return replace(section, **changes)
