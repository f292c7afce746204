"""Turn a converged device state into per-well, per-subband and per-layer results and flags."""

from __future__ import annotations

import itertools
import math

import numpy as np
from scipy import constants as sc

from .charge import subband_dos, subband_sheet_density
from .model import DeviceLayout
from .results import DopingResult, Flags, SubbandResult, WellResult
from .schrodinger import control_widths, refine_lowest_block, solve_subbands
from .selfconsistent import State

__all__ = [
    "TUNNEL_RESOLUTION_J",
    "anticrossing_gap",
    "cell_electrons",
    "per_layer",
    "subband_wells",
    "tunnel_splitting",
]

#: Smallest tunnel splitting resolved (J); smaller splittings are reported as 0.
TUNNEL_RESOLUTION_J = 1e-11 * sc.e
#: Detuning steps allowed in the anticrossing search (it converges in two to four).
_TUNNEL_MAX_STEPS = 30


def cell_electrons(layout: DeviceLayout, state: State) -> np.ndarray:
    """Electrons in each cell (m^-2), shape (N,): each node's density over its two half cells."""
    n = state.n_quantum_m3 + state.n_classical_m3
    h = layout.device.h
    return 0.5 * (n[:-1] + n[1:]) * h


def per_layer(layout: DeviceLayout, cell_values: np.ndarray) -> np.ndarray:
    """Sum a per-cell quantity over each stack layer (dielectric cells dropped), shape (L,)."""
    owner = layout.device.layer_of_cell
    ok = owner >= 0
    return np.bincount(owner[ok], weights=cell_values[ok], minlength=len(layout.layer_names))


def subband_wells(layout: DeviceLayout, psi: np.ndarray) -> np.ndarray:
    """|psi|^2 weight of every subband in every layer, shape (S, L)."""
    h = layout.device.h
    p2 = psi**2
    cw = 0.5 * (p2[:, :-1] + p2[:, 1:]) * h
    owner = layout.device.layer_of_cell
    out = np.zeros((psi.shape[0], len(layout.layer_names)))
    ok = owner >= 0
    for s in range(psi.shape[0]):
        out[s] = np.bincount(owner[ok], weights=cw[s, ok], minlength=len(layout.layer_names))
    return out


def tunnel_splitting(
    layout: DeviceLayout, state: State, upper: int, lower: int, *, tol_J: float = 1e-15 * sc.e
) -> float:
    """Tunnel splitting 2t between the lowest subbands of two neighbouring wells (J).

    The converged potential is cut to the two wells (hard walls in the middle of the barriers
    beyond them), and a step detuning delta is added below the middle of the barrier between
    them. The splitting is the anticrossing gap: the minimum over delta of the gap
    g(delta) = E_1(delta) - E_0(delta) between the two lowest states.

    The minimum is found from the derivative, which is exact by Hellmann–Feynman: dE_i/ddelta
    is the weight p_i of state i below the middle of the barrier, so g'(delta) = p_1 - p_0 and
    the minimum is the root of p_1 - p_0. Near an anticrossing g(delta)^2 = (delta - delta_0)^2
    + (2t)^2 (two-level form), which gives delta_0 = delta - g (p_1 - p_0) and
    2t = g sqrt(1 - (p_1 - p_0)^2) from a single solve; the step is iterated until it falls
    below ``max(tol_J, 1e-3 * 2t)`` (the gap is then within 5e-7 of its minimum). Solves
    after the first are warm-started: block inverse iteration and Rayleigh–Ritz on the pair,
    which resolves gaps far below the pair's residual, certified by Sturm counts (the cold
    bisection is the fallback).

    References
    ----------
    R. P. Feynman, Phys. Rev. 56, 340 (1939) (dE/dlambda = <dH/dlambda>).
    """
    dev = layout.device
    zb = layout.layer_z
    z = dev.z
    q0, q1 = dev.quantum
    wells = layout.well_layers
    iu = wells.index(upper)
    top = zb[upper] - 0.5 * (zb[upper] - zb[wells[iu - 1] + 1]) if iu > 0 else z[q0]
    bot = (
        zb[lower + 1] + 0.5 * (zb[wells[iu + 2]] - zb[lower + 1]) if iu + 2 < len(wells) else z[q1]
    )
    mid = 0.5 * (zb[upper + 1] + zb[lower])
    i0 = max(int(np.searchsorted(z, top)), q0)
    i1 = min(int(np.searchsorted(z, bot)), q1)
    zz = z[i0 : i1 + 1]
    u = state.U_J[i0 : i1 + 1]
    if state.xc_J is not None:
        u = u + state.xc_J[i0 : i1 + 1]  # the Schrödinger potential includes v_xc
    mass = dev.mass[i0:i1]
    # start from the converged subbands: the lowest one living in each of the two wells
    start = None
    weights = subband_wells(layout, state.psi)
    wells_of = [wells[int(np.argmax(weights[s, list(wells)]))] for s in range(len(weights))]
    if upper in wells_of and lower in wells_of:
        pair = [wells_of.index(upper), wells_of.index(lower)]
        start = state.psi[pair, i0 : i1 + 1].copy()
        start[:, [0, -1]] = 0.0
    return anticrossing_gap(zz, u, mass, mid, tol_J=tol_J, psi_start=start)


