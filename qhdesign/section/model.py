"""The electrostatic description of a cross-section: layers, sheets, frozen charge, boundaries.

No DOLFINx here: this module turns the sheet model (:class:`qhdesign.sheets.SheetModel`, the
contract with the 1D stage) into a :class:`CrossSection` and calibrates the sheet energies E_w by
an exact 1D solve on the same z-levels the 2D mesh uses.

Model (see docs/models.md, "2D Thomas–Fermi")
----------------------------------------------
Electron potential energy U = E_c - e*phi, the Fermi level of the grounded 2DEG is the energy
zero, depth z is positive downward. Each well w is a charged sheet at its charge centroid z_w with
the Thomas–Fermi density

    n_w(phi) = D_w k_B T ln(1 + exp((e phi(z_w) - E_w) / k_B T)),

and every fixed charge (frozen donors, the frozen surface charge of an exposed surface) is frozen
at its 1D value. Under a gate the surface potential is phi = V_g - Phi_B/e; an exposed surface
either carries its frozen surface charge (default) or is pinned at phi = V_s - Phi_s/e.

Calibration of E_w: on the z-levels of the mesh, the frozen volume charge is lumped onto the
levels with hat-function weights (this keeps the total charge and its first moment, so the
potential outside the doped layers is exact), the sheets carry their 1D densities, and the
piecewise-linear 1D potential of these line charges is computed exactly. E_w is then the energy
that puts the sheet's Thomas–Fermi density at its 1D value given that potential. A P1 finite-
element solution on the same levels is exact for line charges, so far from any gate the 2D
solution reproduces the 1D densities to solver precision.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError

__all__ = [
    "CrossSection",
    "SheetSpec",
    "cross_section_from_sheet_model",
    "lump_volume_charge",
    "sheet_level_V",
    "sheet_screening",
    "solve_column",
    "thomas_fermi_density",
]


@dataclass(frozen=True)
class SheetSpec:
    """One well as a charged Thomas–Fermi sheet.

    Attributes
    ----------
    name, role
        Well name and role (``"primary"`` or ``"screening"``).
    z_m
        Sheet depth (m, positive down).
    dos_J_m2
        2D density of states (J^-1 m^-2).
    density_m2
        Far-field (1D) density the calibration reproduces (m^-2).
    subband_energy_J
        Lowest subband energy relative to the Fermi level in the 1D solve (J); used to place an
        empty well (density 0), whose energy a density cannot fix.
    law
        A :class:`qhdesign.sheetlaw.SheetLaw` n(phi - E) replacing the closed-form Thomas–Fermi
        sheet (constant DOS), or None. The offset E is calibrated like E_w; an absolute law (a
        table from gated 1D solves) keeps E = 0 for an empty well.
    charge_density_m2
        The far-field electrons of the sheet's charge (m^-2) if they differ from the reported
        ``density_m2`` (a law sheet with a reported column); None: the same.
    read_z_m
        A law sheet only: the depth (m) where its law reads the potential when it is not the
        sheet's own depth (the charge stays at ``z_m``); None: ``z_m``.
    charge_z_max_m
        A law sheet read above its charge, with a centroid column: the deepest centroid (m). Its
        charge is then split between ``z_m`` (the shallowest) and this depth so that it sits at
        the law's centroid (first moment kept); None: all at ``z_m``.
    """

    name: str
    role: str
    z_m: float
    dos_J_m2: float
    density_m2: float
    subband_energy_J: float = float("nan")
    law: object | None = None
    charge_density_m2: float | None = None
    read_z_m: float | None = None
    charge_z_max_m: float | None = None

    @property
    def read_depth_m(self) -> float:
        """Depth (m) where the sheet's law reads the potential: ``read_z_m`` if set (a law
        sheet read above its charge, at its well's upper interface), else the sheet's own."""
        if self.read_z_m is None or self.law is None:
            return self.z_m
        return float(self.read_z_m)

    @property
    def far_charge_m2(self) -> float:
        """Electrons the sheet carries in the far field (m^-2): ``charge_density_m2`` when the
        sheet's charge differs from the density it reports (a 1D table sheet carries its
        subbands' tails as well), else ``density_m2``."""
        return self.density_m2 if self.charge_density_m2 is None else self.charge_density_m2


