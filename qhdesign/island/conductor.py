"""Interferometer island capacitances: K_I, K_L, K_IL, charging energy, fixed-filling window.

Model (docs/island.md)
----------------------
Axisymmetric (r, z) linear electrostatics, SI. The island is the primary well's 2DEG inside the
electronic radius R; a surface gate covers r > R_gate = R + gate offset. The primary-well sheet in
r < R is split into two ideal conductors: the localized bulk L (r < R - w - g/2) and the
interfering edge ring I (R - w + g/2 < r < R), w the ring width and g a small split gap (the
incompressible strip that separates edge from bulk; two touching conductors would have an
infinite mutual capacitance). Everything else is at the Fermi level of the contacts:

- screening wells (sheets at their 1D centroid depths, all r): linear Thomas–Fermi sheets with
  their 2D density of states (quantum capacitance e^2 D) or grounded equipotentials;
- the primary well beyond the gate edge, r > R_gate (the 2DEG outside the island): the same model;
- the gate (surface, r > R_gate): grounded; the exposed surface r < R_gate: pinned (grounded) or
  frozen (zero normal field);
- bottom: grounded for a pinned substrate or a back gate, else the last layer continues down to
  the far boundary; far boundary: Robin monopole condition or grounded.

Maxwell matrix C of {I, L} by the energy form (:mod:`qhdesign.fem.capacitance`); K = e^2 C^-1.
Our derivations (docs/derivations.md sections 10-11, not taken from a paper): K~ = K_L - K_IL^2/K_I,
E_C = K~/2, periods dB_comp = Phi0/A and dB_inc = (e/e*) Phi0/(A (1 - K_IL/K_I)), and the
fixed-filling window dB_window = (Phi0/(nu A)) [e*/e + (e/e*) Delta_qp/E_C] with e*/e = nu = 1/m.

References
----------
B. I. Halperin, A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011) (the energy
functional with K_I, K_L, K_IL). B. Rosenow, A. Stern, Phys. Rev. Lett. 124, 106805 (2020) (the
fixed-filling window; our minimal model of it is our derivation).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import Any

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.fem.capacitance import AxiLine, AxiMeshOptions, AxiProblem, solve_capacitance
from qhdesign.fem.grid import check_refine
from qhdesign.results import Table

__all__ = [
    "IslandColumn",
    "IslandGeometry",
    "IslandResult",
    "IslandSettings",
    "WellLine",
    "column_from_sheet_model",
    "solve_island",
]

#: Flux quantum h/e (Wb).
PHI0 = sc.h / sc.e
#: Screening wells below this 1D density (m^-2; 1e9 cm^-2) are empty: left out as sheets.
EMPTY_DENSITY_M2 = 1e13
UEV = 1e-6 * sc.e
#: Island mesh defaults: P2 on a geometric grading to 0.2 nm at every edge (docs/island.md).
ISLAND_MESH = AxiMeshOptions()


def _opt(name: str) -> str:
    return f"option --{name.replace('_', '-')}"


@dataclass(frozen=True)
class WellLine:
    """A quantum well as a sheet: name, role (``primary``/``screening``), depth z_m (m),
    2D density of states dos_J_m2 (J^-1 m^-2), 1D density density_m2 (m^-2)."""

    name: str
    role: str
    z_m: float
    dos_J_m2: float
    density_m2: float = float("nan")


@dataclass(frozen=True)
class IslandColumn:
    """The layer column the island sits in (SI).

    Attributes
    ----------
    layer_z_m, layer_permittivity
        Layer boundaries (m, from 0 at the surface), shape (L+1,); relative permittivities (L,).
    wells
        Wells, top to bottom; exactly one (the first) with role ``primary`` is the island.
    top
        ``"surface"`` (exposed surface with the island's gate beyond R_gate) or ``"gate"``
        (metal over the whole surface).
    bottom
        ``"ground"`` (pinned substrate or back gate at the last layer's bottom) or ``"open"``
        (the last layer continues to the far boundary).
    name
        For reports.
    surface_mode
        The stack's exposed surface: ``"frozen"`` charge or ``"pinned"`` Fermi level; the default
        of :attr:`IslandSettings.surface`.
    """

    layer_z_m: tuple[float, ...]
    layer_permittivity: tuple[float, ...]
    wells: tuple[WellLine, ...]
    top: str = "surface"
    bottom: str = "open"
    name: str = ""
    surface_mode: str = "frozen"

    def __post_init__(self):
        if self.surface_mode not in ("frozen", "pinned"):
            raise InputError(f"surface mode '{self.surface_mode}'; allowed: frozen, pinned")
        if self.top not in ("surface", "gate"):
            raise InputError(f"top '{self.top}'; allowed: surface, gate")
        if self.bottom not in ("ground", "open"):
            raise InputError(f"bottom '{self.bottom}'; allowed: ground, open")
        if not any(w.role == "primary" for w in self.wells):
            raise InputError('the stack has no primary well (well = "primary")')

    @property
    def primary(self) -> WellLine:
        return next(w for w in self.wells if w.role == "primary")


def column_from_sheet_model(sheets, stack=None) -> IslandColumn:
    """The column of a :class:`qhdesign.sheets.SheetModel` (``stack``: optional, read by
    attribute for its name and substrate; the sheet model carries both)."""
    wells = tuple(
        WellLine(s.name, s.role, float(s.z_m), float(s.dos_J_m2), float(s.density_m2))
        for s in sheets.sheets
    )
    top = "surface" if sheets.surface_kind == "exposed" else "gate"
    name = str(getattr(sheets, "name", "") or "")
    substrate = getattr(sheets, "substrate_kind", None)
    if stack is not None:
        name = str(getattr(stack, "name", "") or "")
        substrate = stack.substrate.kind
    if substrate is None:
        raise InputError(
            "this sheet model does not say what the substrate is; pass the stack instead",
            key="substrate",
        )
    bottom = "ground" if substrate in ("pinned", "back_gate") else "open"
    mode = "pinned" if getattr(sheets, "surface_charge_mode", "frozen") == "pinned" else "frozen"
    return IslandColumn(
        tuple(float(z) for z in sheets.layer_z_m),
        tuple(float(e) for e in sheets.layer_permittivity),
        wells,
        top,
        bottom,
        name,
        mode,
    )


@dataclass(frozen=True)
class IslandGeometry:
    """Lengths of the island (m).

    Attributes
    ----------
    radius_m
        Electronic radius R of the island (area A = pi R^2).
    ring_width_m
        Width w of the interfering edge ring I (default 50 nm).
    gate_offset_m
        R_gate - R: the gate edge lies this far outside the electronic edge (default 100 nm).
    split_gap_m
        Gap g between bulk and ring, centred on r = R - w (default 10 nm).
    outer_radius_m
        Domain radius; None: max(5 R_gate, R_gate + 2 um).
    """

    radius_m: float
    ring_width_m: float = 50e-9
    gate_offset_m: float = 100e-9
    split_gap_m: float = 10e-9
    outer_radius_m: float | None = None

    def __post_init__(self):
        for name in ("radius", "ring_width", "gate_offset", "split_gap"):
            v = getattr(self, f"{name}_m")
            if not (isinstance(v, int | float) and math.isfinite(v) and 0 < v < 1e-3):
                what = "gate offset (R_gate - R)" if name == "gate_offset" else name
                raise InputError(
                    f"{what.replace('_', ' ')} must lie in 0 < value < 1 mm, got {v!r} m",
                    source=_opt(name),
                )
        if self.ring_width_m + 0.5 * self.split_gap_m >= self.radius_m:
            raise InputError(
                f"ring width {self.ring_width_m * 1e9:.4g} nm (plus half the split gap) leaves no "
                f"bulk inside radius {self.radius_m * 1e9:.4g} nm; allowed: ring width < radius",
                source=_opt("ring_width"),
            )
        if self.split_gap_m < 1e-9:
            # the mesh's smallest cells are 0.2 nm: narrower gaps are not resolved (C_IL was
            # 3 % off at 0.2 nm and meaningless far below)
            raise InputError(
                f"split gap {self.split_gap_m * 1e9:.4g} nm is below 1 nm, which the mesh does not "
                "resolve; allowed: 1 nm up to the ring width",
                source=_opt("split_gap"),
            )
        if self.split_gap_m >= self.ring_width_m:
            raise InputError(
                f"split gap {self.split_gap_m * 1e9:.4g} nm must be narrower than the ring "
                f"({self.ring_width_m * 1e9:.4g} nm)",
                source=_opt("split_gap"),
            )
        if self.outer_radius_m is not None and not self.outer_radius_m > 1.5 * self.gate_radius_m:
            raise InputError("outer radius must exceed 1.5 R_gate", source=_opt("outer_radius"))

    @property
    def gate_radius_m(self) -> float:
        return self.radius_m + self.gate_offset_m

    @property
    def area_m2(self) -> float:
        return math.pi * self.radius_m**2

    @property
    def domain_radius_m(self) -> float:
        if self.outer_radius_m is not None:
            return float(self.outer_radius_m)
        return max(5.0 * self.gate_radius_m, self.gate_radius_m + 2e-6)


@dataclass(frozen=True)
class IslandSettings:
    """Model choices and the quantum Hall inputs.

    Attributes
    ----------
    screening
        ``"tf"`` (linear Thomas–Fermi sheets with their 2D DOS: quantum capacitance) or
        ``"grounded"`` (ideal equipotentials), for the screening wells and the outer primary well.
    surface
        Exposed surface r < R_gate: ``"pinned"`` (grounded) or ``"frozen"`` (zero normal field);
        None (default): as the stack's ``surface.charge``.
    far
        Far boundary: ``"robin"`` (monopole condition) or ``"grounded"``.
    outer_well
        Include the primary well beyond the gate edge (r > R_gate) as a sheet.
    filling
        Laughlin filling nu = 1/m (e*/e = nu) for the periods and the window.
    gap_energy_J
        Quasiparticle gap Delta_qp (J) for the fixed-filling window.
    mesh
        Mesh and element.
    """

    screening: str = "tf"
    surface: str | None = None
    far: str = "robin"
    outer_well: bool = True
    filling: float | None = None
    gap_energy_J: float | None = None
    mesh: AxiMeshOptions = ISLAND_MESH

    def __post_init__(self):
        choices = {
            "screening": ("tf", "grounded"),
            "surface": (None, "pinned", "frozen"),
            "far": ("robin", "grounded"),
        }
        for key, allowed in choices.items():
            if getattr(self, key) not in allowed:
                raise InputError(
                    f"'{getattr(self, key)}' is not allowed; allowed: "
                    f"{', '.join(a for a in allowed if a is not None)}",
                    source=_opt(key),
                )
        if self.filling is not None:
            nu = float(self.filling)
            m = round(1.0 / nu) if nu > 0 else 0
            if not (0 < nu <= 1 and m >= 1 and abs(nu * m - 1.0) < 1e-9):
                raise InputError(
                    f"filling {nu:g} is not a Laughlin filling 1/m (allowed: 1, 1/3, 1/5, ...)",
                    source=_opt("filling"),
                )
        if self.gap_energy_J is not None:
            if not (math.isfinite(self.gap_energy_J) and self.gap_energy_J > 0):
                raise InputError("gap must be > 0", source=_opt("gap"))
            if self.filling is None:
                raise InputError("--gap needs --filling (e.g. 1/3)", source=_opt("gap"))


@dataclass(frozen=True, eq=False)
class IslandResult:
    """Result of :func:`solve_island` (SI; ``to_dict`` nested JSON, ``summary`` flat floats).

    Attributes
    ----------
    geometry, settings
        The inputs.
    column_name
        Stack name.
    capacitance_F
        Maxwell matrix of (I, L), shape (2, 2).
    sheets
        The sheets that screen: ``{name: {"z_m", "model", "r_from_m"}}``.
    excluded_wells
        Screening wells left out because the 1D stage found them empty.
    info
        Solver record (dofs, mesh, timings): not part of ``summary``.
    """

    geometry: IslandGeometry
    settings: IslandSettings
    column_name: str
    primary_depth_m: float
    capacitance_F: np.ndarray
    sheets: dict
    excluded_wells: tuple[str, ...] = ()
    info: dict = field(default_factory=dict)
    solution: Any = field(default=None, repr=False)  # CapacitanceSolution (potentials for plots)

    # ------------------------------------------------------------------ derived numbers
    @property
    def elastance_J(self) -> np.ndarray:
        """K = e^2 C^-1 (J), shape (2, 2), order (I, L)."""
        return sc.e**2 * np.linalg.inv(self.capacitance_F)

    @property
    def K_I_J(self) -> float:
        return float(self.elastance_J[0, 0])

    @property
    def K_L_J(self) -> float:
        return float(self.elastance_J[1, 1])

    @property
    def K_IL_J(self) -> float:
        return float(self.elastance_J[0, 1])

    @property
    def ratio(self) -> float:
        """K_IL / K_I."""
        return self.K_IL_J / self.K_I_J

    @property
    def K_tilde_J(self) -> float:
        """K~ = K_L - K_IL^2/K_I (our derivation, docs/derivations.md section 10)."""
        return self.K_L_J - self.K_IL_J**2 / self.K_I_J

    @property
    def charging_energy_J(self) -> float:
        """E_C = K~/2 (our derivation, docs/derivations.md section 10).

        K~ = e^2/C_LL exactly (C_LL: the bulk's Maxwell self-capacitance, the edge ring held at
        the contacts' potential)."""
        return 0.5 * self.K_tilde_J

    @property
    def total_capacitance_F(self) -> float:
        """C_total = C_II + C_LL + 2 C_IL: the island (I and L joined) to everything else."""
        C = self.capacitance_F
        return float(C[0, 0] + C[1, 1] + 2.0 * C[0, 1])

    def periods_T(self) -> dict[str, float | None]:
        """Flux periods and the fixed-filling window (T).

        Our derivation (docs/derivations.md section 11).
        """
        A = self.geometry.area_m2
        out: dict[str, float | None] = {
            "compressible_period_T": PHI0 / A,
            "incompressible_period_T": None,
            "fixed_filling_window_T": None,
        }
        nu = self.settings.filling
        if nu is not None:
            out["incompressible_period_T"] = (1.0 / nu) * PHI0 / (A * (1.0 - self.ratio))
            gap = self.settings.gap_energy_J
            if gap is not None:
                out["fixed_filling_window_T"] = (PHI0 / (nu * A)) * (
                    nu + gap / (nu * self.charging_energy_J)
                )
        return out

    # ------------------------------------------------------------------ output
    def to_dict(self) -> dict:
        g, s = self.geometry, self.settings
        C = self.capacitance_F
        K = self.elastance_J
        return {
            "stack": self.column_name,
            "geometry": {
                "radius_m": g.radius_m,
                "ring_width_m": g.ring_width_m,
                "split_gap_m": g.split_gap_m,
                "gate_radius_m": g.gate_radius_m,
                "outer_radius_m": g.domain_radius_m,
                "area_m2": g.area_m2,
                "primary_depth_m": self.primary_depth_m,
            },
            "model": {
                "screening": s.screening,
                "surface": s.surface,
                "far_boundary": s.far,
                "outer_well": s.outer_well,
                "sheets": self.sheets,
                "excluded_empty_wells": list(self.excluded_wells),
            },
            "capacitance_F": {
                "C_II": float(C[0, 0]),
                "C_LL": float(C[1, 1]),
                "C_IL": float(C[0, 1]),
                "C_total": self.total_capacitance_F,
            },
            "elastance_J": {
                "K_I": float(K[0, 0]),
                "K_L": float(K[1, 1]),
                "K_IL": float(K[0, 1]),
                "K_tilde": self.K_tilde_J,
            },
            "K_IL_over_K_I": self.ratio,
            "charging_energy_J": self.charging_energy_J,
            "e2_over_C_total_J": sc.e**2 / self.total_capacitance_F,
            "quantum_hall": {
                "filling": s.filling,
                "gap_energy_J": s.gap_energy_J,
                **self.periods_T(),
            },
            "solver": dict(self.info),
        }

    def summary(self) -> dict[str, float]:
        """Flat design outputs (floats; NaN when an input is missing), units in the keys."""
        C = self.capacitance_F
        p = self.periods_T()

        def mT(v):
            return float("nan") if v is None else 1e3 * v

        return {
            "C_II_aF": 1e18 * float(C[0, 0]),
            "C_LL_aF": 1e18 * float(C[1, 1]),
            "C_IL_aF": 1e18 * float(C[0, 1]),
            "C_total_aF": 1e18 * self.total_capacitance_F,
            "K_I_ueV": self.K_I_J / UEV,
            "K_L_ueV": self.K_L_J / UEV,
            "K_IL_ueV": self.K_IL_J / UEV,
            "K_IL_over_K_I": self.ratio,
            "K_tilde_ueV": self.K_tilde_J / UEV,
            "E_C_ueV": self.charging_energy_J / UEV,
            "e2_over_C_total_ueV": sc.e**2 / self.total_capacitance_F / UEV,
            "area_um2": self.geometry.area_m2 * 1e12,
            "compressible_period_mT": mT(p["compressible_period_T"]),
            "incompressible_period_mT": mT(p["incompressible_period_T"]),
            "fixed_filling_window_mT": mT(p["fixed_filling_window_T"]),
        }

    def table(self) -> Table:
        """The Maxwell matrix and the elastance matrix, one row per conductor (0 = I, 1 = L)."""
        C = 1e18 * self.capacitance_F
        K = self.elastance_J / UEV
        cols = ("conductor_index", "C_with_I_aF", "C_with_L_aF", "K_with_I_ueV", "K_with_L_ueV")
        rows = np.column_stack(([0.0, 1.0], C[:, 0], C[:, 1], K[:, 0], K[:, 1]))
        return Table(cols, rows)


# ---------------------------------------------------------------------------- problem
def island_problem(
    column: IslandColumn, geometry: IslandGeometry, settings: IslandSettings
) -> tuple[AxiProblem, dict, tuple[str, ...]]:
    """The axisymmetric problem of an island; also the sheets used and the wells left out."""
    g, s = geometry, settings
    R, w, gap, Rg = g.radius_m, g.ring_width_m, g.split_gap_m, g.gate_radius_m
    Rout = g.domain_radius_m
    prim = column.primary
    lines = [
        AxiLine(prim.z_m, 0.0, R - w - 0.5 * gap, "conductor", "L"),
        AxiLine(prim.z_m, R - w + 0.5 * gap, R, "conductor", "I"),
    ]
    sheets: dict[str, dict] = {}
    excluded: list[str] = []

    def sheet(name: str, z: float, r0: float, dos: float) -> AxiLine:
        kind = "sheet" if s.screening == "tf" else "ground"
        sheets[name] = {"z_m": z, "r_from_m": r0, "model": s.screening, "dos_J_m2": dos}
        return AxiLine(z, r0, Rout, kind, name, dos if kind == "sheet" else 0.0)

    for wl in column.wells:
        if wl is prim:
            if s.outer_well:
                lines.append(sheet(f"{wl.name}_outside", wl.z_m, Rg, wl.dos_J_m2))
            continue
        # a second primary well is treated like a screening well
        if not (wl.density_m2 > EMPTY_DENSITY_M2 or math.isnan(wl.density_m2)):
            excluded.append(wl.name)
            continue
        lines.append(sheet(wl.name, wl.z_m, 0.0, wl.dos_J_m2))
    zl = [float(z) for z in column.layer_z_m]
    eps = [float(e) for e in column.layer_permittivity]
    far = "far" if s.far == "robin" else "ground"
    if column.bottom == "ground":
        bottom = "ground"
    else:
        zl[-1] = max(zl[-1], Rout)
        bottom = far
    if column.top == "gate":
        top = ((0.0, Rout, "ground"),)
    else:
        exposed = "ground" if (s.surface or column.surface_mode) == "pinned" else "free"
        top = ((0.0, Rg, exposed), (Rg, Rout, "ground"))
    problem = AxiProblem(
        tuple(zl), tuple(eps), tuple(lines), Rout, top, bottom, far, far_centre_z_m=prim.z_m
    )
    return problem, sheets, tuple(excluded)


# ---------------------------------------------------------------------------- options
_LENGTHS = ("radius", "ring_width", "gate_offset", "split_gap", "outer_radius")


def _length(value: Any, name: str) -> float:
    from qhdesign.units import parse_quantity

    if isinstance(value, str):
        return parse_quantity(value, "length", source=_opt(name))
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(f"expected a length with a unit, got {value!r}", source=_opt(name))
    return float(value)


def parse_filling(value: Any) -> float | None:
    """A filling from a number or a fraction string ("1/3")."""
    if value is None:
        return None
    try:
        return float(Fraction(str(value).strip()))
    except (ValueError, ZeroDivisionError):
        raise InputError(
            f"cannot read filling '{value}'; give 1/m (1, 1/3, 1/5)", source=_opt("filling")
        ) from None


def _from_options(options: dict) -> tuple[IslandGeometry | None, dict, dict]:
    geo: dict[str, float] = {}
    st: dict[str, Any] = {}
    mesh: dict[str, Any] = {}
    for key, value in options.items():
        if key in _LENGTHS:
            if value is not None:
                geo[f"{key}_m"] = _length(value, key)
        elif key in ("screening", "surface", "far"):
            if value is not None:
                st[key] = str(value)
        elif key == "outer_well":
            text = str(value).strip().lower()
            if isinstance(value, bool) or text in ("true", "false"):
                st[key] = value if isinstance(value, bool) else text == "true"
            else:
                raise InputError(f"expected true or false, got {value!r}", source=_opt(key))
        elif key == "filling":
            st[key] = parse_filling(value)
        elif key == "gap":
            if value is not None:
                from qhdesign.units import parse_quantity

                # a quantity needs its unit (a bare 0.5 would be 0.5 J)
                st["gap_energy_J"] = parse_quantity(value, "energy", source="option --gap")
        elif key == "degree":
            if value not in (1, 2) or isinstance(value, bool):
                raise InputError(f"element degree must be 1 or 2, got {value!r}", source=_opt(key))
            mesh[key] = int(value)
        elif key == "refine":
            mesh[key] = check_refine(value, source=_opt(key))
        else:
            allowed = [*_LENGTHS, "screening", "surface", "far", "outer_well", "filling", "gap"]
            raise InputError(
                f"unknown island option; allowed: {', '.join([*allowed, 'degree', 'refine'])}",
                key=f"options.{key}",
            )
    geometry = None
    if geo:
        if "radius_m" not in geo:
            raise InputError("the island needs a radius (e.g. '0.8 um')", source=_opt("radius"))
        geometry = IslandGeometry(**geo)
    return geometry, st, mesh


# ---------------------------------------------------------------------------- entry point
def solve_island(
    source,
    geometry: IslandGeometry | None = None,
    settings: IslandSettings | None = None,
    *,
    comm=None,
    keep_potentials: bool = False,
    **options: Any,
) -> IslandResult:
    """Capacitances and energies of an interferometer island.

    Parameters
    ----------
    source
        A :class:`qhdesign.sheets.SheetModel`, an :class:`IslandColumn`, or a callable returning
        one (called after the options are checked). A stack goes through
        :func:`qhdesign.pipeline.solve_island`.
    geometry, settings
        Island lengths and model choices. Instead, keyword ``options`` as in a sweep spec:
        ``radius``, ``ring_width``, ``gate_offset``, ``split_gap``, ``outer_radius`` (strings with
        units, or SI numbers), ``screening``, ``surface``, ``far``, ``outer_well``, ``filling``
        (``"1/3"``), ``gap`` (``"0.1 meV"``), ``degree``, ``refine``.
    comm
        MPI communicator of the finite-element solve (default ``MPI.COMM_WORLD``).
    keep_potentials
        Keep u_I and u_L on the grid (for :func:`qhdesign.plotting.island.plot_island`).

    Returns
    -------
    IslandResult

    Raises
    ------
    InputError
        Bad geometry or option (naming the option), a stack without a primary well, or a gate
        dielectric (not modelled).
    """
    geo_opt, st_opt, mesh_opt = _from_options(options)
    geometry = geo_opt or geometry
    if geometry is None:
        raise InputError("the island needs a radius (e.g. '0.8 um')", source=_opt("radius"))
    settings = replace(settings or IslandSettings(), **st_opt)
    if mesh_opt:
        settings = replace(settings, mesh=replace(settings.mesh, **mesh_opt))
    column = _column(source)
    if settings.surface is None:  # the stack's own surface model
        settings = replace(settings, surface=column.surface_mode)
    problem, sheets, excluded = island_problem(column, geometry, settings)
    if comm is None:
        from qhdesign.fem.backend import load

        MPI, _ = load()
        comm = MPI.COMM_WORLD
    sol = solve_capacitance(problem, settings.mesh, comm=comm, keep_potentials=keep_potentials)
    order = [sol.names.index("I"), sol.names.index("L")]
    C = sol.matrix_F[np.ix_(order, order)]
    info = dict(sol.info)
    return IslandResult(
        geometry,
        settings,
        column.name,
        column.primary.z_m,
        C,
        sheets,
        excluded,
        info,
        sol if keep_potentials else None,
    )


def _column(source) -> IslandColumn:
    if callable(source):  # deferred (qhdesign.pipeline): the 1D solve runs after option checks
        source = source()
    if isinstance(source, IslandColumn):
        return source
    if hasattr(source, "sheets") and hasattr(source, "layer_permittivity"):  # a SheetModel
        return column_from_sheet_model(source)
    raise TypeError(
        "the island stage takes a sheet model or an IslandColumn; for a stack use "
        "qhdesign.pipeline.solve_island"
    )
