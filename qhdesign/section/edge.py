"""Edge analysis: what a fab engineer asks of a depletion gate.

``solve_edge`` answers, for one gate edge (metal over x < 0): where is the electronic edge of each
well relative to the lithographic edge, how sharp is it, is the well cut under the gate, how
strong is the in-plane field and how fast is the edge state at the operating filling, where are
the incompressible strips, and how far does the edge move per gate volt (hence dA/dV for a
perimeter). Split gates and pinch-off: :mod:`qhdesign.section.constriction`.

Definitions of edge, healing length, cut and strips: :mod:`qhdesign.section.profile`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
from scipy import constants as sc

from qhdesign import materials
from qhdesign.errors import InputError
from qhdesign.limits import MIN_GATE_VOLTAGE_V, check_field, check_gate_voltage  # noqa: F401
from qhdesign.results import Table, flatten

from .geometry import GateLayout, MeshOptions
from .model import CrossSection, sheet_level_V, sheet_screening
from .profile import (
    EDGE_FRACTION,
    STRIP_MIN_WIDTH_LB,
    crossing_from_bulk,
    incompressible_strips,
    interp_at,
    local_filling,
)
from .solver import CrossSectionSolver, FieldSolution, SolverOptions
from .tails import TAIL_WINDOW, fit_tail_length, tail_modes, top_mode_length

__all__ = [
    "EdgeResult",
    "EdgeSettings",
    "WellEdge",
    "analyse_edge",
    "solve_edge",
]

#: Gate-voltage step of the finite difference for the edge shift per volt (V).
VOLTAGE_STEP_V = 0.02
#: The exchange-enhanced odd-integer spin gap (``spin_gap="enhanced"``) uses 15 times the bare
#: |g*| of the materials table. Common practice: measured nu = 1 and nu = 3 spin gaps of GaAs
#: 2DEGs are 10 to 20 times the bare Zeeman gap and grow linearly with B (an enhanced g*; e.g.
#: D. R. Leadley, R. J. Nicholas, J. J. Harris and C. T. Foxon, arXiv:cond-mat/9805332 (1998)).
G_ENHANCEMENT = 15.0
#: Accepted values of ``EdgeSettings.spin_gap``.
SPIN_GAP_MODELS = ("bare", "enhanced")


def bare_g_factor() -> float:
    """|g*| of GaAs conduction electrons (materials table: -0.44): the Zeeman splitting subtracted
    from the even-integer gaps, and the odd-integer spin gap with ``spin_gap="bare"``."""
    return abs(materials.electron_g_factor_gaas())


@dataclass(frozen=True)
class EdgeSettings:
    """What to compute besides the edge itself.

    Attributes
    ----------
    gate_voltage_V
        Gate bias (V).
    field_T
        Perpendicular magnetic field (T); needed for the filling, edge velocity and strips.
    filling
        Operating filling nu whose edge channel is reported (default 1 when a field is given).
    gap_energy_J
        Gap of a fractional ``filling`` (J): adds its incompressible strip.
    perimeter_m
        Gate perimeter for dA/dV (m).
    voltage_step_V
        Step of the finite difference for the edge shift per volt.
    spin_gap
        Odd-integer strip gap: ``"bare"`` Zeeman |g*| mu_B B with |g*| = 0.44, or
        ``"enhanced"`` with the exchange-enhanced ``g_effective`` (default
        ``G_ENHANCEMENT`` times the bare |g*|, common practice).
    g_effective
        |g*| of the enhanced spin gap (implies ``spin_gap="enhanced"``).
    spin_gap_J
        The odd-integer gap itself (J), given by the user; overrides ``spin_gap``.
    strip_min_width_lB
        Strips narrower than this many magnetic lengths are flagged.
    """

    gate_voltage_V: float
    field_T: float | None = None
    filling: float | None = None
    gap_energy_J: float | None = None
    perimeter_m: float | None = None
    voltage_step_V: float = VOLTAGE_STEP_V
    spin_gap: str = "bare"
    g_effective: float | None = None
    spin_gap_J: float | None = None
    strip_min_width_lB: float = STRIP_MIN_WIDTH_LB

    def __post_init__(self):
        if self.spin_gap not in SPIN_GAP_MODELS:
            raise InputError(
                f"'{self.spin_gap}' is not a spin-gap model; allowed: bare, enhanced, or an "
                "energy such as '0.8 meV'",
                key="spin_gap",
            )
        if self.g_effective is not None and not 0 < self.g_effective <= 100:
            raise InputError(
                f"effective g-factor must lie in (0, 100], got {self.g_effective:g}",
                key="g_effective",
            )
        if self.spin_gap_J is not None and not 0 < self.spin_gap_J < 0.1 * sc.e:
            raise InputError("spin gap must lie between 0 and 100 meV", key="spin_gap_J")
        if not 0 < self.strip_min_width_lB <= 20:
            raise InputError(
                f"strip criterion must lie in (0, 20] magnetic lengths, got "
                f"{self.strip_min_width_lB:g}",
                key="strip_min_width_lB",
            )
        if self.filling is not None and (self.field_T is None or self.field_T == 0.0):
            raise InputError(
                "a filling needs a magnetic field B > 0 T", key="field_T", related=("filling",)
            )
        check_field(self.field_T, "field_T")
        if self.filling is not None and not self.filling > 0:
            raise InputError(f"filling must be > 0, got {self.filling:g}", key="filling")
        if self.gap_energy_J is not None and not self.gap_energy_J > 0:
            raise InputError("gap energy must be > 0", key="gap_energy_J")
        if self.gap_energy_J is not None and (
            self.filling is None or abs(self.filling - round(self.filling)) < 1e-9
        ):
            raise InputError(
                "a gap energy is the gap of a fractional filling (e.g. 1/3); "
                "integer strips use the Landau or spin gap",
                key="gap_energy_J",
                related=("filling",),
            )
        if self.perimeter_m is not None and not self.perimeter_m > 0:
            raise InputError("perimeter must be > 0", key="perimeter_m")


@dataclass(frozen=True)
class WellEdge:
    """Edge figures of one well (SI)."""

    name: str
    role: str
    bulk_density_m2: float
    far_density_m2: float
    gated_density_m2: float
    edge_x_m: float | None
    depletion_width_m: float | None
    rise_10_90_m: float | None
    cut_under_gate: bool
    edge_shift_m_per_V: float | None = None
    tail_length_m: float | None = None

    def to_dict(self) -> dict:
        return {
            "role": self.role,
            "bulk_density_m2": self.bulk_density_m2,
            "far_field_density_m2": self.far_density_m2,
            "gated_density_m2": self.gated_density_m2,
            "edge_position_m": self.edge_x_m,
            "depletion_width_m": self.depletion_width_m,
            "rise_10_90_m": self.rise_10_90_m,
            "tail_length_m": self.tail_length_m,
            # old name of rise_10_90_m, kept for existing scripts
            "healing_length_m": self.rise_10_90_m,
            "cut_under_gate": self.cut_under_gate,
            "edge_shift_m_per_V": self.edge_shift_m_per_V,
        }


@dataclass(frozen=True, eq=False)
class EdgeResult:
    """Result of :func:`solve_edge` (SI units; ``to_dict`` gives the JSON form)."""

    settings: EdgeSettings
    wells: tuple[WellEdge, ...]
    primary: str
    lithographic_edge_m: float
    solution: FieldSolution
    operating_filling: float | None = None
    bulk_filling: float | None = None
    edge_channel_x_m: float | None = None
    edge_field_V_per_m: float | None = None
    edge_velocity_m_per_s: float | None = None
    strips: tuple[dict, ...] = ()
    edge_shift_m_per_V: float | None = None
    area_change_m2_per_V: float | None = None
    info: dict = field(default_factory=dict)
    solver: object = field(default=None, repr=False)  # the pass-2 solver (for field output)
    tail_model: dict = field(default_factory=dict)

    def well(self, name: str) -> WellEdge:
        return next(w for w in self.wells if w.name == name)

    def odd_gap(self) -> tuple[float | None, str, float | None]:
        """The odd-integer gap (J), its kind, and the |g*| used (None for a user gap)."""
        return _odd_gap(self.settings)

    def to_dict(self) -> dict:
        s = self.settings
        odd_J, odd_kind, odd_g = self.odd_gap()
        return {
            "gate_voltage_V": s.gate_voltage_V,
            "field_T": s.field_T,
            "primary_well": self.primary,
            "lithographic_edge_m": self.lithographic_edge_m,
            "edge_fraction_of_bulk": EDGE_FRACTION,
            "wells": {w.name: w.to_dict() for w in self.wells},
            "operating_filling": self.operating_filling,
            "bulk_filling": self.bulk_filling,
            "edge_channel_position_m": self.edge_channel_x_m,
            "edge_field_V_per_m": self.edge_field_V_per_m,
            "edge_velocity_m_per_s": self.edge_velocity_m_per_s,
            "strips": list(self.strips),
            "strip_model": {
                "even_gap": "hbar*omega_c - |g*| mu_B B",
                "g_bare": bare_g_factor(),
                "odd_gap_kind": odd_kind,
                "odd_gap_g_effective": odd_g,
                "odd_gap_J": odd_J,
                "min_width_magnetic_lengths": s.strip_min_width_lB,
            },
            "strips_narrower_than_lB": [
                st["filling"] for st in self.strips if st.get("narrower_than_lB")
            ],
            "edge_shift_m_per_V": self.edge_shift_m_per_V,
            "voltage_step_V": s.voltage_step_V,
            "edge_shift_difference": "central",
            "perimeter_m": s.perimeter_m,
            "area_change_m2_per_V": self.area_change_m2_per_V,
            "tail_window_of_step": list(TAIL_WINDOW),
            "tail_model": dict(self.tail_model),
            "solver": dict(self.info),
        }

    def summary(self) -> dict[str, float]:
        """Flat numbers of :meth:`to_dict` (``wells.<name>.<key>`` etc.), solver record left out."""
        d = self.to_dict()
        d.pop("solver", None)  # timings and mesh sizes: not design outputs
        return flatten(d)

    def table(self) -> Table:
        """The n(x) profile: x (nm), each well's density (cm^-2), the primary filling (if B)."""
        cols, rows = self.profile_table()
        return Table(tuple(cols), rows)

    def profile_table(self) -> tuple[list[str], np.ndarray]:
        """Columns and rows of the n(x) table (x in nm, densities in cm^-2, filling)."""
        sol = self.solution
        cols = ["x_nm"] + [f"{n}_density_cm^-2" for n in sol.sheet_names]
        data = [sol.x_m * 1e9] + [d * 1e-4 for d in sol.density_m2]
        if self.settings.field_T:
            i = sol.sheet_names.index(self.primary)
            cols.append(f"{self.primary}_filling")
            data.append(local_filling(sol.density_m2[i], self.settings.field_T))
        return cols, np.column_stack(data)


