"""Split-gate constriction: the channel in the gap, the centre density vs gate voltage, pinch-off.

Metal over |x| > w/2 on the surface; the constriction centre x = 0 is a mesh node at the edge size.
A well is pinched off when its centre density falls below ``EDGE_FRACTION`` (1 %) of its bulk
(1D) density; :func:`solve_pinchoff` sweeps the gate voltage with warm starts, brackets each
well's crossing and bisects it to ``PINCHOFF_TOL_V``.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from qhdesign.errors import InputError
from qhdesign.results import Table, nan_if_none

from .edge import _check_electrons, _check_gate_voltage
from .geometry import GateLayout, MeshOptions
from .model import CrossSection
from .profile import EDGE_FRACTION, crossing_from_bulk
from .solver import CrossSectionSolver, FieldSolution, SolverOptions

__all__ = [
    "PINCHOFF_TOL_V",
    "ConstrictionResult",
    "PinchoffResult",
    "solve_constriction",
    "solve_pinchoff",
]

#: Bisection tolerance of the pinch-off voltage (V).
PINCHOFF_TOL_V = 1e-3


@dataclass(frozen=True, eq=False)
class PinchoffResult:
    """Result of :func:`solve_pinchoff`."""

    gap_m: float
    voltages_V: np.ndarray  # (M,)
    centre_density_m2: dict  # well -> (M,)
    bulk_density_m2: dict  # well -> float
    pinchoff_V: dict  # well -> float | None
    tolerance_V: float = PINCHOFF_TOL_V
    info: dict = field(default_factory=dict)
    #: well -> "pinched" (at pinchoff_V), "closed at start" (below the threshold already at the
    #: first voltage) or "open" (never pinched within the sweep)
    status: dict = field(default_factory=dict)
    #: well -> "primary" or "screening"
    roles: dict = field(default_factory=dict)

    @property
    def parallel_path_wells(self) -> tuple[str, ...]:
        """Screening wells still open under the constriction beyond the primary's pinch-off.

        Once the primary is pinched off, a screening well that is not (it pinches at a more
        negative voltage, or not within the sweep) still connects the two sides: a parallel
        path around the constriction. Empty when the primary does not pinch off in the sweep.
        """
        prim = [n for n, r in self.roles.items() if r == "primary"]
        if not prim:
            return ()
        vp = self.pinchoff_V.get(prim[0])
        if vp is None and self.status.get(prim[0]) != "closed at start":
            return ()
        out = []
        for name, role in self.roles.items():
            if role != "screening":
                continue
            vs = self.pinchoff_V.get(name)
            state = self.status.get(name, "open")
            if state == "closed at start":
                continue
            if vs is None or vp is None or vs < vp - self.tolerance_V:
                out.append(name)
        return tuple(out)

    def to_dict(self) -> dict:
        return {
            "gap_m": self.gap_m,
            "pinchoff_V": dict(self.pinchoff_V),
            "pinchoff_status": dict(self.status),
            "parallel_path_wells": list(self.parallel_path_wells),
            "flags": {"parallel_path": bool(self.parallel_path_wells)},
            "pinchoff_tolerance_V": self.tolerance_V,
            "pinchoff_fraction_of_bulk": EDGE_FRACTION,
            "bulk_density_m2": dict(self.bulk_density_m2),
            "sweep": {
                "gate_voltage_V": self.voltages_V.tolist(),
                "centre_density_m2": {k: v.tolist() for k, v in self.centre_density_m2.items()},
            },
            "solver": dict(self.info),
        }

    def summary(self) -> dict[str, float]:
        """Gap (nm) and, per well, the pinch-off voltage (V; NaN if none) and bulk density."""
        out = {"gap_nm": self.gap_m * 1e9}
        for name, v in self.pinchoff_V.items():
            out[f"{name}_pinchoff_V"] = nan_if_none(v)
            out[f"{name}_bulk_density_cm^-2"] = self.bulk_density_m2[name] * 1e-4
        return out

    def table(self) -> Table:
        """The sweep: gate voltage (V) and each well's centre density (cm^-2)."""
        cols = ["gate_voltage_V"] + [f"{k}_centre_density_cm^-2" for k in self.centre_density_m2]
        rows = np.column_stack(
            [self.voltages_V] + [v * 1e-4 for v in self.centre_density_m2.values()]
        )
        return Table(tuple(cols), rows)


