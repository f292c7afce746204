"""The island stage seen as interferometer figures: one thin adapter for ``island``, ``size`` and
the sweep stage.

:func:`island_figures` solves the island (whatever model :func:`qhdesign.pipeline.solve_island`
implements) and turns its energies and areas into the figures of :mod:`qhdesign.interferometer`
at given quantum Hall conditions. It reads the island result through :func:`_areas` and the
``K_*`` attributes only, so a new island model that reports its own areas (``A_I_m2``,
``A_L_m2``, ``dA_I_dV_m2_per_V``) drops in without changes here.

Conventions (docs/interferometer.md, "Island figures"):

* Legacy conductor model: A_I = pi R^2 (R the electronic radius, where the interfering edge
  runs), A_L = pi (R - w - g/2)^2 (the bulk conductor inside the edge ring).
* Field: the field at which the island's bulk (the primary well at its 1D density n) sits at the
  filling, B = n Phi0 / nu, unless given.
* Thermal damping: the path is the edge's circumference 2 pi R; the edge velocity is an input
  (default :data:`DEFAULT_EDGE_VELOCITY_M_S`).
* Gate period: dA_I/dV from the island model when it has one, else from the 2D edge stage's edge
  shift per volt at a given gate voltage times the gate circumference 2 pi R_gate.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

from qhdesign import interferometer as itf
from qhdesign.errors import InputError

__all__ = [
    "DEFAULT_EDGE_VELOCITY_M_S",
    "DEFAULT_ELECTRON_TEMPERATURE_K",
    "DEFAULT_FILLING",
    "QHConditions",
    "figures_from_flat",
    "figures_from_result",
    "island_column",
    "island_figures",
]

#: Electron temperature when none is given (K): 20 mK, a typical dilution-refrigerator electron
#: temperature (common practice).
DEFAULT_ELECTRON_TEMPERATURE_K = 0.020
#: Edge velocity when none is given (m/s): order of magnitude for GaAs fractional edges (from
#: memory).
DEFAULT_EDGE_VELOCITY_M_S = 2e4
#: Filling when none is given.
DEFAULT_FILLING = 1 / 3


@dataclass(frozen=True)
class QHConditions:
    """Quantum Hall operating conditions of the figures (SI).

    Attributes
    ----------
    filling
        Laughlin filling nu = 1/m.
    gap_qp_J
        Creation energy of one quasiparticle (J), or None (no window).
    temperature_K
        Electron temperature.
    edge_velocity_m_s
        Edge velocity for T0.
    field_T
        Field; None: the field that puts the island's bulk at ``filling``.
    dA_dV_m2_per_V
        |dA_I/dV| of the plunger (m^2/V), or None (no gate period); see
        :func:`conditions_from_edge`.
    edge_shift_m_per_V
        Instead of dA/dV: the edge's shift per volt (m/V), times the gate circumference.
    """

    filling: float = DEFAULT_FILLING
    gap_qp_J: float | None = None
    temperature_K: float = DEFAULT_ELECTRON_TEMPERATURE_K
    edge_velocity_m_s: float = DEFAULT_EDGE_VELOCITY_M_S
    field_T: float | None = None
    dA_dV_m2_per_V: float | None = None
    edge_shift_m_per_V: float | None = None
    edge_velocity_source: str = "default"

    def __post_init__(self):
        try:
            itf.check_filling(self.filling)
        except InputError as exc:
            raise InputError(exc.message, key="filling") from None
        # error keys are argument names; the front ends name their own option or spec key
        checks = (
            ("temperature_K", "electron_temperature_K", True),
            ("edge_velocity_m_s", "edge_velocity_m_s", False),
            ("field_T", "field_T", False),
            ("gap_qp_J", "gap_qp_J", False),
        )
        for name, key, zero_ok in checks:
            v = getattr(self, name)
            if v is None:
                continue
            if not (math.isfinite(v) and (v >= 0 if zero_ok else v > 0)):
                raise InputError(f"must be {'>=' if zero_ok else '>'} 0, got {v!r}", key=key)


def island_column(stack):
    """The island's layer column for ``stack`` (runs the 1D stage once; reuse it across radii).

    Returns the stack itself when the island model offers no column (each solve then runs the
    1D stage again).
    """
    try:
        from qhdesign.pipeline import island_column_from_stack
    except ImportError:  # another island model: let solve_island take the stack
        return stack
    return island_column_from_stack(stack)


def _is_column(source) -> bool:
    try:
        from qhdesign.island import IslandColumn
    except ImportError:
        return False
    return isinstance(source, IslandColumn)


def _areas(res) -> tuple[float, float, float]:
    """(electronic radius, A_I, A_L) of an island result (m, m^2, m^2)."""
    A_I = getattr(res, "A_I_m2", None)
    A_L = getattr(res, "A_L_m2", None)
    R = getattr(res, "electronic_radius_m", None)
    if R is None:
        R = res.geometry.radius_m
    if A_I is None:
        A_I = math.pi * R**2
    if A_L is None:
        g = res.geometry
        A_L = math.pi * (g.radius_m - g.ring_width_m - 0.5 * g.split_gap_m) ** 2
    return float(R), float(A_I), float(A_L)


class _FlatResult:
    """A flat dict of an island model's figures (``A_I_m2``, ``K_I_J``, ...) seen as a result."""

    def __init__(self, flat: dict):
        self.__dict__.update(flat)