@dataclass(frozen=True, eq=False)
class CrossSection:
    """Everything along z that the 2D solve needs, in SI units.

    Attributes
    ----------
    layer_z_m
        Layer boundaries, shape (L+1,), from 0 (semiconductor surface) to the bottom of the model.
    layer_permittivity
        Relative permittivities, shape (L,).
    sheets
        Wells, top to bottom.
    temperature_K
        Solve temperature (K).
    charge_z_m, charge_C_m3
        Frozen volume charge: cell centres, shape (N,), and density (C/m^3) on the 1D grid.
    charge_edges_m
        The cells' edges, shape (N+1,) (the 1D nodes); empty: midpoints between the centres,
        exact only on a uniform grid.
    surface_charge_C_m2
        Frozen charge of an exposed surface (C/m^2).
    surface_potential_V
        phi at an exposed surface in the far field: V_s - Phi_s/e (V). Used as the Dirichlet
        value of a pinned surface and as the potential reference of a frozen one.
    gate_barrier_J
        Schottky barrier Phi_B of the gate metal (J): phi = V_g - Phi_B/e under a gate.
    bottom
        ``"zero_field"`` or ``"gate"`` (Dirichlet at ``bottom_potential_V``).
    surface_mode
        Default treatment of the exposed surface: ``"frozen"`` or ``"pinned"``.
    extra_levels_m
        Depths that must be mesh lines (probe lines for tests), m.
    gate_dielectric_thickness_m, gate_dielectric_permittivity
        A charge-free dielectric between every gate and the semiconductor (m; relative
        permittivity); 0: metal on the semiconductor. Between the gates the surface is exposed.
        The layer enters as a series capacitance per area eps_0 eps_d / t between the metal and
        the surface under it (docs/models.md, "Gate dielectric").
    """

    layer_z_m: np.ndarray
    layer_permittivity: np.ndarray
    sheets: tuple[SheetSpec, ...]
    temperature_K: float
    charge_z_m: np.ndarray = field(default_factory=lambda: np.zeros(0))
    charge_C_m3: np.ndarray = field(default_factory=lambda: np.zeros(0))
    charge_edges_m: np.ndarray = field(default_factory=lambda: np.zeros(0))
    surface_charge_C_m2: float = 0.0
    surface_potential_V: float = 0.0
    gate_barrier_J: float = 0.0
    bottom: str = "zero_field"
    bottom_potential_V: float = 0.0
    extra_levels_m: tuple[float, ...] = ()
    surface_mode: str = "frozen"
    gate_dielectric_thickness_m: float = 0.0
    gate_dielectric_permittivity: float = 1.0

    def __post_init__(self):
        if not (0.0 <= self.gate_dielectric_thickness_m < 10e-6):
            raise InputError(
                "gate dielectric thickness must lie in [0, 10 um)",
                key="surface.dielectric_thickness",
            )
        if not self.gate_dielectric_permittivity >= 1.0:
            raise InputError(
                "gate dielectric permittivity must be >= 1", key="surface.dielectric_permittivity"
            )
        z = np.asarray(self.layer_z_m, dtype=float)
        eps = np.asarray(self.layer_permittivity, dtype=float)
        if z.ndim != 1 or z.size < 2 or np.any(np.diff(z) <= 0):
            raise InputError("layer boundaries must increase", key="layer_z_m")
        if eps.shape != (z.size - 1,) or np.any(eps <= 0):
            raise InputError("need one positive permittivity per layer", key="layer_permittivity")
        if self.surface_mode not in ("frozen", "pinned"):
            raise InputError("surface_mode must be 'frozen' or 'pinned'", key="surface_mode")
        if self.bottom not in ("zero_field", "gate"):
            raise InputError("bottom must be 'zero_field' or 'gate'", key="bottom")
        if not self.temperature_K > 0:
            raise InputError("temperature must be > 0 K", key="temperature_K")
        for s in self.sheets:
            if not z[0] < s.z_m < z[-1]:
                raise InputError(f"sheet '{s.name}' at {s.z_m} m lies outside the layers")
            if s.read_z_m is not None and not z[0] < s.read_z_m < z[-1]:
                raise InputError(f"sheet '{s.name}': its read depth lies outside the layers")
            if s.charge_z_max_m is not None and not s.z_m < s.charge_z_max_m < z[-1]:
                raise InputError(f"sheet '{s.name}': its deepest centroid lies outside")
            if s.dos_J_m2 <= 0 or s.density_m2 < 0:
                raise InputError(f"sheet '{s.name}' needs DOS > 0 and density >= 0")