def solve_pinchoff(
    section: CrossSection,
    gap_m: float,
    *,
    v_start: float = 0.0,
    v_stop: float = -5.0,
    v_step: float = -0.1,
    tolerance_V: float = PINCHOFF_TOL_V,
    mesh_options: MeshOptions | None = None,
    options: SolverOptions | None = None,
    comm=None,
) -> PinchoffResult:
    """Density at the constriction centre vs gate voltage, and each well's pinch-off voltage.

    A well is pinched off when its density at x = 0 falls below ``EDGE_FRACTION`` of its bulk
    density. The sweep from ``v_start`` to ``v_stop`` brackets each pinch-off; bisection then
    narrows it to ``tolerance_V``. A well already below the threshold at ``v_start`` or never
    pinched within the sweep gets None, and its ``status`` says which.
    """
    if not gap_m > 0:
        raise InputError(f"gap must be > 0, got {gap_m:g} m", source="option --gap")
    for v in (v_start, v_stop):
        _check_gate_voltage(section, v)
    if not any(s.density_m2 > 0.0 for s in section.sheets):
        raise InputError("the stack has no electrons at zero gate bias; nothing to pinch off")
    solver = _split_solver(section, gap_m, mesh_options, options, comm)
    names = [s.name for s in section.sheets]
    thr = np.array([EDGE_FRACTION * s.density_m2 for s in section.sheets])

    def centre(v: float) -> np.ndarray:
        return _centre_density(solver.solve(v))

    n_steps = int(np.floor((v_stop - v_start) / v_step + 1e-9)) + 1
    volts = v_start + v_step * np.arange(n_steps)
    dens = []
    for v in volts:
        dens.append(centre(float(v)))
        if np.all(dens[-1] < thr):
            break
    volts = volts[: len(dens)]
    dens_arr = np.array(dens)  # (M, S)
    pinch: dict[str, float | None] = {}
    status: dict[str, str] = {}
    for i, name in enumerate(names):
        open_ = dens_arr[:, i] >= thr[i]
        if not open_[0] or open_.all():
            pinch[name] = None
            status[name] = "closed at start" if not open_[0] else "open"
            continue
        status[name] = "pinched"
        j = int(np.argmin(open_))  # first closed point
        hi, lo = float(volts[j - 1]), float(volts[j])  # hi open, lo closed
        while hi - lo > tolerance_V:
            mid = 0.5 * (hi + lo)
            if centre(mid)[i] >= thr[i]:
                hi = mid
            else:
                lo = mid
        pinch[name] = 0.5 * (hi + lo)
    return PinchoffResult(
        gap_m=gap_m,
        voltages_V=volts,
        centre_density_m2={n: dens_arr[:, i] for i, n in enumerate(names)},
        bulk_density_m2={s.name: s.density_m2 for s in section.sheets},
        pinchoff_V=pinch,
        status=status,
        roles={s.name: s.role for s in section.sheets},
        tolerance_V=tolerance_V,
        info={"dofs": solver.num_dofs, "linear_solver": solver.linear_solver},
    )


def _split_solver(section, gap_m, mesh_options, options, comm) -> CrossSectionSolver:
    mesh_options = mesh_options or MeshOptions()
    # the constriction centre is a mesh node at the edge size
    opts = replace(mesh_options, x_attractors_m=(*mesh_options.x_attractors_m, 0.0))
    return CrossSectionSolver(section, GateLayout.split(gap_m), opts, options, comm=comm)


