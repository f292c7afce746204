"""The island at its operating point: an axisymmetric nonlinear Thomas–Fermi solve of every sheet.

The island is the disk of the primary well inside a ring gate: metal on the surface over
R_gate < r < R_gate + W (the lithographic opening radius R_gate, the ring width W), the 2DEG
continuing beyond it. Every well is a Thomas–Fermi sheet with the 2D edge stage's sheet model
(:class:`qhdesign.section.model.CrossSection`, calibrated so that far from the gate each sheet
holds its 1D density) and the 2D stage's solver
(:class:`qhdesign.section.solver.CrossSectionSolver`) in its axisymmetric form: x is read as r
and every integrand carries r. The gate bias empties the sheets it can; what comes out is n(r)
of every sheet, where each is cut, the electronic edge of the primary, and, at a field and
filling, the compressible strip of the interfering edge.

Two passes as in the edge stage: a mesh twice as coarse locates the cut radii and the strips, a
second mesh is fine (h_edge) at each of them; two more solves at V -+ dV/2 on the second mesh give
dA_I/dV_gate.

References
----------
D. B. Chklovskii, B. I. Shklovskii, L. I. Glazman, Phys. Rev. B 46, 4026 (1992) (incompressible
strips; the strip model is :func:`qhdesign.section.profile.strip_width`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.section.edge import VOLTAGE_STEP_V, _check_gate_voltage, _permittivity_at, _primary
from qhdesign.section.geometry import GateLayout, MeshOptions
from qhdesign.section.model import CrossSection, sheet_level_V
from qhdesign.section.profile import EDGE_FRACTION, crossing_from_bulk, strip_width
from qhdesign.section.solver import CrossSectionSolver, FieldSolution, SolverOptions

__all__ = [
    "EdgeStrip",
    "IslandDevice",
    "OperatingPoint",
    "SheetState",
    "edge_strip",
    "solve_operating_point",
]

#: Default ring-gate width W (m): wide enough that the 2DEG beyond it does not reach the island.
GATE_WIDTH_M = 1.0e-6
#: Default margin beyond the ring gate to the outer boundary (m): the far field is the 1D column.
OUTER_MARGIN_M = 3.0e-6
#: Where the island centre is below its operating filling, the incompressible region reaches the
#: start of the density fall: the point where n is this fraction of the centre density (the 90 %
#: point of the edge stage's healing length).
FALL_FRACTION = 0.9


@dataclass(frozen=True)
class IslandDevice:
    """The island's lithography and bias (SI).

    Exactly one of ``gate_radius_m`` (the lithographic opening radius: the input a fab engineer
    has) and ``electronic_radius_m`` (the radius of the interfering edge, e.g. known from a
    measured flux period: the gate opening is then found that puts the edge there) is given.

    Attributes
    ----------
    gate_voltage_V
        Bias of the ring gate (V).
    gate_radius_m, electronic_radius_m
        See above (m).
    gate_width_m
        Width W of the ring gate (m), default 1 um; the 2DEG continues beyond it.
    outer_margin_m
        Domain beyond the ring gate (m), default 3 um.
    """

    gate_voltage_V: float
    gate_radius_m: float | None = None
    electronic_radius_m: float | None = None
    gate_width_m: float = GATE_WIDTH_M
    outer_margin_m: float = OUTER_MARGIN_M

    def __post_init__(self):
        if (self.gate_radius_m is None) == (self.electronic_radius_m is None):
            raise InputError(
                "give the lithographic gate opening or, labelled as such, a measured electronic "
                "radius, exactly one of the two",
                key="gate_radius_m",
                related=("electronic_radius_m",),
            )
        for key in ("gate_radius_m", "electronic_radius_m", "gate_width_m", "outer_margin_m"):
            v = getattr(self, key)
            if v is None:
                continue
            if not (isinstance(v, int | float) and math.isfinite(v) and 50e-9 <= v <= 50e-6):
                raise InputError(
                    f"{key[:-2].replace('_', ' ')} must lie in 50 nm .. 50 um, got {v!r} m",
                    key=key,
                )
        if not math.isfinite(self.gate_voltage_V):
            raise InputError("gate voltage must be finite", key="gate_voltage_V")


@dataclass(frozen=True)
class SheetState:
    """Where the gate leaves a sheet (SI).

    Attributes
    ----------
    name, role
        Well name and role.
    bulk_density_m2
        1D (far-field) density.
    centre_density_m2
        Density at the island centre, r = 0.
    gated_density_m2
        Smallest density under the ring gate.
    cut_under_gate
        The gate empties the sheet (below 1 % of its bulk density somewhere under the gate).
    cut_radius_m
        Where the sheet ends, scanning out from the centre (1 % of the bulk density); None if
        not cut.
    """

    name: str
    role: str
    bulk_density_m2: float
    centre_density_m2: float
    gated_density_m2: float
    cut_under_gate: bool
    cut_radius_m: float | None


@dataclass(frozen=True)
class EdgeStrip:
    """The interfering edge of the primary at one field and filling (SI).

    The incompressible strip of the operating filling nu is centred where the primary's density
    equals n_nu = nu e B / h (or, if the centre is below n_nu, where n falls to 90 % of the centre
    density) and has the CSG width ``incompressible_width_m``. The compressible strip outside it,
    from ``inner_radius_m`` (the strip's outer boundary) to ``outer_radius_m`` (the electronic
    edge, 1 % of the bulk density), carries the interfering edge.
    """

    field_T: float
    filling: float
    centre_filling: float
    strip_centre_m: float
    incompressible_width_m: float
    inner_radius_m: float
    outer_radius_m: float
    density_gradient_m3: float
    strip_gap_J: float
    edge_velocity_m_per_s: float
    pinned_to_fall: bool

    @property
    def interfering_radius_m(self) -> float:
        """Radius of the interfering edge: the middle of the compressible strip (m)."""
        return 0.5 * (self.inner_radius_m + self.outer_radius_m)

    @property
    def width_m(self) -> float:
        """Width of the compressible strip (m)."""
        return self.outer_radius_m - self.inner_radius_m

    @property
    def A_I_m2(self) -> float:
        """Area enclosed by the interfering edge."""
        return math.pi * self.interfering_radius_m**2

    @property
    def A_L_m2(self) -> float:
        """Area of the incompressible bulk, whose localized charge follows the field."""
        return math.pi * self.inner_radius_m**2

    @property
    def perimeter_m(self) -> float:
        return 2.0 * math.pi * self.interfering_radius_m


def _from_centre(r: np.ndarray, y: np.ndarray, level: float) -> float | None:
    """First r, scanning out from r = 0, where y falls below ``level``."""
    x = crossing_from_bulk(-r[::-1], np.asarray(y)[::-1], level)
    return None if x is None else -x


def edge_strip(
    r_m: np.ndarray,
    n_m2: np.ndarray,
    bulk_density_m2: float,
    field_T: float,
    filling: float,
    strip_gap_J: float,
    eps_r: float,
    *,
    potential: tuple | None = None,
) -> EdgeStrip:
    """The compressible strip of the interfering edge from the primary's n(r) (pure numpy).

    Parameters
    ----------
    r_m, n_m2
        Radii (m, from 0) and the primary's density (m^-2), shape (N,).
    bulk_density_m2
        The primary's 1D density (for the 1 % edge).
    field_T, filling
        Field B (T) and operating filling nu.
    strip_gap_J
        The jump of the electron chemical potential across the incompressible strip (J).
    eps_r
        Relative permittivity at the primary well.
    potential
        Optional ``(phi_V, energy_eV, sheet, kT_J)``: the sheet potential on the same nodes, its
        calibrated energy, the sheet (a SheetSpec, or its DOS for a closed-form sheet) and k_B T.
        Density levels are then located on the potential, which is piecewise linear on the mesh,
        instead of on n(r), which has a kink at the edge: the crossing is the discrete solution's
        own and moves smoothly with the gate voltage (as the edge stage does).

    Raises
    ------
    InputError
        If the island holds no electrons or the incompressible strip swallows the edge.
    """
    r = np.asarray(r_m, dtype=float)
    n = np.asarray(n_m2, dtype=float)
    n0 = float(n[0])
    if not n0 > 0.1 * bulk_density_m2:
        raise InputError(
            "the gate empties the island (centre density below 10 % of the 1D value); "
            "use a wider opening or a less negative gate voltage",
            key="gate_voltage_V",
        )

    def at(level: float) -> float | None:
        if potential is None:
            return _from_centre(r, n, level)
        phi, energy_eV, sheet, kT = potential
        return _from_centre(r, phi, sheet_level_V(sheet, energy_eV, level, kT))

    r_edge = at(EDGE_FRACTION * bulk_density_m2)
    if r_edge is None:
        raise InputError("the gate does not cut the primary well: no island", key="gate_voltage_V")
    n_nu = filling * sc.e * field_T / sc.h
    pinned = n_nu >= FALL_FRACTION * n0
    target = FALL_FRACTION * n0 if pinned else n_nu
    rc = at(target)
    dndr = np.gradient(n, r)
    g = -float(np.interp(rc, r, dndr))
    if not g > 0:
        raise InputError("the primary's density does not fall at the operating filling")
    a = strip_width(eps_r, strip_gap_J, g)
    r_in = rc + 0.5 * a
    if r_in >= r_edge:
        raise InputError(
            f"the incompressible strip ({a * 1e9:.1f} nm) reaches the electronic edge: no "
            "compressible edge; check the gap and the field",
            key="gap_J",
        )
    v = strip_gap_J / (sc.e * a * field_T)
    return EdgeStrip(
        field_T=field_T,
        filling=filling,
        centre_filling=n0 * sc.h / (sc.e * field_T),
        strip_centre_m=rc,
        incompressible_width_m=a,
        inner_radius_m=r_in,
        outer_radius_m=r_edge,
        density_gradient_m3=g,
        strip_gap_J=strip_gap_J,
        edge_velocity_m_per_s=v,
        pinned_to_fall=bool(pinned),
    )


@dataclass(frozen=True, eq=False)
class OperatingPoint:
    """The solved island (SI). ``solution`` holds phi and every n(r) on the grid."""

    section: CrossSection
    device: IslandDevice
    gate_radius_m: float
    solution: FieldSolution
    sheets: tuple[SheetState, ...]
    primary_index: int
    eps_primary: float
    density_minus_m2: np.ndarray  # primary n(r) at V - dV/2
    density_plus_m2: np.ndarray  # and at V + dV/2
    potential_minus_V: np.ndarray  # primary sheet potential at V - dV/2
    potential_plus_V: np.ndarray  # and at V + dV/2
    voltage_step_V: float
    solver: CrossSectionSolver = field(repr=False)
    info: dict = field(default_factory=dict)

    @property
    def r_m(self) -> np.ndarray:
        return self.solution.x_m

    @property
    def primary_density_m2(self) -> np.ndarray:
        return self.solution.density_m2[self.primary_index]

    def _tf(self, phi: np.ndarray) -> tuple:
        ip = self.primary_index
        p = self.section.sheets[ip]
        kT = sc.k * self.section.temperature_K
        return (phi, float(self.solution.sheet_energy_eV[ip]), p, kT)

    def strip(self, field_T: float, filling: float, strip_gap_J: float) -> EdgeStrip:
        """The interfering edge at a field (pure post-processing of the solve)."""
        p = self.section.sheets[self.primary_index]
        return edge_strip(
            self.r_m,
            self.primary_density_m2,
            p.density_m2,
            field_T,
            filling,
            strip_gap_J,
            self.eps_primary,
            potential=self._tf(self.solution.sheet_potential(self.primary_index)),
        )

    def dA_I_dV(self, field_T: float, filling: float, strip_gap_J: float) -> float:
        """dA_I/dV_gate (m^2/V) by the central difference of the solves at V -+ dV/2."""
        p = self.section.sheets[self.primary_index]
        radii = []
        for n, phi in (
            (self.density_minus_m2, self.potential_minus_V),
            (self.density_plus_m2, self.potential_plus_V),
        ):
            s = edge_strip(
                self.r_m,
                n,
                p.density_m2,
                field_T,
                filling,
                strip_gap_J,
                self.eps_primary,
                potential=self._tf(phi),
            )
            radii.append(s.A_I_m2)
        return (radii[1] - radii[0]) / self.voltage_step_V


def _sheet_states(sol: FieldSolution, section: CrossSection, gate: tuple[float, float]):
    r = sol.x_m
    under = (r > gate[0]) & (r < gate[1])
    out = []
    for i, s in enumerate(section.sheets):
        n = sol.density_m2[i]
        gated = float(np.min(n[under])) if np.any(under) else float(n[-1])
        cut = s.density_m2 <= 0 or gated < EDGE_FRACTION * s.density_m2
        rc = None
        if cut and s.density_m2 > 0:
            # located on the sheet potential (piecewise linear), as the edge stage does
            kT = sc.k * section.temperature_K
            level = sheet_level_V(s, sol.sheet_energy_eV[i], EDGE_FRACTION * s.density_m2, kT)
            rc = _from_centre(r, sol.sheet_potential(i), level)
        out.append(
            SheetState(s.name, s.role, float(s.density_m2), float(n[0]), gated, bool(cut), rc)
        )
    return tuple(out)


def _marks(sol, section, ip, gate, targets, strip_gap_J, eps_r):
    """Radii the second mesh must resolve: cut radii and the strips at every target field."""
    marks = []
    for st in _sheet_states(sol, section, gate):
        if st.cut_radius_m is not None:
            marks.append(st.cut_radius_m)
    p = section.sheets[ip]
    for B, nu in targets:
        try:
            s = edge_strip(sol.x_m, sol.density_m2[ip], p.density_m2, B, nu, strip_gap_J, eps_r)
        except InputError:
            continue
        marks += [s.strip_centre_m, s.inner_radius_m, s.outer_radius_m]
    return marks


def solve_operating_point(
    section: CrossSection,
    device: IslandDevice,
    mesh_options: MeshOptions | None = None,
    options: SolverOptions | None = None,
    *,
    targets: tuple[tuple[float, float], ...] = (),
    strip_gap_J: float | None = None,
    voltage_step_V: float = VOLTAGE_STEP_V,
    comm=None,
) -> OperatingPoint:
    """Solve the island nonlinearly at the gate voltage (two passes, see the module notes).

    Parameters
    ----------
    section
        The stack's cross-section (sheets and frozen charges), as for the edge stage.
    device
        Lithographic opening (or a measured electronic radius) and gate bias.
    mesh_options, options
        Mesh and Newton settings (the edge stage's defaults).
    targets
        ``(field_T, filling)`` pairs whose strips the second mesh resolves.
    strip_gap_J
        Chemical-potential jump of the incompressible strip (J), for locating the strips.
    voltage_step_V
        Gate-voltage step of dA_I/dV.

    Raises
    ------
    InputError
        Gate voltage out of range, an island the gate empties, a radius not reachable.
    ConvergenceError
        If Newton fails.
    """
    _check_gate_voltage(section, device.gate_voltage_V)
    if device.electronic_radius_m is not None:
        return _solve_for_electronic_radius(
            section, device, mesh_options, options, targets, strip_gap_J, voltage_step_V, comm
        )
    return _solve(
        section,
        device,
        device.gate_radius_m,
        mesh_options,
        options,
        targets,
        strip_gap_J,
        voltage_step_V,
        comm,
    )


def _solve(section, device, gate_radius, mesh_options, options, targets, strip_gap_J, dv, comm):
    mesh_options = mesh_options or MeshOptions()
    W = device.gate_width_m
    layout = GateLayout(((gate_radius, gate_radius + W),), (gate_radius, gate_radius + W))
    rmax = gate_radius + W + device.outer_margin_m
    base_opts = replace(mesh_options, x_min_m=0.0, half_width_m=rmax)
    ip = _primary(section)
    p = section.sheets[ip]
    eps_r = _permittivity_at(section, p.z_m)
    gap = strip_gap_J if strip_gap_J is not None else 0.0
    base = CrossSectionSolver(
        section, layout, base_opts.scaled(0.5), options, comm=comm, axisymmetric=True
    )
    v = device.gate_voltage_V
    sol0 = base.solve(v)
    marks = _marks(
        sol0, section, ip, (gate_radius, gate_radius + W), targets if gap > 0 else (), gap, eps_r
    )
    marks = sorted({round(m, 10) for m in marks if 1e-9 < m < 0.95 * rmax})
    fine = replace(base_opts, x_attractors_m=tuple(base_opts.x_attractors_m) + tuple(marks))
    solver = CrossSectionSolver(section, layout, fine, options, comm=comm, axisymmetric=True)
    sol = solver.solve(v, initial=sol0)
    lo = solver.solve(v - 0.5 * dv)
    hi = solver.solve(v + 0.5 * dv)
    states = _sheet_states(sol, section, (gate_radius, gate_radius + W))
    info = {
        "dofs": solver.num_dofs,
        "newton_iterations": sol.iterations,
        "linear_solver": solver.linear_solver,
        "grid_nodes_r": int(sol.x_m.size),
        "grid_levels_z": int(sol.z_m.size),
        "outer_radius_m": float(rmax),
        "mesh_s": solver.timings.get("mesh"),
    }
    return OperatingPoint(
        section=section,
        device=device,
        gate_radius_m=float(gate_radius),
        solution=sol,
        sheets=states,
        primary_index=ip,
        eps_primary=eps_r,
        density_minus_m2=lo.density_m2[ip].copy(),
        density_plus_m2=hi.density_m2[ip].copy(),
        potential_minus_V=lo.sheet_potential(ip).copy(),
        potential_plus_V=hi.sheet_potential(ip).copy(),
        voltage_step_V=dv,
        solver=solver,
        info=info,
    )


def _solve_for_electronic_radius(section, device, mesh_options, options, targets, gap, dv, comm):
    """Find the gate opening whose interfering edge sits at the given electronic radius.

    The edge follows the opening almost one to one (it moves with the gate edge at fixed bias),
    so a fixed-point iteration R_gate <- R_gate + (R_target - r_I) converges in 2-4 solves.
    """
    if not targets or gap is None:
        raise InputError(
            "an electronic radius needs the operating field and filling to place the edge",
            key="electronic_radius_m",
        )
    target = float(device.electronic_radius_m)
    B, nu = targets[0]
    rg = target + 0.15e-6  # first guess: the edge ~150 nm inside the gate (refined below)
    history = []
    for _ in range(6):
        op = _solve(section, device, rg, mesh_options, options, targets, gap, dv, comm)
        r_i = op.strip(B, nu, gap).interfering_radius_m
        history.append((rg, r_i))
        if abs(r_i - target) < 0.2e-9:
            break
        if len(history) >= 2:
            (g0, e0), (g1, e1) = history[-2], history[-1]
            slope = (e1 - e0) / (g1 - g0) if g1 != g0 else 1.0
            rg = g1 + (target - e1) / (slope if 0.3 < slope < 3 else 1.0)
        else:
            rg = rg + (target - r_i)
        if not 50e-9 < rg < 50e-6:
            raise InputError(
                f"no gate opening puts the interfering edge at {target * 1e9:.0f} nm",
                key="electronic_radius_m",
            )
    op.info["electronic_radius_iterations"] = [(float(a), float(b)) for a, b in history]
    return op
