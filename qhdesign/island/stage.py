"""The island stage at the operating point: settings, the field loop, results (SI).

``solve_island_operating(stack, device, settings, fields=...)`` runs the 1D stage, the nonlinear
axisymmetric operating point (:mod:`qhdesign.island.operating`), and at every field the linear
response (:mod:`qhdesign.island.response`) with the screening sheets' Landau-level DOS
(:mod:`qhdesign.landau`), the edge's own term, the periods and the fixed-filling window.
Derivations: docs/island.md.

References
----------
B. I. Halperin, A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011) (K_I, K_L, K_IL;
the edge's own contribution to K_I). B. Rosenow, A. Stern, Phys. Rev. Lett. 124, 106805 (2020)
(the fixed-filling window).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.landau import G_FACTOR_GAAS, LandauSheet, level_width_from_lifetime, zero_field_dos
from qhdesign.results import Table, flatten
from qhdesign.sheetxc import DEFAULT_COMPRESSIBILITY_FLOOR, check_sheet_xc

from .operating import EdgeStrip, IslandDevice, OperatingPoint, solve_operating_point

__all__ = [
    "FieldPoint",
    "IslandOperatingResult",
    "OperatingSettings",
    "solve_island_operating",
]

PHI0 = sc.h / sc.e
UEV = 1e-6 * sc.e
#: Default quantum lifetime of the screening wells (s) when no disorder estimate exists: from
#: memory, 0.5-5 ps is typical of modulation-doped GaAs wells; 1 ps gives Gamma ~ 3 meV at 13 T.
QUANTUM_LIFETIME_S = 1.0e-12
#: A screening sheet is "near-incompressible" when its thermodynamic DOS (without exchange) falls
#: below this fraction of the zero-field m*/(pi hbar^2).
NEAR_INCOMPRESSIBLE_RATIO = 0.2
GAP_KINDS = ("quasiparticle", "activation")


@dataclass(frozen=True)
class OperatingSettings:
    """Quantum Hall inputs and model choices of the operating-point island.

    Attributes
    ----------
    filling
        Laughlin filling nu = 1/m of the interfering edge (e*/e = nu).
    gap_J, gap_kind
        The gap (J) and which one it is: ``"quasiparticle"`` (Delta_qp, the energy to create one
        quasiparticle) or ``"activation"`` (Delta_act = 2 Delta_qp, from R_xx ~ exp(-Delta_act/
        2 k_B T)).
    field_T
        Operating field (T); None: where the island centre sits at ``filling``.
    temperature_K
        Temperature of the island (K); None: the stack's.
    level_width_J, quantum_lifetime_s
        Landau-level width Gamma of every sheet (J), or one quantum lifetime tau_q for all of
        them, from which Gamma^2 = (2/pi) hbar omega_c hbar/tau_q. Default (both None): each
        well's tau_q from the 1D stage's disorder estimate (:func:`qhdesign.sp1d.scattering`),
        or :data:`QUANTUM_LIFETIME_S` when there is none (a bare cross-section).
    g_factor
        |g*| for the spin splitting (GaAs 0.44).
    exchange
        Add the Hartree–Fock exchange term to the sheets' dmu/dn in the linear response (the
        Landau-level DOS at the field).
    sheet_xc, compressibility_floor
        The sheets' own exchange(-correlation) in the nonlinear operating-point solve (zero
        field): ``"none"`` (closed-form Thomas–Fermi sheets), ``"exchange"`` or
        ``"exchange+correlation"`` (:func:`qhdesign.sheetxc.with_sheet_xc`), with dmu/dn floored
        at ``compressibility_floor`` times pi hbar^2/m*.
    bulk_shape
        Shape of the bulk's added charge over A_L: ``"uniform"`` or ``"parabolic"``.
    r_threshold
        Fields where K_IL/K_I exceeds this are flagged.
    """

    filling: float = 1.0 / 3.0
    gap_J: float = 120e-6 * sc.e
    gap_kind: str = "quasiparticle"
    field_T: float | None = None
    temperature_K: float | None = None
    level_width_J: float | None = None
    quantum_lifetime_s: float | None = None
    g_factor: float = G_FACTOR_GAAS
    exchange: bool = True
    bulk_shape: str = "uniform"
    r_threshold: float = 0.5
    sheet_xc: str = "none"
    compressibility_floor: float = DEFAULT_COMPRESSIBILITY_FLOOR

    def __post_init__(self):
        nu = float(self.filling)
        m = round(1.0 / nu) if nu > 0 else 0
        if not (0 < nu <= 1 and m >= 1 and abs(nu * m - 1.0) < 1e-9):
            raise InputError(
                f"filling {nu:g} is not a Laughlin filling 1/m (allowed: 1, 1/3, 1/5, ...)",
                key="filling",
            )
        if not (math.isfinite(self.gap_J) and 0 < self.gap_J < 0.1 * sc.e):
            raise InputError("gap must lie in 0 < gap < 100 meV", key="gap_J")
        if self.gap_kind not in GAP_KINDS:
            raise InputError(
                f"gap kind '{self.gap_kind}'; allowed: {', '.join(GAP_KINDS)}",
                key="gap_kind",
            )
        if self.field_T is not None and not (0 < self.field_T <= 60):
            raise InputError("field must lie in 0 < B <= 60 T", key="field_T")
        if self.temperature_K is not None and not (0 < self.temperature_K <= 50):
            raise InputError("temperature must lie in 0 < T <= 50 K", key="temperature_K")
        if self.level_width_J is not None and not (0 < self.level_width_J < 0.05 * sc.e):
            raise InputError("level width must lie in 0 < Gamma < 50 meV", key="level_width_J")
        if self.quantum_lifetime_s is not None and not (1e-15 <= self.quantum_lifetime_s <= 1e-9):
            raise InputError("quantum lifetime must lie in 1 fs .. 1 ns", key="quantum_lifetime_s")
        if not (0 <= self.g_factor <= 10):
            raise InputError("|g*| must lie in 0 .. 10", key="g_factor")
        if not (0 < self.r_threshold < 1):
            raise InputError("r threshold must lie in (0, 1)", key="r_threshold")
        check_sheet_xc(self.sheet_xc, self.compressibility_floor)

    @property
    def charge_ratio(self) -> float:
        """e*/e = nu."""
        return float(self.filling)

    @property
    def quasiparticle_gap_J(self) -> float:
        return self.gap_J if self.gap_kind == "quasiparticle" else 0.5 * self.gap_J

    @property
    def activation_gap_J(self) -> float:
        return 2.0 * self.quasiparticle_gap_J

    @property
    def strip_gap_J(self) -> float:
        """Jump of the electron chemical potential across the incompressible strip:
        (e/e*) Delta_act (adding one electron at fixed flux makes 1/nu quasiparticles)."""
        return self.activation_gap_J / self.charge_ratio


def _closed_forms(A_I, A_L, r, nu, K_L, K_IL, K_I, gap_qp, kT) -> dict:
    """Periods and the fixed-filling window (T) from :mod:`qhdesign.interferometer`."""
    from qhdesign import interferometer as itf

    K_tilde = itf.k_tilde_J(K_I, K_L, K_IL)
    E_C = itf.charging_energy_J(K_I, K_L, K_IL)
    try:
        dB_inc = itf.period_incompressible_T(A_I, r, nu, A_L)
    except InputError:  # A_I - r A_L <= 0: no incompressible period
        dB_inc = float("inf")
    out = {
        "K_tilde_J": K_tilde,
        "charging_energy_J": E_C,
        "period_compressible_T": itf.period_compressible_T(A_I),
        "period_incompressible_T": dB_inc,
        "window_T": float("inf"),
        "window_edge_width_T": float("inf"),
        "window_thermal_T": float("inf"),
    }
    if E_C > 0:
        T = kT / sc.k
        out["window_T"] = itf.window_T(A_L, nu, gap_qp, E_C)
        # each edge of the window is a Fermi function of this width in B
        out["window_edge_width_T"] = kT * PHI0 / (2.0 * E_C * nu**2 * A_L)
        out["window_thermal_T"] = itf.window_thermal_T(A_L, nu, gap_qp, E_C, T)
    return out


@dataclass(frozen=True)
class FieldPoint:
    """The island at one field (SI; K_I includes the edge term)."""

    field_T: float
    strip: EdgeStrip
    K_I_electrostatic_J: float
    K_I_edge_term_J: float
    K_L_J: float
    K_IL_J: float
    r_reciprocity: float
    r_direct: float
    dA_I_dV_m2_per_V: float
    forms: dict
    screening_wells: dict
    primary_filling: float

    @property
    def K_I_J(self) -> float:
        return self.K_I_electrostatic_J + self.K_I_edge_term_J

    @property
    def ratio(self) -> float:
        return self.K_IL_J / self.K_I_J

    def flat(self) -> dict[str, Any]:
        """The required keys (SI, unit in the key) plus the screening wells, flat."""
        s = self.strip
        out = {
            "field_T": self.field_T,
            "primary_filling": self.primary_filling,
            "electronic_radius_m": s.interfering_radius_m,
            "A_I_m2": s.A_I_m2,
            "A_L_m2": s.A_L_m2,
            "dA_I_dV_m2_per_V": self.dA_I_dV_m2_per_V,
            "K_I_J": self.K_I_J,
            "K_L_J": self.K_L_J,
            "K_IL_J": self.K_IL_J,
            "K_I_edge_term_J": self.K_I_edge_term_J,
            "K_I_electrostatic_J": self.K_I_electrostatic_J,
            "K_IL_over_K_I": self.ratio,
            "K_IL_over_K_I_electrostatic": self.K_IL_J / self.K_I_electrostatic_J,
            "charging_energy_J": self.forms["charging_energy_J"],
            "K_tilde_J": self.forms["K_tilde_J"],
            "period_compressible_T": self.forms["period_compressible_T"],
            "period_incompressible_T": self.forms["period_incompressible_T"],
            "window_T": self.forms["window_T"],
            "window_edge_width_T": self.forms["window_edge_width_T"],
            "edge_velocity_m_per_s": s.edge_velocity_m_per_s,
            "compressible_strip_width_m": s.width_m,
            "incompressible_strip_width_m": s.incompressible_width_m,
        }
        for name, w in self.screening_wells.items():
            out[f"screening_wells.{name}.filling"] = w["filling"]
            out[f"screening_wells.{name}.state"] = w["state"]
        return out


@dataclass(frozen=True, eq=False)
class IslandOperatingResult:
    """Result of :func:`solve_island_operating`: the operating point and one FieldPoint per
    field; ``point`` is the one at the operating field."""

    stack_name: str
    device: IslandDevice
    settings: OperatingSettings
    operating: OperatingPoint
    point: FieldPoint
    points: tuple[FieldPoint, ...]
    temperature_K: float
    level_width_J: dict
    info: dict = field(default_factory=dict)
    sheet_xc: dict = field(default_factory=dict)

    def flagged_fields_T(self) -> list[float]:
        """Fields where K_IL/K_I exceeds the threshold."""
        return [p.field_T for p in self.points if p.ratio > self.settings.r_threshold]

    def to_dict(self) -> dict:
        op, p, st = self.operating, self.point, self.settings
        sw = {name: {k: v for k, v in w.items()} for name, w in p.screening_wells.items()}
        d = {
            "stack": self.stack_name,
            "model": "operating point (nonlinear Thomas-Fermi island, linear response)",
            "gate_voltage_V": self.device.gate_voltage_V,
            "gate_radius_m": op.gate_radius_m,
            "gate_radius_input": "electronic radius"
            if self.device.electronic_radius_m
            else "lithographic",
            "electronic_radius_input_m": self.device.electronic_radius_m,
            "gate_width_m": self.device.gate_width_m,
            "gate_dielectric": gate_dielectric(op.section),
            "field_T": p.field_T,
            "filling": st.filling,
            "temperature_K": self.temperature_K,
            "quasiparticle_gap_J": st.quasiparticle_gap_J,
            "activation_gap_J": st.activation_gap_J,
            "gap_input_kind": st.gap_kind,
            "strip_gap_J": st.strip_gap_J,
            "bulk_charge_shape": st.bulk_shape,
            "exchange": st.exchange,
            "sheet_xc": dict(self.sheet_xc) or {"model": st.sheet_xc},
            **{k: v for k, v in p.flat().items() if not k.startswith("screening_wells.")},
            "r_reciprocity": p.r_reciprocity,
            "r_direct": p.r_direct,
            "strip": {
                "centre_m": p.strip.strip_centre_m,
                "inner_radius_m": p.strip.inner_radius_m,
                "outer_radius_m": p.strip.outer_radius_m,
                "centre_filling": p.strip.centre_filling,
                "pinned_to_density_fall": p.strip.pinned_to_fall,
            },
            "sheets": {
                s.name: {
                    "role": s.role,
                    "bulk_density_m2": s.bulk_density_m2,
                    "centre_density_m2": s.centre_density_m2,
                    "gated_density_m2": s.gated_density_m2,
                    "cut_under_gate": s.cut_under_gate,
                    "cut_radius_m": s.cut_radius_m,
                }
                for s in op.sheets
            },
            "screening_wells": sw,
            "level_width_J": dict(self.level_width_J),
            "r_threshold": st.r_threshold,
            "flagged_fields_T": self.flagged_fields_T(),
            "solver": dict(op.info) | dict(self.info),
        }
        return d

    def summary(self) -> dict[str, float]:
        """Flat numbers of :meth:`to_dict` (solver record left out)."""
        d = self.to_dict()
        d.pop("solver", None)
        return flatten(d)

    def table(self) -> Table:
        """:meth:`rows` as a table: one row per field, its numeric columns."""
        rows = [flatten(r) for r in self.rows()]
        cols = tuple(rows[0])
        return Table(cols, np.array([[r.get(c, np.nan) for c in cols] for r in rows]))

    def rows(self) -> list[dict]:
        """One flat row per field (for the CSV)."""
        return [
            p.flat() | {"r_above_threshold": p.ratio > self.settings.r_threshold}
            for p in self.points
        ]


def gate_dielectric(section) -> dict:
    """The gate dielectric of a cross-section as reported (SI): thickness, relative
    permittivity and the series capacitance per area eps_0 eps_d / t (0 without a layer)."""
    t = float(section.gate_dielectric_thickness_m)
    eps = float(section.gate_dielectric_permittivity)
    return {
        "thickness_m": t,
        "permittivity_rel": eps if t > 0 else None,
        "capacitance_F_m2": sc.epsilon_0 * eps / t if t > 0 else 0.0,
    }


def _sheet_mass_ratio(dos_J_m2: float) -> float:
    return dos_J_m2 * math.pi * sc.hbar**2 / sc.m_e


def landau_sheets(section, i: int, B: float, st: OperatingSettings, T: float, tau: dict):
    """Sheet i's Landau-level model at field B: (with exchange as the settings say, bare)."""
    s = section.sheets[i]
    m = _sheet_mass_ratio(s.dos_J_m2)
    width = st.level_width_J or level_width_from_lifetime(B, m, tau[s.name])
    from qhdesign.section.edge import _permittivity_at

    eps = _permittivity_at(section, s.z_m) if st.exchange else None
    return LandauSheet(B, m, width, T, st.g_factor, eps), LandauSheet(B, m, width, T, st.g_factor)


