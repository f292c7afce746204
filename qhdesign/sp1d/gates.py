"""Gate response with frozen donors: density per well against gate voltage, thresholds, slopes.

The donors (and the charge of an exposed surface) are frozen at the freeze-out state, reached
with the gate at the cool-down bias; the gate voltage is then swept at the solve temperature,
each point warm-started from a linear extrapolation of the two previous potentials.

A well's depletion threshold is the gate voltage where its lowest subband crosses the Fermi
level, found by Brent's method between the two sweep points around it (so it does not depend on
the step); unlike a density criterion this does not depend on the thermal tail. Slopes dn/dV
are least-squares fits inside each segment between thresholds; a segment is named by the wells
that hold electrons in it, so a sweep column means the same regime in every row.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc
from scipy.optimize import brentq

from ..errors import InputError
from ..results import Table
from .analysis import cell_electrons, per_layer, subband_wells
from .options import BandsOptions
from .solve import METAL_GATE_NOTE, _check_temperature, check_gate_voltage, freeze_out, solve_at

__all__ = ["GateResult", "gate_response", "geometric_slope"]

_CM2 = 1e4


@dataclass(frozen=True)
class GateResult:
    """A gate-voltage sweep with frozen donor charge.

    Arrays have shape (W, M) for W wells (top to bottom) and M voltages.
    """

    stack_name: str
    source: str
    temperature_K: float
    cool_bias_V: float
    voltages_V: np.ndarray
    well_names: tuple[str, ...]
    well_roles: tuple[str, ...]
    density_m2: np.ndarray
    lowest_subband_J: np.ndarray
    doping_names: tuple[str, ...]
    doping_electrons_m2: np.ndarray
    iterations: np.ndarray
    thresholds_V: dict
    depletion_order: tuple[str, ...]
    segments: tuple[dict, ...]
    window_V: float
    geometric_slope_m2_V: dict
    forward_limit_V: float
    warnings: tuple[str, ...] = field(default=())

    def density(self, well: str) -> np.ndarray:
        """Sheet density of ``well`` at every voltage (m^-2)."""
        return self.density_m2[self.well_names.index(well)]

    def to_dict(self) -> dict:
        """JSON-ready dict, SI with units in the keys."""
        return {
            "stack": self.stack_name,
            "source": self.source,
            "converged": True,
            "temperature_K": self.temperature_K,
            "cool_bias_V": self.cool_bias_V,
            "gate_voltage_V": self.voltages_V.tolist(),
            "iterations": self.iterations.astype(int).tolist(),
            "wells": {
                name: {
                    "role": role,
                    "sheet_density_m2": self.density_m2[i].tolist(),
                    "lowest_subband_eV": (self.lowest_subband_J[i] / sc.e).tolist(),
                    "geometric_slope_m2_V": self.geometric_slope_m2_V.get(name),
                }
                for i, (name, role) in enumerate(zip(self.well_names, self.well_roles, strict=True))
            },
            "doping_layers": {
                name: {"electrons_m2": self.doping_electrons_m2[i].tolist()}
                for i, name in enumerate(self.doping_names)
            },
            "thresholds_V": {k: _num(v) for k, v in self.thresholds_V.items()},
            "depletion_order": list(self.depletion_order),
            "segments": [
                {
                    "from_V": s["from_V"],
                    "to_V": s["to_V"],
                    "filled_wells": list(s.get("filled", ())),
                    "parallel_conduction": bool(s.get("parallel", False)),
                    "slope_m2_V": {k: _num(v) for k, v in s["slope_m2_V"].items()},
                }
                for s in self.segments
            ],
            "window_V": _num(self.window_V),
            "forward_limit_V": self.forward_limit_V,
            "warnings": list(self.warnings),
        }

    def summary(self) -> dict[str, float]:
        """Flat CSV-ready numbers (thresholds, window, zero-bias-nearest densities)."""
        out: dict[str, float] = {"temperature_K": self.temperature_K}
        for name, v in self.thresholds_V.items():
            role = self.well_roles[self.well_names.index(name)]
            out[f"threshold_{name}_V"] = v
            if role == "primary":
                out["threshold_primary_V"] = v
        out["window_V"] = self.window_V
        i0 = int(np.argmin(np.abs(self.voltages_V)))
        for i, name in enumerate(self.well_names):
            out[f"{name}_density_at_{self.voltages_V[i0]:+.3f}V_cm^-2"] = (
                self.density_m2[i, i0] / _CM2
            )
        # one column per (well, regime): the regime is the set of wells holding electrons, so
        # a column means the same thing in every row of a sweep, whichever thresholds fall
        # inside that row's voltage range
        for seg in self.segments:
            regime = "+".join(seg.get("filled", ())) or "none"
            extra = "_with_parallel" if seg.get("parallel") else ""
            for name, s in seg["slope_m2_V"].items():
                out[f"{name}_slope_while_{regime}_filled{extra}_cm^-2_per_V"] = s / _CM2
        return out

    def table(self) -> Table:
        """Density per well and per doping layer against gate voltage, one row per voltage."""
        n_w, n_d = len(self.well_names), len(self.doping_names)
        cols = ["gate_V"] + [f"{n}_density_cm^-2" for n in self.well_names]
        cols += [f"{n}_E1_minus_EF_meV" for n in self.well_names]
        cols += [f"{n}_electrons_cm^-2" for n in self.doping_names]
        rows = np.column_stack(
            [self.voltages_V]
            + [self.density_m2[i] / _CM2 for i in range(n_w)]
            + [self.lowest_subband_J[i] / sc.e * 1e3 for i in range(n_w)]
            + [self.doping_electrons_m2[i] / _CM2 for i in range(n_d)]
        )
        formats = (".6g",) + (".6e",) * n_w + (".6g",) * n_w + (".6e",) * n_d
        return Table(tuple(cols), rows, formats)

    def to_csv(self) -> str:
        """:meth:`table` as CSV text."""
        return self.table().to_csv()


def _num(x):
    return None if x is None or (isinstance(x, float) and math.isnan(x)) else x


def geometric_slope(stack, centroid_m: float, dos_J_m2: float) -> float:
    """dn/dV (m^-2/V) of a sheet at depth ``centroid_m`` under the gate, with its DOS.

    1/C = sum_layers t_i/(eps0 eps_i) (gate dielectric included, up to the centroid)
    + 1/(e^2 D) (quantum capacitance; S. Luryi, Appl. Phys. Lett. 52, 501 (1988)); dn/dV = C/e.
    """
    inv = 0.0
    surf = stack.surface
    if surf.kind == "gate" and surf.dielectric_thickness > 0:
        inv += surf.dielectric_thickness / (sc.epsilon_0 * surf.dielectric_permittivity)
    for p in stack.profile():
        top, bot = p.z_top, min(p.z_bottom, centroid_m)
        if bot > top:
            inv += (bot - top) / (sc.epsilon_0 * p.permittivity)
    inv += 1.0 / (sc.e**2 * dos_J_m2)
    return 1.0 / inv / sc.e


def _sweep_voltages(v_from: float, v_to: float, step: float) -> np.ndarray:
    if not (math.isfinite(v_from) and math.isfinite(v_to) and math.isfinite(step)) or step == 0:
        raise InputError("--from, --to and --step must be finite, step non-zero", key="--step")
    if (v_to - v_from) * step < 0:
        step = -step
    n = math.floor((v_to - v_from) / step + 1e-9) + 1
    if n > 100000:
        raise InputError(f"{n} sweep points; allowed at most 100000", key="--step")
    return v_from + step * np.arange(n)


def gate_response(
    stack,
    v_from: float,
    v_to: float,
    step: float,
    *,
    cool_bias: float | None = None,
    temperature: float | None = None,
    options: BandsOptions | None = None,
    frozen=None,
) -> GateResult:
    """Sweep the gate voltage with the donor charge frozen at the cool-down state.

    Parameters
    ----------
    stack
        Stack; for an exposed surface a metal gate with the surface barrier is laid on it.
    v_from, v_to, step
        Sweep from ``v_from`` to ``v_to`` (inclusive when it falls on the step grid), V.
    cool_bias
        Gate bias while the donors freeze (V); default ``options.cool_bias_V`` (0 V).
    temperature
        Solve temperature (K); default ``stack.temperature``.
    options
        :class:`BandsOptions` (tolerances, forward-bias limit).
    frozen
        Reuse a freeze-out state from :func:`~qhdesign.sp1d.solve.freeze_out`.

    Returns
    -------
    GateResult

    Raises
    ------
    InputError
        Exposed surface, voltages past the barrier, bad temperature.
    ConvergenceError
        Any sweep point fails to converge (no partial result is returned).

    Examples
    --------
    >>> from qhdesign.stack import load_stack
    >>> res = gate_response(load_stack("stacks/ql2409_doped_well.toml"), 0.0, -0.2, 0.1)
    >>> len(res.voltages_V), res.well_names
    (3, ('well',))
    >>> bool(res.density("well")[-1] < res.density("well")[0])  # a negative gate depletes
    True
    """
    opts = options or BandsOptions()
    gated = stack.surface.kind == "exposed"
    t = _check_temperature(stack.temperature if temperature is None else temperature, "temperature")
    volts = _sweep_voltages(float(v_from), float(v_to), float(step))
    for v in (volts.min(), volts.max()):
        check_gate_voltage(stack, float(v), "--from/--to")
    if frozen is None:
        frozen = freeze_out(stack, opts, cool_bias=cool_bias)
    layout = frozen.layout
    wells = layout.well_layers
    names = tuple(layout.layer_names[i] for i in wells)
    roles = tuple(stack.profile()[i].well for i in wells)
    dnames = tuple(layout.layer_names[i] for i in layout.doped_layers)
    m = len(volts)
    dens = np.zeros((len(wells), m))
    e1 = np.full((len(wells), m), np.nan)
    dop = np.zeros((len(dnames), m))
    iters = np.zeros(m, dtype=int)
    prev: list[np.ndarray] = []
    last_psi = None  # previous point's subbands start the next eigen-solve
    count = 0
    # every change of a well's state (filled <-> empty) between neighbouring points, with the
    # potentials and subbands at both ends: the thresholds are refined inside these brackets
    brackets: list[list[tuple]] = [[] for _ in wells]
    last = None
    for j, v in enumerate(volts):
        guess = None
        if len(prev) >= 2:
            guess = 2 * prev[-1] - prev[-2]
        elif prev:
            guess = prev[-1]
        st = solve_at(
            stack,
            frozen,
            float(v),
            t,
            opts,
            phi_guess=guess,
            count_hint=count,
            gated=gated,
            warm_psi=last_psi,
        )
        count = len(st.energies_J)
        last_psi = st.psi
        prev = [*prev[-1:], st.phi_V]
        iters[j] = st.iterations
        e_layer = per_layer(layout, cell_electrons(layout, st))
        dens[:, j] = e_layer[list(wells)]
        dop[:, j] = e_layer[list(layout.doped_layers)]
        weights = subband_wells(layout, st.psi)[:, list(wells)]
        owner = np.argmax(weights, axis=1)
        for k in range(len(wells)):
            mine = np.nonzero(owner == k)[0]
            if len(mine):
                e1[k, j] = st.energies_J[mine[0]]
        if last is not None:
            for k in range(len(wells)):
                if (last[0][k] < 0.0) != (e1[k, j] < 0.0):
                    brackets[k].append((last[1], float(v), last[2], st.phi_V, st.psi))
        last = (e1[:, j].copy(), float(v), st.phi_V)

    def lowest_in_well(k: int, v: float, bracket) -> float:
        """E_1 - E_F (J) of well k at gate voltage v, warm-started inside a bracket; a well
        whose subband lies above every computed one returns the computed ceiling (> 0)."""
        va, vb, pa, pb, psi = bracket
        f = (v - va) / (vb - va)
        st = solve_at(
            stack,
            frozen,
            float(v),
            t,
            opts,
            phi_guess=(1.0 - f) * pa + f * pb,
            count_hint=count,
            gated=gated,
            warm_psi=psi,
        )
        weights = subband_wells(layout, st.psi)[:, list(wells)]
        mine = np.nonzero(np.argmax(weights, axis=1) == k)[0]
        return float(st.energies_J[mine[0]]) if len(mine) else float(st.energies_J[-1])

    thresholds = {
        name: _threshold(
            volts, e1[k], dens[k], brackets[k], lambda v, b, k=k: lowest_in_well(k, v, b)
        )
        for k, name in enumerate(names)
    }
    order = tuple(
        sorted(
            (n for n in names if not math.isnan(thresholds[n])),
            key=lambda n: -thresholds[n],
        )
    )
    # parallel conduction: the lowest voltage above which a doped layer holds more electrons
    # than the flag threshold at every point (classical 3D electrons; docs/models.md)
    par_any = (dop > opts.parallel_threshold_m2).any(axis=0) if len(dnames) else np.zeros(m, bool)
    onset = math.nan
    if par_any.any():
        order_v = np.argsort(volts)
        flags_sorted = par_any[order_v]
        # from the top of the sweep down, the first voltage where it stops
        j = len(order_v) - 1
        while j >= 0 and flags_sorted[j]:
            j -= 1
        if j < len(order_v) - 1:
            vs = volts[order_v]
            onset = float(0.5 * (vs[j] + vs[j + 1])) if j >= 0 else -math.inf
    segments = _segments(volts, dens, names, thresholds, e1, parallel_onset=onset)
    prim = names[roles.index("primary")]
    ip = names.index(prim)
    upper = [n for k, n in enumerate(names[:ip]) if roles[k] == "screening"]
    window = thresholds[upper[-1]] - thresholds[prim] if upper else math.nan
    # geometric slopes from the zero-bias (nearest point) centroids
    i0 = int(np.argmin(np.abs(volts)))
    st0 = solve_at(stack, frozen, float(volts[i0]), t, opts, count_hint=count, gated=gated)
    geo = {}
    n_cell = cell_electrons(layout, st0)
    for k, li in enumerate(wells):
        mask = layout.device.layer_of_cell == li
        p = stack.profile()[li]
        if n_cell[mask].sum() > 1e6:
            cen = float(np.sum(layout.device.centres[mask] * n_cell[mask]) / n_cell[mask].sum())
        else:
            cen = 0.5 * (p.z_top + p.z_bottom)
        geo[names[k]] = geometric_slope(stack, cen, p.mass * sc.m_e / (np.pi * sc.hbar**2))
    warn = []
    if gated:
        warn.append(METAL_GATE_NOTE)
    if par_any.any():
        layers_par = [
            dnames[i] for i in range(len(dnames)) if (dop[i] > opts.parallel_threshold_m2).any()
        ]
        if math.isnan(onset):
            where = "at some voltages of the sweep"
        elif math.isinf(onset):
            where = "throughout the sweep"
        else:
            where = f"above {onset:+.3f} V"
        warn.append(
            f"parallel conduction in {', '.join(layers_par)} {where} (more than "
            f"{opts.parallel_threshold_m2 / _CM2:.0e} cm^-2): the segments there are fitted "
            "separately and marked parallel"
        )
    if volts.max() > opts.forward_limit_V:
        warn.append(
            f"sweep reaches {volts.max():+.3f} V, above the forward-bias limit "
            f"{opts.forward_limit_V:+.3f} V: expect gate leakage"
        )
    return GateResult(
        stack_name=stack.name,
        source=str(stack.source),
        temperature_K=t,
        cool_bias_V=frozen.cool_bias_V,
        voltages_V=volts,
        well_names=names,
        well_roles=roles,
        density_m2=dens,
        lowest_subband_J=e1,
        doping_names=dnames,
        doping_electrons_m2=dop,
        iterations=iters,
        thresholds_V=thresholds,
        depletion_order=order,
        segments=segments,
        window_V=float(window),
        geometric_slope_m2_V=geo,
        forward_limit_V=opts.forward_limit_V,
        warnings=tuple(warn),
    )


def _threshold(volts, e1, dens, brackets=(), e1_at=None, xtol_V: float = 1e-6) -> float:
    """Voltage where the well's lowest subband crosses E_F (NaN if not inside the sweep).

    The crossing at the highest voltage where the well empties (filled above, empty below) is
    taken. With ``brackets`` (the states at the two sweep points around each change) and
    ``e1_at(v, bracket)`` it is found by Brent's method on E_1(V) - E_F to ``xtol_V``: the
    subband energy has a kink there (pinned near E_F by the well's own quantum capacitance
    while filled, moving with the gate once empty), so interpolating between sweep points would
    pull the threshold towards the filled side by up to a third of a step. Without them the
    linear interpolation between the two points is returned.
    """
    order = np.argsort(volts)
    v = volts[order]
    e = np.where(np.isnan(e1[order]), np.inf, e1[order])
    n = dens[order]
    filled = e < 0.0
    # scan from high voltage down: the first filled -> empty transition
    for j in range(len(v) - 1, 0, -1):
        if filled[j] and not filled[j - 1]:
            lo, hi = float(v[j - 1]), float(v[j])
            if e1_at is not None:
                for b in brackets:
                    if {b[0], b[1]} == {lo, hi}:
                        # the two ends are known (an uncomputed empty-side subband is replaced
                        # by the computed ceiling, which is above E_F as well)
                        ends = {hi: float(e[j])}
                        ends[lo] = float(e[j - 1]) if np.isfinite(e[j - 1]) else e1_at(lo, b)

                        def g(x, b=b, ends=ends):
                            return ends[x] if x in ends else e1_at(x, b)

                        return float(brentq(g, lo, hi, xtol=xtol_V))
            if np.isfinite(e[j - 1]):
                return float(v[j] + (v[j - 1] - v[j]) * e[j] / (e[j] - e[j - 1]))
            # the empty side's subband was not computed: extrapolate the density linearly
            if j + 1 < len(v) and n[j + 1] > n[j]:
                slope = (n[j + 1] - n[j]) / (v[j + 1] - v[j])
                return float(v[j] - n[j] / slope)
            return float(v[j])
    return math.nan


def _segments(volts, dens, names, thresholds, e1=None, parallel_onset=math.nan) -> tuple[dict, ...]:
    """Least-squares dn/dV of every well inside each segment between thresholds, with the wells
    that hold electrons there.

    A well holds electrons in a segment when the segment lies above its threshold (or, with no
    threshold in the sweep, when its lowest subband is below E_F at the top of the sweep). The
    onset of parallel conduction (``parallel_onset``, V) also cuts the segments, so that no fit
    straddles it; segments above it are marked ``parallel``. Points within 0.75 step of a cut
    are left out of the fits (the density bends there) unless fewer than two would remain.
    """
    lo, hi = float(volts.min()), float(volts.max())
    step = float(np.min(np.abs(np.diff(volts)))) if len(volts) > 1 else 0.0
    cuts = sorted(t for t in thresholds.values() if not math.isnan(t) and lo < t < hi)
    if lo < parallel_onset < hi:
        cuts = sorted({*cuts, parallel_onset})
    edges = [lo, *cuts, hi]
    top = int(np.argmax(volts))
    out = []
    for a, b in itertools.pairwise(edges):
        within = (volts >= a) & (volts <= b) if a == lo else (volts > a) & (volts <= b)
        if b != hi:
            within &= volts < b
        clear = within & ((volts > a + 0.75 * step) | (a == lo))
        clear &= (volts < b - 0.75 * step) | (b == hi)
        use = clear if clear.sum() >= 2 else within
        slopes = {}
        for k, name in enumerate(names):
            if use.sum() >= 2:
                slopes[name] = float(np.polyfit(volts[use], dens[k, use], 1)[0])
            else:
                slopes[name] = math.nan
        mid = 0.5 * (a + b)
        filled = []
        for k, name in enumerate(names):
            t = thresholds.get(name, math.nan)
            if math.isnan(t):
                holds = e1 is not None and bool(np.nan_to_num(e1[k, top], nan=np.inf) < 0.0)
            else:
                holds = mid > t
            if holds:
                filled.append(name)
        seg = {"from_V": a, "to_V": b, "filled": tuple(filled), "slope_m2_V": slopes}
        seg["parallel"] = bool(mid > parallel_onset) if not math.isnan(parallel_onset) else False
        out.append(seg)
    return tuple(out)