def cross_section_from_sheet_model(model, *, gate_barrier_J: float | None = None) -> CrossSection:
    """Build a :class:`CrossSection` from a :class:`qhdesign.sheets.SheetModel` (the contract).

    Everything comes from the sheet model: the sheets, the frozen charge plus the residual
    electrons outside the wells, the far-field surface potential of the 1D solution, and the
    bottom boundary (a fixed-potential bottom becomes ``bottom="gate"``).

    Parameters
    ----------
    model
        A :class:`qhdesign.sheets.SheetModel` (read by attribute).
    gate_barrier_J
        Schottky barrier of the depletion-gate metal (J). Default: the stack's surface barrier,
        so that at zero gate bias a gate changes nothing on a pinned surface.
    """
    sheets = tuple(
        SheetSpec(
            s.name,
            s.role,
            float(s.z_m),
            float(s.dos_J_m2),
            float(s.density_m2),
            float(getattr(s, "subband_energy_J", float("nan"))),
        )
        for s in model.sheets
    )
    barrier = float(model.surface_barrier_J)
    frozen = (
        model.surface_kind == "exposed" and getattr(model, "surface_charge_mode", "") == "frozen"
    )
    edges = getattr(model, "fixed_charge_edges_m", None)
    rho = np.asarray(model.fixed_charge_C_m3, dtype=float)
    residual = getattr(model, "residual_charge_C_m3", None)
    if residual is not None:
        rho = rho + np.asarray(residual, dtype=float)
    surface_potential = getattr(model, "surface_potential_V", None)
    if surface_potential is None:  # a hand-built model without a 1D solution: the pinning formula
        surface_potential = float(model.surface_bias_V) - barrier / sc.e
    fixed_bottom = getattr(model, "bottom_kind", "zero_field") == "dirichlet"
    return CrossSection(
        surface_mode="frozen" if frozen else "pinned",
        layer_z_m=np.asarray(model.layer_z_m, dtype=float),
        layer_permittivity=np.asarray(model.layer_permittivity, dtype=float),
        sheets=sheets,
        temperature_K=float(model.temperature_K),
        charge_z_m=np.asarray(model.fixed_charge_z_m, dtype=float),
        charge_C_m3=rho,
        charge_edges_m=np.asarray(edges if edges is not None else np.zeros(0), dtype=float),
        surface_charge_C_m2=float(model.surface_charge_C_m2),
        surface_potential_V=float(surface_potential),
        gate_barrier_J=barrier if gate_barrier_J is None else float(gate_barrier_J),
        bottom="gate" if fixed_bottom else "zero_field",
        gate_dielectric_thickness_m=float(getattr(model, "gate_dielectric_thickness_m", 0.0)),
        gate_dielectric_permittivity=float(getattr(model, "gate_dielectric_permittivity", 1.0)),
        bottom_potential_V=float(getattr(model, "bottom_potential_V", 0.0))
        if fixed_bottom
        else 0.0,
    )


def thomas_fermi_density(
    energy_J: np.ndarray | float, dos_J_m2: float, kT_J: float
) -> np.ndarray | float:
    """n = D k_B T ln(1 + exp(energy / k_B T)) with energy = e phi - E_w (m^-2); overflow safe."""
    return dos_J_m2 * kT_J * np.logaddexp(0.0, np.asarray(energy_J) / kT_J)