def anticrossing_gap(
    z: np.ndarray,
    potential_J: np.ndarray,
    mass_cell: np.ndarray,
    z_split: float,
    *,
    tol_J: float = 1e-15 * sc.e,
    psi_start: np.ndarray | None = None,
) -> float:
    """Minimum over a step detuning of the gap between the two lowest states (J).

    The region ``z`` (hard walls at both ends) holds two wells separated by a barrier whose
    middle is ``z_split``; the detuning delta is added to the potential below ``z_split``.
    Returns the anticrossing gap 2t, or 0 when it is below ``TUNNEL_RESOLUTION_J``. The method
    is described in :func:`tunnel_splitting`. ``psi_start`` (shape (2, len(z))): approximate
    lowest pair at zero detuning to start from (only the speed depends on it).
    """
    zz, u, mass, mid = z, potential_J, mass_cell, z_split
    step = (zz > mid).astype(float)
    wstep = control_widths(zz) * step

    # start at zero detuning: the first two-level step already lands near the resonance
    delta = 0.0
    psi = psi_start
    best = math.inf
    split = math.inf
    for _ in range(_TUNNEL_MAX_STEPS):
        pot = u + delta * step
        got = None if psi is None else refine_lowest_block(zz, pot, mass, psi)
        en, psi = got if got is not None else solve_subbands(zz, pot, mass, 2)
        gap = float(en[1] - en[0])
        if gap < TUNNEL_RESOLUTION_J:
            # at resonance within the resolution and the gap is unresolved
            return 0.0
        slope = float(wstep @ (psi[1] ** 2 - psi[0] ** 2))  # g'(delta) = p_1 - p_0
        slope = min(max(slope, -1.0), 1.0)
        split = gap * math.sqrt(1.0 - slope * slope)
        best = min(best, gap)
        move = gap * slope
        delta -= move
        # two-level form: a remaining detuning x changes the gap by x^2 / (2 * 2t)
        if abs(move) < max(tol_J, 1e-3 * split):
            break
    # the two-level estimate at the last point, never above a gap actually seen
    value = min(split, best)
    # below ~1e-11 eV the gap is at the round-off of the eigenvalues (|T| eps): report 0,
    # meaning "below the numerical resolution"
    return value if value > TUNNEL_RESOLUTION_J else 0.0