def _check_gate_voltage(section: CrossSection, v: float, key: str = "gate_voltage_V") -> None:
    """The one gate-voltage rule (:func:`qhdesign.limits.check_gate_voltage`)."""
    check_gate_voltage(v, section.gate_barrier_J, key, barrier_name="the gate's barrier")


def _primary(section: CrossSection) -> int:
    for i, s in enumerate(section.sheets):
        if s.role == "primary":
            return i
    return 0


def analyse_edge(sol: FieldSolution, section: CrossSection, edge_m: float = 0.0) -> list[WellEdge]:
    """Per-well edge figures from a solved single-edge cross-section (bulk at large x).

    Density levels are located on the sheet potential, which is piecewise linear on the mesh,
    instead of on n(x), which has a kink at the edge (at T -> 0): the crossing of the potential
    level at which the Thomas–Fermi density equals the threshold is the exact crossing of the
    discrete solution and moves smoothly with the gate voltage.
    """
    out = []
    kT = sc.k * section.temperature_K
    for i, s in enumerate(section.sheets):
        n = sol.density_m2[i]
        phi = sol.sheet_potential(i)
        energy = sol.sheet_energy_eV[i]
        bulk = s.density_m2
        gated = float(n[0])
        # an empty well (bulk 0) counts as cut: there is nothing under the gate either
        cut = gated < EDGE_FRACTION * bulk or bulk <= 0

        def x_at(level_m2: float, sign: float = 1.0, energy=energy, s=s, phi=phi):
            # sign -1: an accumulation edge, where n falls from the gate towards the bulk
            target = sheet_level_V(s, energy, level_m2, kT)
            return crossing_from_bulk(sol.x_m, sign * phi, sign * target)

        edge = x_at(EDGE_FRACTION * bulk) if cut and bulk > 0 else None
        heal = None
        tail = None
        base = 0.0 if cut else gated
        if bulk > 0 and abs(bulk - base) > 1e-3 * bulk:
            sign = 1.0 if bulk > base else -1.0
            x10 = x_at(base + 0.1 * (bulk - base), sign)
            x90 = x_at(base + 0.9 * (bulk - base), sign)
            if x10 is not None and x90 is not None:
                heal = x90 - x10
            tail = fit_tail_length(sol.x_m, n, bulk, abs(bulk - base))
        out.append(
            WellEdge(
                name=s.name,
                role=s.role,
                bulk_density_m2=bulk,
                far_density_m2=float(n[-1]),
                gated_density_m2=gated,
                edge_x_m=edge,
                depletion_width_m=None if edge is None else edge - edge_m,
                rise_10_90_m=heal,
                cut_under_gate=bool(cut),
                tail_length_m=tail,
            )
        )
    return out