def _inverse_tf(n_m2: float, dos_J_m2: float, kT_J: float) -> float:
    """Energy e phi - E_w (J) at which the Thomas–Fermi sheet holds ``n_m2``."""
    y = n_m2 / (dos_J_m2 * kT_J)
    if y > 30.0:
        return kT_J * (y + np.log1p(-np.exp(-y)))
    if y <= 0.0:
        raise InputError("an empty well cannot be calibrated (density 0)")
    return kT_J * np.log(np.expm1(y))


def _law_offset(s: SheetSpec, phi_V: float) -> float:
    """Offset E (V) of a sheet law: the law holds the 1D density at the far-field potential.

    An empty (or nearly empty, below 1e-3 of the law's largest tabulated density) well keeps an
    absolute law's own potential (E = 0) and places a relative law by its subband energy."""
    law = s.law
    floor = float(law.density_m2[0]) + 1e-3 * float(law.density_m2[-1] - law.density_m2[0])
    if s.far_charge_m2 > floor:
        return float(phi_V - law.inverse(s.far_charge_m2))
    if law.absolute:
        return 0.0
    if np.isfinite(s.subband_energy_J):
        return float(phi_V + s.subband_energy_J / sc.e)
    raise InputError(
        f"well '{s.name}' is empty in the 1D solve and has no subband energy to place it"
    )


def sheet_screening(sheet) -> tuple[float, float]:
    """(depth m, C_q F/m^2) with which a sheet screens a small perturbation in the far field:
    a closed-form sheet at its depth with e^2 D; a law sheet at the depth where it reads the
    potential, with e dn/dphi of its law at its far-field charge (docs/derivations.md, "Edge
    tails": to first order the tail depends on where the sheet reads, not where its charge is)."""
    law = getattr(sheet, "law", None)
    if law is None:
        return float(sheet.z_m), sc.e**2 * float(sheet.dos_J_m2)
    x = law.inverse(sheet.far_charge_m2)
    return float(sheet.read_depth_m), sc.e * float(law.slope(x))


def sheet_level_V(sheet, energy_eV: float, n_m2: float, kT_J: float) -> float:
    """The sheet potential (V) at which ``sheet`` reports the density ``n_m2`` (> 0), given its
    calibrated energy/offset (V): for a closed-form sheet E_w + mu_TF(n)/e, for a law sheet
    E + the law's inverse of its reported density. ``sheet`` may be a bare DOS (J^-1 m^-2)."""
    law = getattr(sheet, "law", None)
    if law is not None:
        return float(energy_eV + law.inverse_reported(n_m2))
    dos = float(getattr(sheet, "dos_J_m2", sheet))
    return float(energy_eV + _inverse_tf(n_m2, dos, kT_J) / sc.e)


def lump_volume_charge(
    levels_m: np.ndarray,
    cell_centres_m: np.ndarray,
    rho_C_m3: np.ndarray,
    z_min: float,
    z_max: float,
    cell_edges_m: np.ndarray | None = None,
) -> np.ndarray:
    """Lump a cell-wise constant volume charge onto z-levels with hat-function weights.

    Each 1D cell spans ``cell_edges_m`` (shape (N+1,), the 1D nodes) when given; otherwise the
    midpoints between neighbouring centres (ends at ``z_min``/``z_max``), which are the true
    edges only on a uniform grid. The charge of every piece between two levels is split
    linearly between them, which keeps the total charge, sum rho_i (edge_{i+1} - edge_i), and
    its first moment exactly.

    Returns
    -------
    numpy.ndarray
        Line charge per level (C/m^2), shape (K,).
    """
    levels = np.asarray(levels_m, dtype=float)
    q = np.zeros(levels.size)
    zc = np.asarray(cell_centres_m, dtype=float)
    rho = np.asarray(rho_C_m3, dtype=float)
    if zc.size == 0:
        return q
    if cell_edges_m is not None and np.size(cell_edges_m) == zc.size + 1:
        edges = np.clip(np.asarray(cell_edges_m, dtype=float), z_min, z_max)
    else:
        edges = np.concatenate(([z_min], 0.5 * (zc[1:] + zc[:-1]), [z_max]))
    bps = np.unique(np.concatenate((edges, levels)))
    bps = bps[(bps >= z_min) & (bps <= z_max)]
    a, b = bps[:-1], bps[1:]
    mid = 0.5 * (a + b)
    cell = np.clip(np.searchsorted(edges, mid) - 1, 0, zc.size - 1)
    charge = rho[cell] * (b - a)
    k = np.clip(np.searchsorted(levels, mid) - 1, 0, levels.size - 2)
    w_hi = (mid - levels[k]) / (levels[k + 1] - levels[k])
    np.add.at(q, k, charge * (1.0 - w_hi))
    np.add.at(q, k + 1, charge * w_hi)
    return q