def _landau(op: OperatingPoint, i: int, B: float, st: OperatingSettings, T: float, tau: dict):
    return landau_sheets(op.section, i, B, st, T, tau)


def edge_term_J(edge_velocity_m_per_s: float, filling: float, perimeter_m: float) -> float:
    """The edge's own term in K_I: a chiral edge of filling nu, velocity v, length L stores
    E = (h v / (2 nu L)) dN^2, so K_I,edge = h v/(nu L) (docs/island.md)."""
    return sc.h * edge_velocity_m_per_s / (filling * perimeter_m)


def screening_well_report(ll, ll_bare, centre_density_m2: float, cut: bool, cut_radius_m) -> dict:
    """Filling and state of a screening well at the island centre's density (see docs/island.md)."""
    ratio = float(ll_bare.thermodynamic_dos(centre_density_m2)) / zero_field_dos(ll.mass_ratio)
    if ratio < NEAR_INCOMPRESSIBLE_RATIO:
        kind = "near-incompressible"
    elif cut:
        kind = "emptied under the gate"
    else:
        kind = "compressible"
    return {
        "filling": float(ll.filling(centre_density_m2)),
        "state": kind,
        "dos_over_zero_field": ratio,
        "screening_dos_over_zero_field": float(ll.screening_dos(centre_density_m2))
        / zero_field_dos(ll.mass_ratio),
        "cut_under_gate": cut,
        "cut_radius_m": cut_radius_m,
    }