def _check_electrons(sol: FieldSolution, section: CrossSection, v: float) -> None:
    if all(
        np.max(sol.density_m2[i]) < EDGE_FRACTION * s.density_m2 or s.density_m2 <= 0
        for i, s in enumerate(section.sheets)
    ):
        raise InputError(
            f"gate voltage {v:g} V leaves no electrons anywhere in the cross-section "
            f"(|x| <= {sol.x_m[-1] * 1e6:.2f} um); use a less negative voltage",
            key="gate_voltage_V",
        )


def solve_edge(
    section: CrossSection,
    settings: EdgeSettings,
    mesh_options: MeshOptions | None = None,
    options: SolverOptions | None = None,
    *,
    comm=None,
    solver: CrossSectionSolver | None = None,
) -> EdgeResult:
    """Solve a single depletion-gate edge (gate over x < 0) and read off the edge figures.

    Pass 1 solves on a mesh twice as coarse and locates the electronic edges; pass 2 re-meshes
    with the edge size at each of them and solves again (started from pass 1). The edge shift per
    volt is the central difference of two more solves at V_g -+ ``voltage_step_V``/2.

    Raises
    ------
    InputError
        Gate voltage out of range or leaving no electrons anywhere.
    ConvergenceError
        If Newton fails.
    """
    v = settings.gate_voltage_V
    _check_gate_voltage(section, v)
    if all(s.density_m2 <= 0 for s in section.sheets):
        raise InputError("the stack has no electrons at zero gate bias; nothing to deplete")
    mesh_options = mesh_options or MeshOptions()
    layout = GateLayout.single_edge()
    # pass 1: locate the electronic edges on a mesh twice as coarse
    base = CrossSectionSolver(section, layout, mesh_options.scaled(0.5), options, comm=comm)
    sol0 = base.solve(v)
    _check_electrons(sol0, section, v)
    solver = _refined_solver(base, sol0, section, settings, mesh_options, options, comm)
    # pass 2: the mesh is fine (h_edge) at every electronic edge
    sol = solver.solve(v, initial=sol0)
    wells = analyse_edge(sol, section)
    half = 0.5 * settings.voltage_step_V
    lo = analyse_edge(solver.solve(v - half), section)
    hi = analyse_edge(solver.solve(v + half), section)
    shifted = []
    for w, wl, wh in zip(wells, lo, hi, strict=True):
        shift = None
        if wl.edge_x_m is not None and wh.edge_x_m is not None:
            shift = (wh.edge_x_m - wl.edge_x_m) / settings.voltage_step_V
        shifted.append(replace(w, edge_shift_m_per_V=shift))
    ip = _primary(section)
    prim = section.sheets[ip]
    result = dict(
        settings=settings,
        wells=tuple(shifted),
        primary=prim.name,
        lithographic_edge_m=0.0,
        solution=sol,
        solver=solver,
        edge_shift_m_per_V=shifted[ip].edge_shift_m_per_V,
        info={
            "dofs": solver.num_dofs,
            "newton_iterations": sol.iterations,
            "linear_solver": solver.linear_solver,
            "mesh_s": solver.timings.get("mesh"),
            "half_width_m": float(sol.x_m[-1]),
            "neutrality_correction_C_m2": float(solver.calibration["neutrality_correction_C_m2"]),
            "surface_charge_correction_C_m2": float(
                solver.calibration["surface_charge_correction_C_m2"]
            ),
        },
    )
    result["tail_model"] = tail_model(section, solver.options.exposed)
    if settings.perimeter_m is not None and result["edge_shift_m_per_V"] is not None:
        # the electrons retreat by dx per volt along the whole perimeter
        result["area_change_m2_per_V"] = -settings.perimeter_m * result["edge_shift_m_per_V"]
    if settings.field_T:
        result.update(_field_figures(sol, section, ip, settings))
    return EdgeResult(**result)