def solve_column(
    levels_m: np.ndarray,
    eps_r: np.ndarray,
    line_charge_C_m2: np.ndarray,
    *,
    top: str,
    top_potential_V: float,
    bottom: str,
    bottom_potential_V: float = 0.0,
) -> np.ndarray:
    """Exact 1D potential of line charges on levels with piecewise-constant permittivity.

    Parameters
    ----------
    levels_m
        Levels, shape (K,), from the surface down.
    eps_r
        Relative permittivity of each interval, shape (K-1,).
    line_charge_C_m2
        Charge on each level (C/m^2), shape (K,); the surface charge sits on level 0.
    top
        ``"dirichlet"`` (phi(0) = top_potential_V) or ``"charge"`` (zero field above the surface,
        the surface charge is ``line_charge[0]``, and phi(0) = top_potential_V fixes the constant
        when the bottom is also a zero-field boundary).
    bottom
        ``"zero_field"`` or ``"gate"`` (phi = bottom_potential_V).

    Returns
    -------
    numpy.ndarray
        phi on the levels (V), shape (K,).
    """
    z = np.asarray(levels_m, dtype=float)
    q = np.asarray(line_charge_C_m2, dtype=float)
    dz_over_eps = np.diff(z) / (sc.epsilon_0 * np.asarray(eps_r, dtype=float))
    if top == "charge":
        # displacement D = eps E_z (z down) on each interval: charge above it
        d = np.cumsum(q)[:-1]
        phi = top_potential_V - np.concatenate(([0.0], np.cumsum(d * dz_over_eps)))
        if bottom == "gate":
            phi += bottom_potential_V - phi[-1]
        return phi
    if bottom == "zero_field":
        d = -np.cumsum(q[::-1])[::-1][1:]  # minus the charge below each interval
    else:
        d0 = np.cumsum(q[1:])[:-1]  # charge between level 1 and the interval's top
        d0 = np.concatenate(([0.0], d0))
        drop = top_potential_V - bottom_potential_V
        c = (drop - np.sum(d0 * dz_over_eps)) / np.sum(dz_over_eps)
        d = c + d0
    return top_potential_V - np.concatenate(([0.0], np.cumsum(d * dz_over_eps)))


