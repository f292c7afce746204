"""The layout stage: electronic island, constrictions and plunger lever arm of a 3D gate layout.

``solve_layout(stack, layout)`` runs the 1D stage for the column, solves the 3D Thomas–Fermi
model at the layout's gate voltages (:class:`~qhdesign.layout.model3d.LayoutSolver`), and reads
off, on the plane mesh (:mod:`qhdesign.layout.analysis`):

- the electronic island of the primary well (half-density outline, area, equivalent radius);
- each constriction's state per well (``open`` / ``pinched``) and its lowest density;
- per plunger the area lever arm dA/dV_p (m^2/V) by linear response: the Jacobian solve for
  dphi/dV_p gives dn/dV_p = D sigmoid((phi - E)/kT) dphi/dV_p on the primary sheet, and dA/dV_p is
  the derivative of the (exactly computed) island area along dn/dV_p at fixed island topology;
- the Aharonov–Bohm plunger period: a flux quantum through the area, dV_p = Phi0/(B |dA/dV_p|),
  reported as the field-independent product ``plunger_period_V_T`` = Phi0/|dA/dV_p| (V T) and, for
  a given field, in volts.

References
----------
The Aharonov–Bohm period of a Fabry–Pérot interferometer, dV_p = Phi0/(B dA/dV_p): B. I. Halperin,
A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011) (the Aharonov–Bohm regime, where
the phase is 2 pi B A/Phi0).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.results import Table, flatten

from .analysis import PINCH_FRACTION, constriction_profile, island_shape
from .layoutfile import Layout
from .model3d import Layout3DOptions, LayoutSolver

__all__ = ["LayoutResult", "find_pinchoff", "solve_layout"]

PHI0 = sc.h / sc.e
#: Relative step of the directional derivative of the area along dn/dV (the area is piecewise
#: smooth in the nodal densities; a central difference of this size is exact to ~1e-8).
_AREA_STEP = 1e-4


@dataclass(frozen=True, eq=False)
class ConstrictionState:
    """One constriction: per well its lowest density along the path (m^-2) and its state."""

    name: str
    min_density_m2: tuple[float, ...]
    state: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class LayoutResult:
    """Results of :func:`solve_layout` (SI units; identical on every MPI rank).

    Attributes
    ----------
    layout
        The layout at the solved voltages.
    sheet_names, sheet_roles, bulk_density_m2
        Wells, their roles, their far-field (1D) densities (m^-2).
    xy_m, triangles, density_m2
        Plane mesh (Np, 2) m, (T, 3), and every well's density map (S, Np) m^-2.
    island_area_m2, electronic_radius_m, outline_m
        Electronic island of the primary well (0 and an empty outline if none).
    constrictions
        :class:`ConstrictionState` per constriction.
    lever_arm_m2_per_V
        dA/dV_p per plunger gate (m^2/V).
    field_T
        Field for the plunger period in volts (None: only the V T product).
    info
        dofs, levels, plane nodes, Newton iterations, timings (s), ranks.
    """

    layout: Layout
    sheet_names: tuple[str, ...]
    sheet_roles: tuple[str, ...]
    bulk_density_m2: np.ndarray
    xy_m: np.ndarray
    triangles: np.ndarray
    gate_of_triangle: np.ndarray
    density_m2: np.ndarray
    island_area_m2: float
    electronic_radius_m: float
    outline_m: np.ndarray
    constrictions: tuple[ConstrictionState, ...]
    lever_arm_m2_per_V: dict[str, float]
    field_T: float | None = None
    info: dict = field(default_factory=dict)
    response: object | None = None  # response3d.IslandResponse3D when requested

    @property
    def primary(self) -> int:
        return self.sheet_roles.index("primary") if "primary" in self.sheet_roles else 0

    def to_dict(self) -> dict:
        """JSON-ready results; island keys as the island stage names them."""
        out: dict = {
            "layout": self.layout.name,
            "layout_file": self.layout.source,
            "gate_voltages_V": {g.name: g.voltage_V for g in self.layout.gates},
            "wells": [
                {"name": n, "role": r, "bulk_density_m2": float(d)}
                for n, r, d in zip(
                    self.sheet_names, self.sheet_roles, self.bulk_density_m2, strict=True
                )
            ],
            "electronic_radius_m": self.electronic_radius_m,
            "A_I_m2": self.island_area_m2,
            "island_outline_m": self.outline_m.tolist(),
            "constrictions": [
                {
                    "name": c.name,
                    "wells": {
                        n: {"state": s, "min_density_m2": float(m)}
                        for n, s, m in zip(self.sheet_names, c.state, c.min_density_m2, strict=True)
                    },
                }
                for c in self.constrictions
            ],
            "plungers": {},
            "info": self.info,
        }
        for name, dadv in self.lever_arm_m2_per_V.items():
            per = PHI0 / abs(dadv) if dadv != 0 else float("inf")
            item = {"dA_I_dV_m2_per_V": dadv, "plunger_period_V_T": per}
            if self.field_T:
                item["plunger_period_V"] = per / self.field_T
            out["plungers"][name] = item
        if len(self.lever_arm_m2_per_V) >= 1:
            first = next(iter(self.lever_arm_m2_per_V))
            out["dA_I_dV_m2_per_V"] = self.lever_arm_m2_per_V[first]
        if self.response is not None:
            # the island stage's keys for the island figures; the interfering edge's own area
            # and radius are under "strip" (A_I_m2 above is the half-density island)
            out |= {k: v for k, v in self.response.to_dict().items() if k != "field_T"}
            out["response_field_T"] = self.response.point.field_T
            out["info"] = dict(self.info) | {"response": self.response.info}
        return out

    def summary(self) -> dict[str, float]:
        """Flat numbers of :meth:`to_dict` (the solver record ``info`` left out)."""
        d = self.to_dict()
        d.pop("info", None)  # dofs and timings: not design outputs
        return flatten(d)

    def table(self) -> Table:
        """The density maps on the plane nodes: x, y (nm) and each well's density (cm^-2)."""
        cols = ("x_nm", "y_nm", *(f"{n}_density_cm^-2" for n in self.sheet_names))
        xy = np.asarray(self.xy_m)
        data = [xy[:, 0] * 1e9, xy[:, 1] * 1e9, *(np.asarray(self.density_m2) * 1e-4)]
        return Table(cols, np.column_stack(data))