def _refined_solver(base, sol0, section, settings, mesh_options, options, comm):
    """A solver whose mesh is fine at the electronic edges (and the operating filling) of sol0.

    The P1 potential makes the located edge move in a saw-tooth as it crosses mesh nodes; a fine
    mesh where the edges are keeps that error well below a nanometre.
    """
    marks = [w.edge_x_m for w in analyse_edge(sol0, section) if w.edge_x_m is not None]
    if settings.field_T:
        ip = _primary(section)
        nu = local_filling(sol0.density_m2[ip], settings.field_T)
        for k in range(1, int(np.ceil(nu[-1]))):
            xk = crossing_from_bulk(sol0.x_m, nu, float(k))
            if xk is not None:
                marks.append(xk)
        if settings.filling is not None:
            xk = crossing_from_bulk(sol0.x_m, nu, settings.filling)
            if xk is not None:
                marks.append(xk)
    half_width = float(sol0.x_m[-1])
    marks = sorted({round(m, 10) for m in marks if abs(m) < 0.9 * half_width and abs(m) > 1e-10})
    opts = replace(mesh_options, x_attractors_m=tuple(mesh_options.x_attractors_m) + tuple(marks))
    return CrossSectionSolver(section, base.layout, opts, options, comm=comm)


def _field_figures(sol: FieldSolution, section, ip: int, settings: EdgeSettings) -> dict:
    B = settings.field_T
    prim = section.sheets[ip]
    n = sol.density_m2[ip]
    nu = local_filling(n, B)
    nu_bulk = float(local_filling(prim.density_m2, B))
    nu_op = settings.filling if settings.filling is not None else 1.0
    out: dict = {"operating_filling": nu_op, "bulk_filling": nu_bulk}
    x = sol.x_m
    if nu_op < nu_bulk:
        x_nu = crossing_from_bulk(x, nu, nu_op)
        if x_nu is not None:
            e_x = interp_at(x, sol.in_plane_field(ip), x_nu)
            out["edge_channel_x_m"] = x_nu
            out["edge_field_V_per_m"] = abs(e_x)
            out["edge_velocity_m_per_s"] = abs(e_x) / B
    # incompressible strips (CSG) on the primary well
    extra: tuple = ()
    if settings.gap_energy_J is not None and settings.filling is not None:
        if abs(settings.filling - round(settings.filling)) > 1e-9:
            extra = ((settings.filling, settings.gap_energy_J, "user gap"),)
    odd_J, odd_kind, _ = _odd_gap(settings)
    strips = incompressible_strips(
        x,
        n,
        B,
        dos_J_m2=prim.dos_J_m2,
        eps_r=_permittivity_at(section, prim.z_m),
        g_bare=bare_g_factor(),
        odd_gap_J=odd_J,
        odd_gap_kind=odd_kind,
        extra=extra,
        min_width_lB=settings.strip_min_width_lB,
        nu_bulk=nu_bulk,
    )
    out["strips"] = tuple(strips)
    return out