def figures_from_flat(flat: dict, cond: QHConditions) -> dict:
    """Figures from a flat dict with at least ``K_I_J``, ``K_L_J``, ``K_IL_J``, ``A_I_m2``,
    ``A_L_m2`` and ``electronic_radius_m`` (the operating-point island's keys)."""
    return figures_from_result(_FlatResult(flat), cond)


def figures_from_result(res, cond: QHConditions, bulk_density_m2: float | None = None) -> dict:
    """Interferometer figures of one island result (flat dict, SI units in the keys)."""
    R, A_I, A_L = _areas(res)
    K_I, K_L, K_IL = float(res.K_I_J), float(res.K_L_J), float(res.K_IL_J)
    nu = cond.filling
    r = itf.coupling_ratio(K_I, K_IL)
    E_C = itf.charging_energy_J(K_I, K_L, K_IL)
    B = cond.field_T
    if B is None and bulk_density_m2 is not None and bulk_density_m2 > 0:
        B = bulk_density_m2 * itf.PHI0 / nu
    T = cond.temperature_K
    L = 2.0 * math.pi * R
    T0 = itf.thermal_scale_K(cond.edge_velocity_m_s, L)
    dA = getattr(res, "dA_I_dV_m2_per_V", None) or cond.dA_dV_m2_per_V
    if dA is None and cond.edge_shift_m_per_V is not None and hasattr(res, "geometry"):
        dA = 2.0 * math.pi * res.geometry.gate_radius_m * abs(cond.edge_shift_m_per_V)
    reg = itf.regime(r)
    out: dict[str, Any] = {
        "electronic_radius_m": R,
        "A_I_m2": A_I,
        "A_L_m2": A_L,
        "K_I_J": K_I,
        "K_L_J": K_L,
        "K_IL_J": K_IL,
        "K_IL_over_K_I": r,
        "charging_energy_J": E_C,
        "E_C_mK": 1e3 * itf.energy_to_kelvin(E_C),
        "filling": nu,
        "field_T": B,
        "temperature_K": T,
        "period_compressible_T": itf.period_compressible_T(A_I),
        "period_incompressible_T": (
            itf.period_incompressible_T(A_I, r, nu, A_L) if A_I - r * A_L > 0 else None
        ),
        "phase_jump_rad": itf.phase_jump_rad(nu, r),
        "regime": reg,
        "stripe_slope_sign": {"AB": "negative", "CD": "positive"}.get(reg, "mixed"),
        "window_T": None,
        "window_thermal_T": None,
        "gap_qp_J": cond.gap_qp_J,
        "dA_I_dV_m2_per_V": dA,
        "period_gate_ab_V": None,
        "period_gate_V": None,
        "edge_velocity_m_per_s": cond.edge_velocity_m_s,
        "edge_velocity_source": cond.edge_velocity_source,
        "path_length_m": L,
        "T0_K": T0,
        "visibility": itf.visibility(T, T0),
    }
    if cond.gap_qp_J is not None and E_C > 0:
        out["window_T"] = itf.window_T(A_L, nu, cond.gap_qp_J, E_C)
        if T > 0:
            out["window_thermal_T"] = itf.window_thermal_T(A_L, nu, cond.gap_qp_J, E_C, T)
        else:
            out["window_thermal_T"] = out["window_T"]
    if dA and B:
        out["period_gate_ab_V"] = itf.period_gate_ab_V(nu, B, dA)
        # the CD form needs the gate-bulk capacitance, which the island model does not give:
        # the gate period is reported where the AB form holds (AB and crossover)
        out["period_gate_V"] = out["period_gate_ab_V"] if reg != "CD" else None
    return out