def _centre_density(sol: FieldSolution) -> np.ndarray:
    """Density of each sheet at x = 0 (m^-2), shape (S,)."""
    i0 = int(np.argmin(np.abs(sol.x_m)))
    return sol.density_m2[:, i0].copy()


@dataclass(frozen=True, eq=False)
class ConstrictionResult:
    """A split gate of gap w at one gate voltage: the channel in the gap, per well."""

    gap_m: float
    gate_voltage_V: float
    centre_density_m2: dict
    bulk_density_m2: dict
    channel_width_m: dict  # between the two points where n = EDGE_FRACTION of the bulk
    pinched: dict
    solution: FieldSolution
    gates_m: tuple = ()
    solver: object = field(default=None, repr=False)

    def to_dict(self) -> dict:
        return {
            "gap_m": self.gap_m,
            "gate_voltage_V": self.gate_voltage_V,
            "edge_fraction_of_bulk": EDGE_FRACTION,
            "wells": {
                k: {
                    "centre_density_m2": self.centre_density_m2[k],
                    "bulk_density_m2": self.bulk_density_m2[k],
                    "channel_width_m": self.channel_width_m[k],
                    "pinched": self.pinched[k],
                }
                for k in self.centre_density_m2
            },
        }

    def summary(self) -> dict[str, float]:
        """Gap (nm), gate voltage (V) and, per well, centre density (cm^-2), channel width (nm;
        NaN if pinched) and pinched (1/0)."""
        out = {"gap_nm": self.gap_m * 1e9, "gate_voltage_V": self.gate_voltage_V}
        for k in self.centre_density_m2:
            out[f"{k}_centre_density_cm^-2"] = self.centre_density_m2[k] * 1e-4
            w = self.channel_width_m[k]
            out[f"{k}_channel_width_nm"] = nan_if_none(None if w is None else w * 1e9)
            out[f"{k}_pinched"] = float(self.pinched[k])
        return out

    def table(self) -> Table:
        """n(x) across the gap: x (nm) and each well's density (cm^-2)."""
        sol = self.solution
        cols = ["x_nm"] + [f"{n}_density_cm^-2" for n in sol.sheet_names]
        return Table(tuple(cols), np.column_stack([sol.x_m * 1e9, *(sol.density_m2 * 1e-4)]))


def solve_constriction(
    section: CrossSection,
    gap_m: float,
    gate_voltage_V: float,
    mesh_options: MeshOptions | None = None,
    options: SolverOptions | None = None,
    *,
    comm=None,
) -> ConstrictionResult:
    """Solve a split gate of gap ``gap_m`` at one gate voltage (metal over |x| > gap/2)."""
    if not gap_m > 0:
        raise InputError(f"gap must be > 0, got {gap_m:g} m", source="option --gap")
    _check_gate_voltage(section, gate_voltage_V)
    if not any(s.density_m2 > 0.0 for s in section.sheets):
        raise InputError("the stack has no electrons at zero gate bias; nothing to pinch off")
    solver = _split_solver(section, gap_m, mesh_options, options, comm)
    sol = solver.solve(gate_voltage_V)
    _check_electrons(sol, section, gate_voltage_V)
    n0 = _centre_density(sol)
    centre, width, pinched, bulk = {}, {}, {}, {}
    x = sol.x_m
    for i, s in enumerate(section.sheets):
        thr = EDGE_FRACTION * s.density_m2
        centre[s.name] = float(n0[i])
        bulk[s.name] = s.density_m2
        pinched[s.name] = bool(n0[i] < thr)
        right = x >= 0
        xr = crossing_from_bulk(x[right][::-1] * -1, sol.density_m2[i][right][::-1], thr)
        width[s.name] = None if pinched[s.name] or xr is None else float(-2 * xr)
    return ConstrictionResult(
        gap_m,
        gate_voltage_V,
        centre,
        bulk,
        width,
        pinched,
        sol,
        gates_m=solver.layout.gates_m,
        solver=solver,
    )