def build_results(
    stack,
    layout: DeviceLayout,
    state: State,
    *,
    donor_fraction_cell: np.ndarray,
    surface_charge_C_m2: float,
    options,
    gate_voltage: float,
    with_tunnel: bool = True,
):
    """Per-well / per-subband / per-doping-layer numbers and the flags."""
    dev = layout.device
    kT = sc.k * state.temperature_K
    prof = stack.profile()
    e_cell = cell_electrons(layout, state)
    e_layer = per_layer(layout, e_cell)
    weights = subband_wells(layout, state.psi)
    en = state.energies_J
    dos_sub = subband_dos(state.subband_mass)
    n_sub = subband_sheet_density(en, dos_sub, kT)

    well_idx = layout.well_layers
    sub_results = []
    owner_well = []
    for s in range(len(en)):
        w_in = weights[s, list(well_idx)]
        k = int(np.argmax(w_in))
        owner_well.append(well_idx[k])
        sub_results.append(
            SubbandResult(
                energy_J=float(en[s]),
                well=layout.layer_names[well_idx[k]],
                fraction_in_well=float(w_in[k]),
                mass_rel=float(state.subband_mass[s]),
                sheet_density_m2=float(n_sub[s]),
            )
        )
    # electrons that are not part of a well's 2DEG: classical (3D) electrons anywhere, plus the
    # quantum density of subbands that do not live mainly in a well (a doping layer's own bound
    # state). The tails of well subbands in the barriers stay with their wells' 2DEG.
    ncl = state.n_classical_m3
    par_cell = 0.5 * (ncl[:-1] + ncl[1:]) * dev.h
    p2 = state.psi**2
    # a subband shared by two degenerate wells (fraction_in_well ~ 0.5 in each) is still a 2DEG:
    # the test is the weight in all wells together
    in_wells = weights[:, list(well_idx)].sum(axis=1)
    for s in range(len(en)):
        if in_wells[s] < 0.5:
            par_cell = par_cell + n_sub[s] * 0.5 * (p2[s, :-1] + p2[s, 1:]) * dev.h
    par_layer = per_layer(layout, par_cell)
    centres = dev.centres
    wells = []
    for li in well_idx:
        p = prof[li]
        mask = dev.layer_of_cell == li
        dens = float(e_layer[li])
        mine = [s for s in range(len(en)) if owner_well[s] == li]
        if dens > 1e6:
            cen = float(np.sum(centres[mask] * e_cell[mask]) / np.sum(e_cell[mask]))
        elif mine:
            p2 = 0.5 * (state.psi[mine[0], :-1] ** 2 + state.psi[mine[0], 1:] ** 2) * dev.h
            cen = float(np.sum(centres[mask] * p2[mask]) / np.sum(p2[mask]))
        else:
            cen = 0.5 * (p.z_top + p.z_bottom)
        nu = math.nan
        if options.field_T:
            nu = dens * sc.h / (sc.e * options.field_T)
        wells.append(
            WellResult(
                name=p.name,
                role=p.well,
                z_top_m=p.z_top,
                z_bottom_m=p.z_bottom,
                sheet_density_m2=dens,
                centroid_m=cen,
                dos_J_m2=float(subband_dos(p.mass)),
                lowest_subband_J=float(en[mine[0]]) if mine else math.nan,
                subbands=tuple(mine),
                filling_factor=nu,
                permittivity_rel=float(p.permittivity),
            )
        )
    # doped layers
    h = dev.h
    ion_cell = dev.donors_m3 * donor_fraction_cell * h
    ion_layer = per_layer(layout, ion_cell)
    don_layer = per_layer(layout, dev.donors_m3 * h)
    doping = tuple(
        DopingResult(
            name=layout.layer_names[i],
            donors_m2=float(don_layer[i]),
            ionized_m2=float(ion_layer[i]),
            electrons_m2=float(par_layer[i]),
            z_top_m=float(prof[i].z_top),
            z_bottom_m=float(prof[i].z_bottom),
        )
        for i in layout.doped_layers
    )
    # flags
    prim = next(w for w in wells if w.role == "primary")
    psub = [en[s] for s in prim.subbands]
    e1 = psub[0] if psub else math.nan
    e2 = psub[1] if len(psub) > 1 else math.nan
    if len(psub) < 2:
        # the primary's second subband lies above every computed subband
        e2 = float(en[-1]) if len(en) else math.nan
    second = bool(e2 < options.second_subband_margin_J)
    # parallel conduction: electrons in any layer that is not a well (doped layers first; an
    # undoped buffer can hold a 3D electron layer too, e.g. when the freeze-out left a
    # thermal population there)
    parallel = tuple(d.name for d in doping if d.electrons_m2 > options.parallel_threshold_m2)
    parallel += tuple(
        layout.layer_names[i]
        for i in range(len(layout.layer_names))
        if i not in well_idx
        and i not in layout.doped_layers
        and par_layer[i] > options.parallel_threshold_m2
    )
    poor = ()
    if options.field_T:
        poor = tuple(
            w.name
            for w in wells
            if w.role == "screening"
            and w.filling_factor >= 0.5
            and abs(w.filling_factor - round(w.filling_factor)) < options.filling_margin
        )
    splits = {}
    if with_tunnel:
        for a, b in itertools.pairwise(well_idx):
            key = f"{layout.layer_names[a]}-{layout.layer_names[b]}"
            if b - a >= 2 and np.all(dev.offset_J[dev.layer_of_cell == a + 1] > 0):
                splits[key] = tunnel_splitting(layout, state, a, b)
    n_total_e = float(e_cell.sum())
    donors_total = float(np.sum(dev.donors_m3 * h))
    neg_boundary = -min(surface_charge_C_m2 + state.bottom_charge_C_m2, 0.0) / sc.e
    margin = donors_total - n_total_e - neg_boundary
    flags = Flags(
        second_subband_occupied=second,
        e2_minus_ef_J=float(e2),
        e2_minus_e1_J=float(e2 - e1),
        parallel_conduction=bool(parallel),
        parallel_layers=parallel,
        poor_screening=bool(poor),
        poor_screening_wells=poor,
        tunnel_coupled=any(v > options.tunnel_threshold_J for v in splits.values()),
        tunnel_splittings_J=splits,
        donor_supply_margin_m2=float(margin),
        donor_supply_low=bool(
            donors_total > 0 and margin < options.supply_margin_fraction * donors_total
        ),
        forward_leakage=bool(gate_voltage > options.forward_limit_V),
        primary_empty=bool(prim.sheet_density_m2 < options.empty_primary_m2),
    )
    others = {
        layout.layer_names[i]: float(par_layer[i])
        for i in range(len(layout.layer_names))
        if i not in well_idx and i not in layout.doped_layers
    }
    return tuple(sub_results), tuple(wells), doping, flags, ion_cell / h * sc.e, others