def island_figures(
    source,
    cond: QHConditions,
    *,
    comm=None,
    keep_result: bool = False,
    **island_options: Any,
) -> dict:
    """Solve the island of ``source`` (stack or column) and return its figures (flat, SI).

    ``island_options`` are those of :func:`qhdesign.pipeline.solve_island` (``radius``,
    ``ring_width``, ``gate_offset``, ``split_gap``, ``screening``, ``surface``, ``far``,
    ``outer_well``, ``refine``, ...). With ``keep_result`` the island result is returned under
    ``"_result"``.
    """
    from qhdesign.island_options import island_inputs
    from qhdesign.pipeline import solve_island

    geometry, settings = island_inputs(**island_options)
    column = source if _is_column(source) else island_column(source)
    res = solve_island(column, geometry, settings, comm=comm)
    density = column.primary.density_m2 if _is_column(column) else None
    out = figures_from_result(res, cond, getattr(res, "bulk_density_m2", None) or density)
    if keep_result:
        out["_result"] = res
    return out


def with_conditions(cond: QHConditions, **changes: Any) -> QHConditions:
    """``dataclasses.replace`` for callers that do not import dataclasses."""
    return replace(cond, **changes)


# ---------------------------------------------------------------------------- options
#: Options of the figures (not of the island solve), with their dimension.
FIGURE_OPTIONS = {
    "temperature": "temperature",
    "edge_velocity": "velocity",
    "field": "field",
    "gate_voltage": "voltage",
}


def _where(name: str, prefix: str) -> dict:
    if prefix == "options.":
        return {"key": f"options.{name}"}
    return {"source": f"option --{name.replace('_', '-')}"}


def _si(value: Any, dimension: str, name: str, prefix: str) -> float:
    from qhdesign.units import parse_quantity

    if isinstance(value, str):
        if dimension == "voltage":
            try:
                return float(value)
            except ValueError:
                pass
        return parse_quantity(value, dimension, **_where(name, prefix))
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(f"expected a quantity with a unit, got {value!r}", **_where(name, prefix))
    return float(value)


