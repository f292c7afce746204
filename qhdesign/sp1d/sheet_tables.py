"""Sheet tables: each well's charge and charge centroid against its local potential.

A fine set of gated 1D solves (donors frozen at the cool-down state, warm-started like the gate
sweep) gives, for every well, its electrons (all subbands living mainly in it, wavefunction tails
in the barriers included) and their centroid, against the electrostatic potential at the well's
reference depth (its zero-bias charge centroid, where the 2D stage puts its sheet). A 2D stage
that takes a sheet's density from its table instead of a constant density of states lets the
tails deplete with the well and carries the well's quantum capacitance and Stark shift along.

Only numpy and the 1D stage are used; the 2D hand-off goes through the sheet model.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants as sc

from .analysis import cell_electrons, per_layer, subband_wells
from .charge import subband_dos
from .options import BandsOptions
from .solve import _check_temperature, check_gate_voltage, freeze_out, solve_at

__all__ = ["SheetTable", "SheetTables", "sheet_tables"]


@dataclass(frozen=True)
class SheetTable:
    """One well's table, ordered by increasing potential.

    Attributes
    ----------
    name, role
        Well layer name and role.
    reference_z_m
        Depth (m) where the potential is read: the zero-bias charge centroid.
    potential_V
        Electrostatic potential at ``reference_z_m`` (V), increasing, shape (M,).
    density_m2
        Electrons of the well's subbands (m^-2), shape (M,).
    centroid_m
        Their charge centroid (m); for an empty well the lowest subband's centroid, shape (M,).
    layer_density_m2
        Electrons inside the well layer (m^-2), the 1D stage's per-well density (tails of its
        subbands in the barriers excluded, other electrons in the layer included), shape (M,).
    """

    name: str
    role: str
    reference_z_m: float
    potential_V: np.ndarray
    density_m2: np.ndarray
    centroid_m: np.ndarray
    layer_density_m2: np.ndarray | None = None

    def density(self, phi_V):
        """Sheet density (m^-2) at potential ``phi_V`` (linear interpolation; clamped at the
        table's ends: empty below, its top value above)."""
        return np.interp(phi_V, self.potential_V, self.density_m2)

    def centroid(self, phi_V):
        """Charge centroid (m) at potential ``phi_V`` (linear interpolation, clamped)."""
        return np.interp(phi_V, self.potential_V, self.centroid_m)


@dataclass(frozen=True)
class SheetTables:
    """Tables of all wells and the gate voltages of the 1D solves they come from.

    ``surface_potential_V`` (shape (M,)) is phi at the semiconductor surface of each solve and
    ``electrons_m2`` (shape (M, W)) the electrons of every well's subbands (``layer_electrons_m2``:
    those inside each well layer; ``centroids_m`` their charge centroids), all in the order of
    ``gate_voltage_V`` (the sweep order), for a model that rebuilds the column of each solve."""

    gate_voltage_V: np.ndarray
    wells: tuple[SheetTable, ...]
    temperature_K: float
    surface_potential_V: np.ndarray | None = None
    electrons_m2: np.ndarray | None = None
    layer_electrons_m2: np.ndarray | None = None
    centroids_m: np.ndarray | None = None

    def well(self, name: str) -> SheetTable:
        return next(w for w in self.wells if w.name == name)

    def to_dict(self) -> dict:
        return {
            "temperature_K": self.temperature_K,
            "gate_voltage_V": self.gate_voltage_V.tolist(),
            "wells": {
                w.name: {
                    "role": w.role,
                    "reference_z_m": w.reference_z_m,
                    "potential_V": w.potential_V.tolist(),
                    "density_m2": w.density_m2.tolist(),
                    "centroid_m": w.centroid_m.tolist(),
                    "layer_density_m2": None
                    if w.layer_density_m2 is None
                    else w.layer_density_m2.tolist(),
                }
                for w in self.wells
            },
        }


def _well_charges(layout, st, wells):
    """Electrons (m^-2) and centroid (m) of the subbands owned by each well."""
    dev = layout.device
    kT = sc.k * st.temperature_K
    occ = subband_dos(st.subband_mass) * kT * np.logaddexp(0.0, -st.energies_J / kT)
    weights = subband_wells(layout, st.psi)[:, list(wells)]
    owner = np.argmax(weights, axis=1)
    h = dev.h
    zc = dev.centres
    p2 = st.psi**2
    cell = 0.5 * (p2[:, :-1] + p2[:, 1:]) * h  # |psi|^2 per cell, each row sums to 1
    dens = np.zeros(len(wells))
    cen = np.zeros(len(wells))
    for k in range(len(wells)):
        mine = np.nonzero(owner == k)[0]
        if mine.size == 0:
            cen[k] = np.nan
            continue
        n_cell = occ[mine] @ cell[mine]
        dens[k] = float(n_cell.sum())
        if dens[k] > 1e6:
            cen[k] = float(n_cell @ zc / dens[k])
        else:
            lowest = mine[np.argmin(st.energies_J[mine])]
            cen[k] = float(cell[lowest] @ zc)
    return dens, cen


def sheet_tables(
    stack,
    v_from: float = 0.0,
    v_to: float = -2.0,
    step: float = 0.01,
    *,
    temperature: float | None = None,
    options: BandsOptions | None = None,
    frozen=None,
) -> SheetTables:
    """Tabulate every well's density and centroid against its local potential.

    Parameters
    ----------
    stack
        Stack; on an exposed surface a metal gate with the surface barrier is laid on it.
    v_from, v_to, step
        Gate voltages of the 1D solves (V); the sweep stops early once every well is empty.
    temperature
        Solve temperature (K); default the stack's.
    options, frozen
        As for :func:`~qhdesign.sp1d.gate_response`.

    Returns
    -------
    SheetTables

    Raises
    ------
    InputError
        Voltages past the barrier, bad temperature.
    ConvergenceError
        A 1D solve does not converge (no partial table is returned).
    """
    opts = options or BandsOptions()
    gated = stack.surface.kind == "exposed"
    t = _check_temperature(stack.temperature if temperature is None else temperature, "temperature")
    n_pts = int(np.floor(abs(v_to - v_from) / abs(step) + 1e-9)) + 1
    volts = v_from + np.sign(v_to - v_from) * abs(step) * np.arange(n_pts)
    check_gate_voltage(stack, float(v_from), "v_from", "first table voltage")
    check_gate_voltage(stack, float(v_to), "v_to", "last table voltage")
    if frozen is None:
        frozen = freeze_out(stack, opts)
    layout = frozen.layout
    wells = layout.well_layers
    z = layout.device.z
    rows_phi, rows_n, rows_c, rows_l, used = [], [], [], [], []
    rows_top: list[float] = []
    prev: list[np.ndarray] = []
    last = None
    z_ref = None
    for v in volts:
        guess = 2 * prev[-1] - prev[-2] if len(prev) >= 2 else (prev[-1] if prev else None)
        st = solve_at(
            stack,
            frozen,
            float(v),
            t,
            opts,
            phi_guess=guess,
            gated=gated,
            warm_psi=None if last is None else last.psi,
            xc_guess=None if last is None else last.xc_J,
        )
        last = st
        prev = [*prev[-1:], st.phi_V]
        dens, cen = _well_charges(layout, st, wells)
        if z_ref is None:  # the first (least negative) voltage fixes the sheet positions
            z_ref = np.where(
                np.isfinite(cen),
                cen,
                0.5 * (layout.layer_z[np.array(wells)] + layout.layer_z[np.array(wells) + 1]),
            )
        rows_phi.append(np.interp(z_ref, z, st.phi_V))
        rows_n.append(dens)
        rows_c.append(cen)
        rows_top.append(float(np.interp(0.0, z, st.phi_V)))
        rows_l.append(per_layer(layout, cell_electrons(layout, st))[list(wells)])
        used.append(float(v))
        if np.all(dens < 1e8):  # every well empty (below 1e4 cm^-2)
            break
    phi = np.array(rows_phi)
    dens = np.array(rows_n)
    cen = np.array(rows_c)
    lay = np.array(rows_l)
    out = []
    for k, li in enumerate(wells):
        order = np.argsort(phi[:, k])
        c = cen[order, k]
        c = np.where(np.isfinite(c), c, z_ref[k])
        out.append(
            SheetTable(
                name=layout.layer_names[li],
                role=stack.profile()[li].well,
                reference_z_m=float(z_ref[k]),
                potential_V=phi[order, k],
                density_m2=dens[order, k],
                centroid_m=c,
                layer_density_m2=lay[order, k],
            )
        )
    return SheetTables(
        gate_voltage_V=np.array(used),
        wells=tuple(out),
        temperature_K=t,
        surface_potential_V=np.array(rows_top),
        electrons_m2=dens.copy(),
        layer_electrons_m2=lay.copy(),
        centroids_m=np.where(np.isfinite(cen), cen, z_ref[None, :]),
    )