def _permittivity_at(section: CrossSection, z: float) -> float:
    lz = np.asarray(section.layer_z_m)
    i = int(np.clip(np.searchsorted(lz, z) - 1, 0, lz.size - 2))
    return float(np.asarray(section.layer_permittivity)[i])


def _odd_gap(settings: EdgeSettings) -> tuple[float | None, str, float | None]:
    """Odd-integer strip gap (J), its kind and the |g*| used; gap None without a field."""
    mu_b = sc.physical_constants["Bohr magneton"][0]
    B = settings.field_T
    if settings.spin_gap_J is not None:
        return settings.spin_gap_J, "user spin gap", None
    if settings.spin_gap == "enhanced" or settings.g_effective is not None:
        g = (
            settings.g_effective
            if settings.g_effective is not None
            else G_ENHANCEMENT * bare_g_factor()
        )
        kind = "exchange-enhanced Zeeman gap |g_eff| mu_B B"
    else:
        g = bare_g_factor()
        kind = "bare Zeeman gap |g*| mu_B B"
    return (None if not B else g * mu_b * B), kind, g


def tail_model(section: CrossSection, surface: str) -> dict:
    """Decay lengths of the section's linear Thomas–Fermi modes (:mod:`qhdesign.tf2d.tails`).

    ``surface_mode_length_m``: the mode living above the top filled sheet, the one the gate
    drives directly (the mode root nearest the closed form); ``surface_mode_closed_form_m``: the
    closed form 2(d + eps/C_q)/pi (frozen) or (d + eps/C_q)/pi (pinned); ``modes_m``: the
    slowest modes, longest first (the longest may live below the bottom sheet, with a small
    amplitude in the upper sheets).
    """
    filled = [s for s in section.sheets if s.density_m2 > 0]
    if not filled:
        return {}
    top = min(filled, key=lambda s: s.z_m)
    depth, c_q = sheet_screening(top)
    lz = np.asarray(section.layer_z_m)
    eps = np.asarray(section.layer_permittivity)
    # thickness-weighted permittivity between the surface and the top sheet
    edges = np.clip(lz, 0.0, depth)
    eps_above = float(np.sum(np.diff(edges) * eps) / depth)
    closed = top_mode_length(depth, eps_above, c_q / sc.e**2, surface)
    modes = tail_modes(section, surface, count=8)
    near = min(modes, key=lambda m: abs(m - closed)) if modes else None
    return {
        "surface": surface,
        "top_sheet": top.name,
        "surface_mode_length_m": near,
        "surface_mode_closed_form_m": closed,
        "slowest_mode_length_m": modes[0] if modes else None,
        "modes_m": list(modes[:4]),
    }