def split_island_options(
    options: dict, source_prefix: str = "options."
) -> tuple[QHConditions, dict, float | None]:
    """Split stage options into (conditions, island solve options, gate voltage or None).

    Values are strings with units or SI numbers. ``gap`` is the quasiparticle gap unless
    ``gap_kind = "activation"`` (then halved); the island solve receives the quasiparticle gap.
    """
    opts = dict(options)
    kw: dict[str, Any] = {}
    for name, dim in FIGURE_OPTIONS.items():
        if opts.get(name) is not None:
            kw[name] = _si(opts.pop(name), dim, name, source_prefix)
        else:
            opts.pop(name, None)
    gate_voltage = kw.pop("gate_voltage", None)
    kind = str(opts.pop("gap_kind", "quasiparticle"))
    if opts.get("gap") is not None:
        gap = _si(opts["gap"], "energy", "gap", source_prefix)
        try:
            gap = itf.quasiparticle_gap_J(gap, kind)
        except InputError as exc:
            raise InputError(exc.message, **_where("gap_kind", source_prefix)) from None
        opts["gap"] = f"{gap!r} J"
        kw["gap_qp_J"] = gap
    from qhdesign.island_options import parse_filling

    nu = (
        parse_filling(opts.get("filling"), f"{source_prefix}filling")
        if opts.get("filling") is not None
        else None
    )
    if nu is None:
        nu = DEFAULT_FILLING
        if "gap" in opts:
            opts["filling"] = nu
    cond = QHConditions(
        edge_velocity_source="option" if "edge_velocity" in kw else "default",
        filling=nu,
        gap_qp_J=kw.get("gap_qp_J"),
        temperature_K=kw.get("temperature", DEFAULT_ELECTRON_TEMPERATURE_K),
        edge_velocity_m_s=kw.get("edge_velocity", DEFAULT_EDGE_VELOCITY_M_S),
        field_T=kw.get("field"),
    )
    return cond, opts, gate_voltage


def conditions_from_edge(stack, cond: QHConditions, gate_voltage_V: float, comm=None):
    """``cond`` with the edge shift per volt of the 2D edge stage at the gate voltage (one
    straight-edge solve; dA/dV = 2 pi R_gate |dx/dV| for every radius).

    The edge velocity stays the option's (or the default): the edge stage's E/B at the nu
    contour is not the velocity of a nu = 1/m edge whose bulk is at nu (docs/interferometer.md).
    """
    from qhdesign.pipeline import section_from_stack
    from qhdesign.section import EdgeSettings, solve_edge

    kw = {} if comm is None else {"comm": comm}
    res = solve_edge(section_from_stack(stack), EdgeSettings(gate_voltage_V=gate_voltage_V), **kw)
    return replace(cond, edge_shift_m_per_V=res.edge_shift_m_per_V)


#: Sweep-column code of the regime verdict (a CSV row holds numbers only).
REGIME_INDEX = {"AB": 0, "crossover": 1, "CD": 2}


def figure_columns(fig: dict) -> dict:
    """Figures as sweep columns (display units in the names; NaN where undefined)."""

    def s(key, scale=1.0):
        v = fig.get(key)
        return float("nan") if v is None else float(v) * scale

    return {
        "interferometer.A_I_um2": s("A_I_m2", 1e12),
        "interferometer.A_L_um2": s("A_L_m2", 1e12),
        "interferometer.E_C_mK": s("E_C_mK"),
        "interferometer.field_T": s("field_T"),
        "interferometer.temperature_mK": s("temperature_K", 1e3),
        "interferometer.period_compressible_mT": s("period_compressible_T", 1e3),
        "interferometer.period_incompressible_mT": s("period_incompressible_T", 1e3),
        "interferometer.window_mT": s("window_T", 1e3),
        "interferometer.window_thermal_mT": s("window_thermal_T", 1e3),
        "interferometer.phase_jump_over_2pi": s("phase_jump_rad", 1 / (2 * math.pi)),
        # a sweep row holds numbers only: 0 = AB, 1 = crossover, 2 = CD (docs/interferometer.md)
        "interferometer.regime_index": float(REGIME_INDEX[fig["regime"]]),
        "interferometer.dA_I_dV_um2_per_V": s("dA_I_dV_m2_per_V", 1e12),
        "interferometer.period_gate_mV": s("period_gate_V", 1e3),
        "interferometer.edge_velocity_m_per_s": s("edge_velocity_m_per_s"),
        "interferometer.T0_mK": s("T0_K", 1e3),
        "interferometer.visibility": s("visibility"),
    }