def _field_point(op, problem, B, st: OperatingSettings, T: float, tau: dict):
    from .response import sheet_dos_profiles

    strip = op.strip(B, st.filling, st.strip_gap_J)
    sheets = {i: _landau(op, i, B, st, T, tau) for i in range(len(op.section.sheets))}
    problem.set_sheet_dos(sheet_dos_profiles(op, strip, lambda i, n: sheets[i][0].screening_dos(n)))
    res = problem.solve(strip)
    nu = st.filling
    K_edge = edge_term_J(strip.edge_velocity_m_per_s, nu, strip.perimeter_m)
    K_I = res.K_I_electrostatic_J + K_edge
    r = res.K_IL_J / K_I
    forms = _closed_forms(
        strip.A_I_m2,
        strip.A_L_m2,
        r,
        nu,
        res.K_L_J,
        res.K_IL_J,
        K_I,
        st.quasiparticle_gap_J,
        sc.k * T,
    )
    wells = {}
    for i, s in enumerate(op.section.sheets):
        if i == op.primary_index:
            continue
        state = op.sheets[i]
        ll, ll_bare = sheets[i]
        wells[s.name] = screening_well_report(
            ll, ll_bare, state.centre_density_m2, state.cut_under_gate, state.cut_radius_m
        )
    point = FieldPoint(
        field_T=B,
        strip=strip,
        K_I_electrostatic_J=res.K_I_electrostatic_J,
        K_I_edge_term_J=K_edge,
        K_L_J=res.K_L_J,
        K_IL_J=res.K_IL_J,
        r_reciprocity=res.r_reciprocity,
        r_direct=res.r_direct,
        dA_I_dV_m2_per_V=op.dA_I_dV(B, st.filling, st.strip_gap_J),
        forms=forms,
        screening_wells=wells,
        primary_filling=strip.centre_filling,
    )
    widths = {op.section.sheets[i].name: sheets[i][0].width_J for i in sheets}
    return point, widths