def _area_along(xy, tri, n, dn, bulk, seed, cons, comp, step):
    """Central difference of the island area along a density direction at fixed topology."""
    up = island_shape(xy, tri, n + step * dn, bulk, seed, cons, component=comp).area_m2
    dn_ = island_shape(xy, tri, n - step * dn, bulk, seed, cons, component=comp).area_m2
    return (up - dn_) / (2 * step)


def analyse(solver: LayoutSolver, lever_arm: bool = True) -> dict:
    """Island, constrictions and lever arms from a solved :class:`LayoutSolver`."""
    lay = solver.layout.with_voltages(solver.voltages)
    sec = solver.section
    plane = solver.plane
    dens = solver.sheet_densities()
    bulk = np.array([s.density_m2 for s in sec.sheets])
    roles = tuple(s.role for s in sec.sheets)
    ip = roles.index("primary") if "primary" in roles else 0
    xy, tri = plane.xy_m, plane.triangles
    area = 0.0
    outline = np.zeros((0, 2, 2))
    comp = None
    if lay.seed_m is not None:
        shape = island_shape(xy, tri, dens[ip], bulk[ip], lay.seed_m, lay.constrictions)
        area, outline, comp = shape.area_m2, shape.outline_m, shape.triangles
    cons = []
    for c in lay.constrictions:
        mins, states = [], []
        for i in range(len(sec.sheets)):
            _, prof = constriction_profile(xy, tri, dens[i], c.path_m)
            m = float(np.nanmin(prof))
            mins.append(m)
            states.append("pinched" if m < PINCH_FRACTION * bulk[i] else "open")
        cons.append(ConstrictionState(c.name, tuple(mins), tuple(states)))
    levers: dict[str, float] = {}
    if lever_arm and comp is not None and comp.size:
        D = sec.sheets[ip].dos_J_m2
        for name in lay.plungers:
            dphi, _ = solver.linear_response([(solver.gate_dofs(name), 1.0)])
            dphi_sheet = solver.gather_levels(dphi.x.array, [solver.sheet_level[ip]])[0]
            fac = solver.sheet_dos_factor()[ip]
            dn = D * sc.e * fac * dphi_sheet  # m^-2 per V
            step = _AREA_STEP * bulk[ip] / max(np.max(np.abs(dn)), 1e-300)
            levers[name] = float(
                _area_along(
                    xy, tri, dens[ip], dn, bulk[ip], lay.seed_m, lay.constrictions, comp, step
                )
            )
    return {
        "layout": lay,
        "density": dens,
        "bulk": bulk,
        "area": float(area),
        "outline": outline,
        "constrictions": tuple(cons),
        "levers": levers,
        "component": comp,
    }


