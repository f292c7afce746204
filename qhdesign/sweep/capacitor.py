"""Capacitor-ladder lever arms of a top gate on a stack of wells (the ``capacitor`` stage).

A cheap closed-form estimate, useful at the start of a design before any self-consistent solve:
every quantum well is a node at its centre depth, coupled to its neighbours (and the topmost to the
surface gate) by the geometric capacitance of the layers between them, and to the common Fermi
level of the grounded 2DEGs by its quantum capacitance ``C_q = e^2 m*/(pi hbar^2)``. With the gate
at ``V`` the node potentials ``phi`` solve the charge balance

    sum_j C_ij (phi_i - phi_j) + C_q,i phi_i = C_g,i V,

and the density added to well ``i`` is ``dn_i = C_q,i phi_i / e``. For one well this is the series
formula ``1/C = d/eps + 1/C_q`` (Luryi, Appl. Phys. Lett. 52, 501 (1988)); for a screening well
above a primary well it reduces to ``e dn_p/dV = C1 C_b / (C1 + C_qs + C_b)`` with
``C_b = C2 C_qp / (C2 + C_qp)`` (docs/derivations.md, section 4).

With the zero-bias densities given, the gate is swept down piecewise-linearly: a well that empties
stops screening (its node keeps zero charge change), the slopes are recomputed, and so on until the
primary well is empty. The wavefunction centroid is put at the well centre (symmetric wells) and
the 2DEG's own ``zbar`` beyond that is neglected; the depletion voltages assume frozen donors and
surface charge (a gate on a cooled-down wafer).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
from scipy.constants import electron_mass, epsilon_0, hbar
from scipy.constants import elementary_charge as e

from qhdesign.errors import InputError
from qhdesign.units import parse_quantity

__all__ = ["capacitor_stage", "ladder_slopes", "quantum_capacitance"]

CM2 = 1e4  # m^-2 per cm^-2


def quantum_capacitance(mass_rel: float) -> float:
    """Quantum capacitance per area of a spin-degenerate 2DEG, F/m^2: ``e^2 m*/(pi hbar^2)``."""
    return e**2 * mass_rel * electron_mass / (math.pi * hbar**2)


def ladder_slopes(
    c_gate: float, c_between: Sequence[float], c_q: Sequence[float], c_bottom: float = 0.0
) -> np.ndarray:
    """dn_i/dV (m^-2 V^-1) of wells in a capacitor ladder below a gate.

    Parameters
    ----------
    c_gate
        Gate to first well, F/m^2.
    c_between : sequence, shape (k - 1,)
        Well i to well i + 1, F/m^2.
    c_q : sequence, shape (k,)
        Quantum capacitance of each well, F/m^2; 0 for an empty well.
    c_bottom
        Last well to an equipotential bottom boundary (back gate or pinned substrate), F/m^2;
        0 for a deep substrate (zero field below the stack).

    Returns
    -------
    ndarray, shape (k,)
    """
    k = len(c_q)
    a = np.zeros((k, k))
    b = np.zeros(k)
    a[0, 0] += c_gate
    b[0] = c_gate
    for i, c in enumerate(c_between):
        a[i, i] += c
        a[i + 1, i + 1] += c
        a[i, i + 1] -= c
        a[i + 1, i] -= c
    a[-1, -1] += c_bottom
    a[np.diag_indices(k)] += np.asarray(c_q, dtype=float)
    phi = np.linalg.solve(a, b)
    return np.asarray(c_q, dtype=float) * phi / e


def _inverse_capacitance(profile, z_a: float, z_b: float) -> float:
    """Integral of dz/eps(z) from depth z_a to z_b (m^2/F), layer by layer."""
    total = 0.0
    for p in profile:
        lo, hi = max(z_a, p.z_top), min(z_b, p.z_bottom)
        if hi > lo:
            total += (hi - lo) / (epsilon_0 * p.permittivity)
    return total


def _densities(option: object, wells: Sequence[str]) -> dict[str, float] | None:
    if option is None:
        return None
    if not isinstance(option, Mapping):
        raise InputError(
            'must be a table {well = "2e11 cm^-2", ...}', key="stage.options.densities"
        )
    out = {}
    for name, text in option.items():
        if name not in wells:
            raise InputError(
                f"'{name}' is not a well of the stack; wells: {', '.join(wells)}",
                key="stage.options.densities",
            )
        out[name] = parse_quantity(text, "sheet_density", key=f"stage.options.densities.{name}")
    missing = [w for w in wells if w not in out]
    if missing:
        raise InputError(
            f"missing zero-bias density of well(s) {', '.join(missing)}",
            key="stage.options.densities",
        )
    return out


def capacitor_stage(stack, densities: Mapping[str, str] | None = None) -> dict[str, float]:
    """Lever arms (and, given densities, depletion voltages) of a top gate; see module doc.

    Parameters
    ----------
    stack
        A :class:`qhdesign.stack.Stack` with a primary well.
    densities
        Zero-bias sheet density of every well, ``{"primary": "2e11 cm^-2", ...}``; optional.

    Returns
    -------
    dict
        ``depth_primary_nm``, ``dn_dV_<well>_cm^-2/V`` for every well, ``primary_share`` (primary
        slope / total), ``dn_dV_primary_unscreened_cm^-2/V`` (slope once the wells above are empty)
        and, with densities, ``v_empty_<well>_V`` for every other well (NaN if it is still
        occupied when the primary empties), ``v_screening_empty_V`` (all screening wells above
        the primary empty) and
        ``v_dep_primary_V``.
    """
    profile = [p for p in stack.profile()]
    wells = [p for p in profile if p.well is not None]
    names = [w.name for w in wells]
    if not any(w.well == "primary" for w in wells):
        raise InputError("the stack has no primary well", key="layers")
    ip = next(i for i, w in enumerate(wells) if w.well == "primary")
    z = [0.5 * (w.z_top + w.z_bottom) for w in wells]
    surf = stack.surface
    gate_extra = 0.0
    if getattr(surf, "dielectric_thickness", 0.0) > 0:
        gate_extra = surf.dielectric_thickness / (epsilon_0 * surf.dielectric_permittivity)
    c_gate = 1.0 / (gate_extra + _inverse_capacitance(profile, 0.0, z[0]))
    c_between = [1.0 / _inverse_capacitance(profile, z[i], z[i + 1]) for i in range(len(z) - 1)]
    c_bottom = 0.0
    if getattr(stack.substrate, "kind", "deep") in ("back_gate", "pinned"):
        # an equipotential bottom boundary (back gate, or a pinned semi-insulating substrate)
        c_bottom = 1.0 / _inverse_capacitance(profile, z[-1], profile[-1].z_bottom)
    c_q_full = np.array([quantum_capacitance(stack.resolved_mass(stack.layer(n))) for n in names])

    slopes = ladder_slopes(c_gate, c_between, c_q_full, c_bottom)
    out: dict[str, float] = {"depth_primary_nm": float(z[ip] * 1e9)}
    for n, s in zip(names, slopes, strict=True):
        out[f"dn_dV_{n}_cm^-2/V"] = float(s / CM2)
    out["primary_share"] = float(slopes[ip] / slopes.sum())
    cq_unscr = c_q_full.copy()
    cq_unscr[:ip] = 0.0
    unscreened = ladder_slopes(c_gate, c_between, cq_unscr, c_bottom)[ip]
    out["dn_dV_primary_unscreened_cm^-2/V"] = float(unscreened / CM2)

    n0 = _densities(densities, names)
    if n0 is None:
        return out
    # Sweep the gate down: each segment is linear until the next well empties.
    n = np.array([n0[w] for w in names])
    occupied = n > 0
    v = 0.0
    empty_at = {w: (0.0 if not occupied[i] else math.nan) for i, w in enumerate(names)}
    while occupied[ip]:
        cq = np.where(occupied, c_q_full, 0.0)
        s = ladder_slopes(c_gate, c_between, cq, c_bottom)
        with np.errstate(divide="ignore", invalid="ignore"):
            dv = np.where(occupied & (s > 0), n / s, np.inf)
        j = int(np.argmin(dv))
        if not math.isfinite(dv[j]):  # nothing couples any more (cannot happen with c_gate > 0)
            break
        v -= dv[j]
        n = np.where(occupied, n - s * dv[j], n)
        n[j] = 0.0
        occupied[j] = False
        empty_at[names[j]] = v
    for i, w in enumerate(names):
        if i != ip:  # NaN: the well is still occupied when the primary empties
            out[f"v_empty_{w}_V"] = float(empty_at[w])
    above = [empty_at[names[i]] for i in range(ip) if wells[i].well == "screening"]
    out["v_screening_empty_V"] = float(min(above)) if above else 0.0
    out["v_dep_primary_V"] = float(empty_at[names[ip]])
    return out