def operating_field(section, st: OperatingSettings) -> float:
    """The default operating field: where the primary's 1D density sits at the filling (T)."""
    p = next((s for s in section.sheets if s.role == "primary"), section.sheets[0])
    return p.density_m2 * sc.h / (sc.e * st.filling)


def solve_island_operating(
    source,
    device: IslandDevice,
    settings: OperatingSettings | None = None,
    *,
    fields_T: tuple[float, ...] = (),
    lifetimes_s: dict | None = None,
    name: str = "",
    mesh_options=None,
    solver_options=None,
    comm=None,
) -> IslandOperatingResult:
    """The island at its operating point and, optionally, across a range of fields.

    Parameters
    ----------
    source
        A :class:`qhdesign.section.model.CrossSection` (a stack goes through
        :func:`qhdesign.pipeline.solve_island_operating`, which also runs the disorder estimate).
    device
        Gate opening (or measured electronic radius) and bias.
    settings
        Quantum Hall inputs and model choices.
    fields_T
        Extra fields (T) for the K's across a plateau; the operating field is always included.
    lifetimes_s
        Quantum lifetime of each sheet by name (s), e.g. from the 1D disorder estimate; used
        unless the settings give a width or one lifetime.
    name
        Stack name for the reports.
    mesh_options, solver_options
        :class:`qhdesign.section.geometry.MeshOptions`,
        :class:`qhdesign.section.solver.SolverOptions`.

    Raises
    ------
    InputError
        Bad input (naming the option), an island the gate empties, no compressible edge.
    ConvergenceError
        If the nonlinear solve fails.
    """
    import time

    st = settings or OperatingSettings()
    from qhdesign.sheetxc import describe_sheet_xc, with_sheet_xc

    xc = describe_sheet_xc(source, st.sheet_xc, compressibility_floor=st.compressibility_floor)
    section = with_sheet_xc(source, st.sheet_xc, compressibility_floor=st.compressibility_floor)
    tau, width_source = _lifetimes(section, lifetimes_s, st)
    B0 = st.field_T if st.field_T is not None else operating_field(section, st)
    T = st.temperature_K if st.temperature_K is not None else section.temperature_K
    targets = tuple((float(b), st.filling) for b in (B0, *fields_T))
    t0 = time.perf_counter()
    op = solve_operating_point(
        section,
        device,
        mesh_options,
        solver_options,
        targets=targets,
        strip_gap_J=st.strip_gap_J,
        comm=comm,
    )
    t_op = time.perf_counter() - t0
    from .response import ResponseProblem

    t0 = time.perf_counter()
    problem = ResponseProblem(op, st.bulk_shape)
    point, widths = _field_point(op, problem, B0, st, T, tau)
    points = []
    for b in sorted(set(float(x) for x in fields_T)):
        points.append(point if b == B0 else _field_point(op, problem, b, st, T, tau)[0])
    t_lin = time.perf_counter() - t0
    info = {"operating_point_s": t_op, "linear_response_s": t_lin}
    widths = {"source": width_source, "quantum_lifetime_s": tau, "width_J": widths}
    return IslandOperatingResult(
        stack_name=name,
        device=device,
        settings=st,
        operating=op,
        point=point,
        points=tuple(points) if points else (point,),
        temperature_K=T,
        level_width_J=widths,
        info=info,
        sheet_xc=xc,
    )


def _lifetimes(section, lifetimes_s, st: OperatingSettings) -> tuple[dict, str]:
    """Quantum lifetime of every sheet (s) and where it comes from."""
    names = [s.name for s in section.sheets]
    if st.level_width_J is not None:
        return {n: float("nan") for n in names}, "user width (level width given)"
    if st.quantum_lifetime_s is not None:
        return {n: st.quantum_lifetime_s for n in names}, "user lifetime (quantum lifetime given)"
    if lifetimes_s:
        out = {}
        for n in names:
            tau = lifetimes_s.get(n, float("nan"))
            out[n] = tau if math.isfinite(tau) and tau > 0 else QUANTUM_LIFETIME_S
        return out, "1D disorder estimate (qhdesign.sp1d.scattering, quantum lifetime)"
    return {n: QUANTUM_LIFETIME_S for n in names}, "default lifetime 1 ps"