def calibrate(
    section: CrossSection,
    levels_m: np.ndarray,
    eps_intervals: np.ndarray,
    *,
    exposed: str,
) -> dict:
    """Sheet energies E_w and the far-field column on the given levels.

    Parameters
    ----------
    section
        The cross-section.
    levels_m, eps_intervals
        z-levels of the mesh (shape (K,)) and the permittivity of each interval (K-1,).
    exposed
        ``"frozen"`` or ``"pinned"``: how the exposed surface is treated.

    Returns
    -------
    dict
        ``energy_eV`` (E_w/e per sheet), ``line_charge_C_m2`` (frozen charge per level, without
        sheets and without the surface charge, with the neutrality correction on the bottom
        level), ``surface_charge_C_m2``, ``neutrality_correction_C_m2``,
        ``surface_charge_correction_C_m2`` (frozen surface over a bottom contact), ``phi_V``
        (far-field potential per level), ``sheet_level`` (level index of each sheet).
    """
    z = np.asarray(levels_m, dtype=float)
    kT = sc.k * section.temperature_K
    q_fixed = lump_volume_charge(
        z,
        section.charge_z_m,
        section.charge_C_m3,
        float(z[0]),
        float(z[-1]),
        section.charge_edges_m if np.size(section.charge_edges_m) else None,
    )
    idx = []
    for s in section.sheets:
        k = int(np.argmin(np.abs(z - s.z_m)))
        if abs(z[k] - s.z_m) > 1e-13:
            raise RuntimeError(f"sheet {s.name} is not on a mesh level")  # a bug, not input
        idx.append(k)
    q = q_fixed.copy()
    for s, k in zip(section.sheets, idx, strict=True):
        q[k] -= sc.e * s.far_charge_m2
    sigma = section.surface_charge_C_m2 if exposed == "frozen" else 0.0
    correction = 0.0
    if exposed == "frozen" and section.bottom == "zero_field":
        # Both boundaries are zero-field: the column must be neutral. Whatever the sheet model
        # leaves out (classical electrons outside the wells, e.g. at the bottom of a deep
        # substrate, and wavefunction tails outside the well layers) is frozen on the bottom
        # level, far from the gates, and reported.
        correction = -(sigma + np.sum(q))
        q[-1] += correction
        q_fixed = q_fixed.copy()
        q_fixed[-1] += correction
    surface_correction = 0.0
    if exposed == "frozen" and section.bottom == "gate":
        # Both boundary potentials are known from the 1D solution (the far-field surface
        # potential and the bottom contact), so the frozen surface charge is fixed by them; the
        # difference from the sheet model's value (charge-model and discretisation differences
        # between the stages) is reported. Without it the whole mismatch would shift the far-field
        # surface potential against the gate.
        phi_d = solve_column(
            z,
            eps_intervals,
            q,
            top="dirichlet",
            top_potential_V=section.surface_potential_V,
            bottom="gate",
            bottom_potential_V=section.bottom_potential_V,
        )
        # Gauss at the surface with zero field above: displacement below = charge on level 0
        d0 = -sc.epsilon_0 * eps_intervals[0] * (phi_d[1] - phi_d[0]) / (z[1] - z[0])
        needed = d0 - q[0]
        surface_correction = needed - sigma
        sigma = needed
    q[0] += sigma
    phi = solve_column(
        z,
        eps_intervals,
        q,
        top="charge" if exposed == "frozen" else "dirichlet",
        top_potential_V=section.surface_potential_V,
        bottom=section.bottom,
        bottom_potential_V=section.bottom_potential_V,
    )
    energy = []
    read_idx = []
    for s, k in zip(section.sheets, idx, strict=True):
        kr = k
        if s.law is not None and s.read_depth_m != s.z_m:
            kr = int(np.argmin(np.abs(z - s.read_depth_m)))
            if abs(z[kr] - s.read_depth_m) > 1e-13:
                raise RuntimeError(f"read depth of {s.name} is not on a mesh level")  # a bug
        read_idx.append(kr)
        if s.law is not None:
            energy.append(_law_offset(s, phi[kr]))
            continue
        if s.density_m2 > 1e-6 * s.dos_J_m2 * kT:
            mu = _inverse_tf(s.density_m2, s.dos_J_m2, kT)
        elif np.isfinite(s.subband_energy_J):
            mu = -s.subband_energy_J  # empty well: its subband sits E_sub above the Fermi level
        else:
            raise InputError(
                f"well '{s.name}' is empty in the 1D solve and has no subband energy to place it"
            )
        energy.append(phi[k] - mu / sc.e)
    return {
        "energy_eV": np.array(energy),
        "line_charge_C_m2": q_fixed,
        "surface_charge_C_m2": sigma,
        "neutrality_correction_C_m2": correction,
        "surface_charge_correction_C_m2": surface_correction,
        "phi_V": phi,
        "sheet_level": np.array(idx, dtype=int),
        "read_level": np.array(read_idx, dtype=int),
    }
