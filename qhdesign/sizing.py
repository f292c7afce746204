"""Sizing an interferometer island: the radius range that meets a set of targets.

Pure logic: the island model enters as a callable ``evaluate(radius_m) -> figures`` (the dict of
:func:`qhdesign.island_figures.figures_from_result`), so the search does not know which island
model is behind it. The search (docs/interferometer.md, "Sizing"):

1. scan the radius range on a geometric grid (every target's margin at every point);
2. where the worst margin (all targets) changes sign between neighbours and the targets that
   flip there are monotone over the scan, locate the boundary by Brent's method on the worst
   margin, keeping the feasible side, to a relative radius tolerance; otherwise the scan points
   bound it; when no scan point is feasible, the worst margin is maximised between the best
   point's neighbours (a narrow window between two scan points is not missed when the margins
   are monotone);
3. the feasible set is where every margin is >= 0; the widest feasible interval is reported. If
   none, the verdict names the target that fails first: at the radius where the worst margin is
   least bad, the target with that worst margin, and by how much.

Targets are inequalities with units, e.g. ``"K_IL/K_I < 0.1"``, ``"E_C > 10 ueV"``,
``"window > 50 mT"``, ``"visibility > 0.3"``, ``"period_B > 2 mT"``.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from qhdesign.errors import InputError

__all__ = ["QUANTITIES", "SizingResult", "Target", "parse_target", "parse_targets", "size_island"]

#: Target quantities: name -> (figure key, dimension or None for a pure number, display unit,
#: display scale = SI value of one display unit, description).
QUANTITIES: dict[str, tuple[str, str | None, str, float, str]] = {
    "K_IL/K_I": ("K_IL_over_K_I", None, "", 1.0, "bulk-edge coupling ratio"),
    "E_C": ("charging_energy_J", "energy", "ueV", 1.602176634e-25, "charging energy K~/2"),
    "window": ("window_T", "field", "mT", 1e-3, "fixed-filling window (T = 0 edges)"),
    "visibility": ("visibility", None, "", 1.0, "thermal damping factor x/sinh x"),
    "period_B": ("period_compressible_T", "field", "mT", 1e-3, "field period Phi0/A_I"),
    "period_B_inc": (
        "period_incompressible_T",
        "field",
        "mT",
        1e-3,
        "field period (e/e*) Phi0/(A_I - r A_L)",
    ),
    "period_gate": ("period_gate_V", "voltage", "mV", 1e-3, "plunger-gate period (AB form)"),
    "T0": ("T0_K", "temperature", "mK", 1e-3, "thermal damping scale"),
}
_ALIASES = {"r": "K_IL/K_I", "K_IL_over_K_I": "K_IL/K_I", "Ec": "E_C", "E_c": "E_C"}
_TARGET = re.compile(r"^\s*([A-Za-z_][A-Za-z_0-9/]*)\s*(<=|>=|<|>)\s*(.+?)\s*$")


@dataclass(frozen=True)
class Target:
    """One inequality: ``quantity op threshold`` (threshold in SI)."""

    text: str
    quantity: str
    op: str
    threshold: float

    @property
    def key(self) -> str:
        return QUANTITIES[self.quantity][0]

    @property
    def lower(self) -> bool:
        """True for a lower bound (``>``/``>=``)."""
        return self.op.startswith(">")

    def margin(self, value: float | None) -> float:
        """Relative margin: >= 0 when met, (value - threshold)/|threshold| signed by the bound."""
        if value is None or not math.isfinite(value):
            return -math.inf
        scale = abs(self.threshold) or 1.0
        d = (value - self.threshold) / scale
        return d if self.lower else -d

    def display(self, value: float | None) -> str:
        _, _, unit, scale, _ = QUANTITIES[self.quantity]
        if value is None:
            return "n/a"
        return f"{value / scale:.4g}{' ' + unit if unit else ''}"


def parse_target(text: str, key: str = "targets") -> Target:
    """``"E_C > 10 ueV"`` -> :class:`Target` (one-line InputError keyed by ``key`` if bad)."""
    m = _TARGET.match(str(text))
    if not m:
        raise InputError(
            f"cannot read target '{text}'; write QUANTITY < VALUE or QUANTITY > VALUE, e.g. "
            "'E_C > 10 ueV'",
            key=key,
        )
    name, op, rhs = m.groups()
    name = _ALIASES.get(name, name)
    if name not in QUANTITIES:
        raise InputError(
            f"unknown quantity '{name}' in target '{text}'; allowed: {', '.join(QUANTITIES)}",
            key=key,
        )
    _, dim, unit, _, _ = QUANTITIES[name]
    if dim is None:
        try:
            v = float(rhs)
        except ValueError:
            raise InputError(
                f"'{name}' is a pure number; got '{rhs}' in target '{text}'", key=key
            ) from None
    else:
        from qhdesign.units import parse_quantity

        try:
            v = parse_quantity(rhs, dim, source=f"target '{text}'")
        except InputError as exc:
            raise InputError(
                f"target '{text}': {exc.message} (e.g. '{name} {op} 10 {unit}')", key=key
            ) from None
    if not math.isfinite(v):
        raise InputError(f"target '{text}': threshold is not finite", key=key)
    return Target(str(text).strip(), name, op, v)


def parse_targets(texts: Sequence[str], key: str = "targets") -> tuple[Target, ...]:
    """Parse every target and refuse contradictory bounds on one quantity."""
    if not texts:
        raise InputError("give at least one target, e.g. 'K_IL/K_I < 0.1'", key=key)
    targets = tuple(parse_target(t, key) for t in texts)
    for q in {t.quantity for t in targets}:
        lo = max((t.threshold for t in targets if t.quantity == q and t.lower), default=-math.inf)
        hi = min(
            (t.threshold for t in targets if t.quantity == q and not t.lower), default=math.inf
        )
        if lo >= hi:
            raise InputError(
                f"contradictory bounds on {q}: it must exceed {lo:g} and stay below {hi:g} (SI)",
                key=key,
            )
    return targets


@dataclass(frozen=True)
class SizingResult:
    """Result of :func:`size_island` (SI)."""

    targets: tuple[Target, ...]
    feasible: bool
    radius_range_m: tuple[float, float] | None
    intervals_m: tuple[tuple[float, float], ...]
    binding_target: str | None
    binding_margin: float | None
    binding_radius_m: float | None
    binding_at_ends: tuple[str | None, str | None]
    evaluations: dict[float, dict] = field(repr=False)
    search_range_m: tuple[float, float] = (0.0, 0.0)
    method: dict = field(default_factory=dict)

    @property
    def solves(self) -> int:
        return len(self.evaluations)

    def value(self, target: Target, radius_m: float):
        return self.evaluations[radius_m].get(target.key)

    def verdict(self) -> str:
        if self.feasible:
            lo, hi = self.radius_range_m
            return (
                f"feasible: island radius {lo * 1e9:.0f} nm to {hi * 1e9:.0f} nm meets all "
                f"{len(self.targets)} targets ({self.solves} island solves)"
            )
        t = next(t for t in self.targets if t.text == self.binding_target)
        R = self.binding_radius_m
        v = self.evaluations[R].get(t.key)
        return (
            f"infeasible: '{t.text}' fails first; at the best radius {R * 1e9:.0f} nm it is "
            f"{t.display(v)} ({abs(self.binding_margin) * 100:.1f} % short of "
            f"{t.display(t.threshold)}) ({self.solves} island solves)"
        )

    def to_dict(self) -> dict:
        ends = self.radius_range_m or self.search_range_m
        per = []
        for t in self.targets:
            lo_v, hi_v = self.value(t, ends[0]), self.value(t, ends[1])
            per.append(
                {
                    "target": t.text,
                    "quantity": t.quantity,
                    "key": t.key,
                    "op": t.op,
                    "threshold_SI": t.threshold,
                    "value_at_low_end": lo_v,
                    "value_at_high_end": hi_v,
                    "met_at_low_end": t.margin(lo_v) >= 0,
                    "met_at_high_end": t.margin(hi_v) >= 0,
                }
            )
        return {
            "feasible": self.feasible,
            "radius_range_m": list(self.radius_range_m) if self.radius_range_m else None,
            "feasible_intervals_m": [list(i) for i in self.intervals_m],
            "binding_target": self.binding_target,
            "binding_margin_relative": self.binding_margin,
            "binding_radius_m": self.binding_radius_m,
            "binding_at_low_end": self.binding_at_ends[0],
            "binding_at_high_end": self.binding_at_ends[1],
            "ends_reported": "feasible range" if self.radius_range_m else "search range",
            "search_range_m": list(self.search_range_m),
            "island_solves": self.solves,
            "method": self.method,
            "targets": per,
            "verdict": self.verdict(),
        }


def _monotone(vals: Sequence[float]) -> bool:
    d = [b - a for a, b in itertools.pairwise(vals)]
    return all(x > 0 for x in d) or all(x < 0 for x in d)


def _crossing(g: Callable[[float], float], a: float, b: float, ga: float, gb: float, rtol: float):
    """Root of g on [a, b] (g(a), g(b) of opposite sign) to relative width rtol, by Brent's
    method (scipy.optimize.brentq); returns a radius on the feasible (g >= 0) side of it.

    If the root estimate itself is not feasible, steps of rtol towards the feasible end are taken
    until it is (one step when g is smooth).
    """
    from scipy.optimize import brentq

    gs = {a: ga, b: gb}

    def gg(R):
        if R not in gs:
            gs[R] = g(R)
        return gs[R]

    xtol = 0.5 * rtol * min(a, b)
    r = brentq(gg, a, b, xtol=xtol, maxiter=100)
    toward = a if ga >= 0 else b
    step = rtol * r * (1 if toward > r else -1)
    while gg(r) < 0:
        r_next = r + step
        if (step > 0 and r_next >= toward) or (step < 0 and r_next <= toward):
            return toward
        r = r_next
    return r


class _Found(Exception):
    pass


def _narrow_window(margins, grid, worst, rtol) -> list[float]:
    """No scan point is feasible: look for a feasible window between the scan neighbours of the
    best point. With monotone margins the worst margin is unimodal there, so a bounded Brent
    maximisation finds its peak; the search stops at the first feasible radius, whose window
    ends are then located like any other boundary. Returns the radii to add (none if the peak is
    still infeasible)."""
    from scipy.optimize import minimize_scalar

    i = max(range(len(grid)), key=lambda k: worst[k])
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]

    def objective(R):
        w = min(margins(R))
        if w >= 0:
            raise _Found(R)
        return -w

    try:
        minimize_scalar(
            objective, bounds=(a, b), method="bounded", options={"xatol": rtol * a, "maxiter": 30}
        )
    except _Found as hit:
        p = hit.args[0]
        out = [p]
        for lo, hi in ((a, p), (p, b)):
            glo, ghi = min(margins(lo)), min(margins(hi))
            if (glo >= 0) != (ghi >= 0):
                out.append(_crossing(lambda R: min(margins(R)), lo, hi, glo, ghi, rtol))
        return out
    return []


def size_island(
    evaluate: Callable[[float], dict],
    targets: Sequence[Target],
    r_min_m: float,
    r_max_m: float,
    points: int = 5,
    rtol: float = 2e-3,
) -> SizingResult:
    """Radius range meeting every target (see the module docstring).

    Parameters
    ----------
    evaluate
        ``radius_m -> figures`` (keys as :data:`QUANTITIES`); called once per distinct radius.
    targets
        From :func:`parse_targets`.
    r_min_m, r_max_m
        Search range (m), 0 < r_min < r_max.
    points
        Scan points (geometric grid, ends included), >= 3.
    rtol
        Relative radius tolerance of the located crossings.
    """
    if not (0 < r_min_m < r_max_m and math.isfinite(r_max_m)):
        raise InputError(
            f"radius range must satisfy 0 < low < high, got {r_min_m:g} m..{r_max_m:g} m",
            key="radius_range",
        )
    if not 3 <= points <= 200:
        raise InputError(f"points must lie in [3, 200], got {points}", key="points")
    cache: dict[float, dict] = {}

    def fig(R: float) -> dict:
        if R not in cache:
            cache[R] = evaluate(R)
        return cache[R]

    def margins(R: float) -> list[float]:
        f = fig(R)
        return [t.margin(f.get(t.key)) for t in targets]

    grid = [r_min_m * (r_max_m / r_min_m) ** (i / (points - 1)) for i in range(points)]
    grid[0], grid[-1] = r_min_m, r_max_m
    M = [margins(R) for R in grid]
    monotone = {}
    for t in targets:
        vals = [fig(R).get(t.key) for R in grid]
        ok = all(v is not None and math.isfinite(v) for v in vals)
        monotone[t.text] = bool(ok and _monotone(vals))
    # refine where the worst margin changes sign between scan neighbours (a boundary of the
    # feasible set): root search when the targets that flip there are monotone on the scan
    edges: list[float] = []
    worst = [min(m) for m in M]
    for i in range(points - 1):
        a, b = grid[i], grid[i + 1]
        ga, gb = worst[i], worst[i + 1]
        if (ga >= 0) == (gb >= 0) or not (math.isfinite(ga) and math.isfinite(gb)):
            continue
        flips = [t for j, t in enumerate(targets) if (M[i][j] >= 0) != (M[i + 1][j] >= 0)]
        if flips and all(monotone[t.text] for t in flips):
            edges.append(_crossing(lambda R: min(margins(R)), a, b, ga, gb, rtol))
        else:
            edges.append(a if ga >= 0 else b)
    if max(worst) < 0:
        edges += _narrow_window(margins, grid, worst, rtol)
    pts = sorted(set(grid) | set(edges))
    ok = [min(margins(R)) >= 0 for R in pts]
    intervals: list[tuple[float, float]] = []
    start = None
    for R, good in zip(pts, ok, strict=True):
        if good and start is None:
            start = R
        if good:
            end = R
        if not good and start is not None:
            intervals.append((start, end))
            start = None
    if start is not None:
        intervals.append((start, end))
    method = {
        "scan_points": points,
        "scan_radii_m": grid,
        "root_rtol": rtol,
        "monotone_on_scan": monotone,
    }
    if intervals:
        best = max(intervals, key=lambda iv: iv[1] - iv[0])

        def active(R):
            m = margins(R)
            j = min(range(len(targets)), key=lambda k: m[k])
            return targets[j].text

        return SizingResult(
            tuple(targets),
            True,
            best,
            tuple(intervals),
            None,
            None,
            None,
            (active(best[0]), active(best[1])),
            cache,
            (r_min_m, r_max_m),
            method,
        )
    # infeasible: the radius where the worst margin is least bad, and the target there
    Rb = max(pts, key=lambda R: min(margins(R)))
    m = margins(Rb)
    j = min(range(len(targets)), key=lambda k: m[k])
    return SizingResult(
        tuple(targets),
        False,
        None,
        (),
        targets[j].text,
        m[j],
        Rb,
        (None, None),
        cache,
        (r_min_m, r_max_m),
        method,
    )