def solve_layout(
    source,
    layout: Layout,
    options: Layout3DOptions | None = None,
    *,
    comm=None,
    field_T: float | None = None,
    lever_arm: bool = True,
    fields_path=None,
    response=None,
    resolve_strip: bool = True,
) -> LayoutResult:
    """Solve a gate layout in 3D and read off island, constrictions and lever arms.

    Parameters
    ----------
    source
        A :class:`~qhdesign.stack.Stack` (the 1D stage places the sheets) or a
        :class:`~qhdesign.section.model.CrossSection`.
    layout
        The validated layout (voltages are its operating point).
    options
        Mesh and solver settings.
    comm
        MPI communicator (default ``MPI.COMM_WORLD``).
    field_T
        Magnetic field (T) for the plunger period in volts.
    lever_arm
        Compute dA/dV_p for every plunger (one linear solve each).
    fields_path
        Write phi and the permittivity to this XDMF file (collective).
    response
        :class:`qhdesign.island.stage.OperatingSettings`: also compute the island's K_I, K_L,
        K_IL and charging energy at its field (:mod:`qhdesign.layout.response3d`). For a stack,
        the Landau widths come from the 1D disorder estimate unless the settings give them.
    resolve_strip
        For the response: solve again on a mesh with node rows along the strip (default).

    Raises
    ------
    InputError
        Bad field; ConvergenceError when Newton fails.
    """
    from qhdesign.section.model import CrossSection

    if field_T is not None and not (0 < field_T <= 50):
        raise InputError(f"field {field_T:g} T out of range; allowed (0, 50] T", key="field")
    if response is not None:
        from .response3d import check_settings

        check_settings(response)
    t0 = time.perf_counter()
    lifetimes = None
    if isinstance(source, CrossSection):
        section = source
    elif (
        response is not None
        and response.level_width_J is None
        and (response.quantum_lifetime_s is None)
    ):
        # as qhdesign.pipeline.solve_island_operating: the 1D bands give the sheets and the
        # disorder estimate the quantum lifetimes
        from qhdesign.section.model import cross_section_from_sheet_model
        from qhdesign.sp1d import solve_bands
        from qhdesign.sp1d.scattering import scattering
        from qhdesign.sp1d.sheets import sheet_model

        bands = solve_bands(source)
        section = cross_section_from_sheet_model(sheet_model(source, bands))
        lifetimes = {w.name: w.quantum_lifetime_s for w in scattering(bands).wells}
    else:
        from qhdesign.pipeline import section_from_stack

        section = section_from_stack(source, sheets="constant-dos")  # closed-form sheets in 3D
    t_1d = time.perf_counter() - t0
    solver = LayoutSolver(section, layout, options, comm=comm)
    its = solver.solve()
    t0 = time.perf_counter()
    res = analyse(solver, lever_arm=lever_arm)
    t_an = time.perf_counter() - t0
    resp = None
    if response is not None:
        from .response3d import island_response

        resp = island_response(solver, response, lifetimes_s=lifetimes, resolve_strip=resolve_strip)
    if fields_path is not None:
        solver.write_fields(fields_path)
    info = {
        "dofs": int(solver.num_dofs),
        "levels": int(solver.levels_m.size),
        "plane_nodes": int(solver.plane.num_nodes),
        "newton_iterations": int(its),
        "ranks": int(solver.comm.size),
        "timings_s": {"1d": t_1d, **solver.timings, "analysis": t_an},
    }
    return LayoutResult(
        layout=res["layout"],
        sheet_names=tuple(s.name for s in section.sheets),
        sheet_roles=tuple(s.role for s in section.sheets),
        bulk_density_m2=res["bulk"],
        xy_m=solver.plane.xy_m,
        triangles=solver.plane.triangles,
        gate_of_triangle=solver.plane.gate_of_triangle,
        density_m2=res["density"],
        island_area_m2=res["area"],
        electronic_radius_m=float(np.sqrt(res["area"] / np.pi)),
        outline_m=res["outline"],
        constrictions=res["constrictions"],
        lever_arm_m2_per_V=res["levers"],
        field_T=field_T,
        info=info,
        response=resp,
    )


def find_pinchoff(
    solver: LayoutSolver,
    gates: list[str],
    constriction: str,
    well: int,
    v_open: float,
    v_closed: float,
    tolerance_V: float = 2e-3,
) -> float:
    """Pinch-off voltage of one well in one constriction, by bisection (V).

    The named ``gates`` are set together to the trial voltage; the well is pinched when its
    density along the constriction's path falls below ``PINCH_FRACTION`` of its far-field
    density (the 2D split-gate criterion). ``v_open`` must leave it open and ``v_closed`` pinch it.

    Raises
    ------
    InputError
        If the bracket does not bracket the pinch-off.
    """
    lay = solver.layout
    cons = {c.name: c for c in lay.constrictions}
    if constriction not in cons:
        raise InputError(f"no constriction '{constriction}'", source=lay.source)
    path = cons[constriction].path_m
    plane = solver.plane
    bulk = solver.section.sheets[well].density_m2

    def pinched(v: float) -> bool:
        solver.solve(dict.fromkeys(gates, v))
        n = solver.sheet_densities()[well]
        _, prof = constriction_profile(plane.xy_m, plane.triangles, n, path)
        return bool(np.nanmin(prof) < PINCH_FRACTION * bulk)

    lo, hi = float(v_open), float(v_closed)
    if pinched(lo) or not pinched(hi):
        raise InputError(
            f"[{v_closed:g} V, {v_open:g} V] does not bracket the pinch-off of well {well} in "
            f"'{constriction}'",
            key="bracket",
        )
    while abs(hi - lo) > tolerance_V:
        mid = 0.5 * (lo + hi)
        if pinched(mid):
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)
