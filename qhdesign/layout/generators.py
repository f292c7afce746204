"""Parametric gate sets: an interferometer island bounded by two split-gate constrictions.

Geometry (all lengths in m, the island centred on the origin, transport along x)::

        y
        ^        +---------+ plunger +---------+
        |        |  upper  |  (p)    |  upper  |      upper wall, split by 1 plunger
        |  ------+  wall   +---------+  wall   +------
        |  gap w        island (circle R or rectangle a x b)       gap w
        |  ------+  lower wall (or split by a 2nd plunger)   +------
        +-----------------------------------------------------------> x

The gates fill the band between the island outline and an outer rectangle that lies ``wall``
beyond the island on every side; the band is cut along y = +-w/2 into an upper and a lower gate,
so each end of the island opens into a channel of width w and length ``wall``: the two
constrictions. A plunger is the part of the upper (and, with two, the lower) band with
|x| < p/2, separated from the wall pieces by ``spacing``. Arcs are polygons whose chords deviate
from the circle by at most ``sagitta``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["GeneratedGate", "IslandSpec", "island_gates"]


@dataclass(frozen=True)
class IslandSpec:
    """Parameters of the island generator (SI units).

    Attributes
    ----------
    name
        Prefix of the generated gate and constriction names.
    shape
        ``"circle"`` (radius ``radius_m``) or ``"rectangle"`` (``width_m`` x ``height_m``).
    gap_m
        Constriction gap w (m).
    wall_m
        Width of the gate band around the island, which is also the constriction length (m).
    spacing_m
        Gap between a plunger and the neighbouring wall pieces (m).
    plunger_width_m
        Extent of a plunger along x (m).
    plungers
        1 (upper) or 2 (upper and lower).
    wall_voltage_V, plunger_voltage_V
        Gate voltages (V).
    """

    name: str
    shape: str
    gap_m: float
    wall_m: float
    spacing_m: float
    plunger_width_m: float
    plungers: int
    wall_voltage_V: float
    plunger_voltage_V: float
    radius_m: float = 0.0
    width_m: float = 0.0
    height_m: float = 0.0

    @property
    def half_extent_m(self) -> tuple[float, float]:
        """Half width and half height of the island's bounding box (m)."""
        if self.shape == "circle":
            return self.radius_m, self.radius_m
        return 0.5 * self.width_m, 0.5 * self.height_m

    @property
    def flat_half_width_m(self) -> float:
        """Half-length of the island outline above y = w/2 along x (where a plunger can sit)."""
        a, _ = self.half_extent_m
        if self.shape == "circle":
            return math.sqrt(max(self.radius_m**2 - 0.25 * self.gap_m**2, 0.0))
        return a


@dataclass(frozen=True)
class GeneratedGate:
    """A generated gate: name, role (``"wall"`` or ``"plunger"``), vertices (N, 2) in m, volts."""

    name: str
    role: str
    vertices_m: np.ndarray
    voltage_V: float


def _upper_outline(spec: IslandSpec, sagitta_m: float) -> np.ndarray:
    """Lower boundary of the upper band, left to right: points (x, y) with x non-decreasing."""
    a, b = spec.half_extent_m
    h = 0.5 * spec.gap_m
    xo = a + spec.wall_m
    if spec.shape == "circle":
        r = spec.radius_m
        xk = math.sqrt(r * r - h * h)
        th0 = math.asin(h / r)  # angle where the arc meets y = w/2
        dth = 2.0 * math.acos(max(1.0 - sagitta_m / r, -1.0))
        n = max(8, math.ceil((math.pi - 2 * th0) / dth))
        th = np.linspace(math.pi - th0, th0, n + 1)
        arc = np.column_stack([r * np.cos(th), r * np.sin(th)])
        arc[0] = (-xk, h)
        arc[-1] = (xk, h)
        return np.vstack([[(-xo, h)], arc, [(xo, h)]])
    return np.array([(-xo, h), (-a, h), (-a, b), (a, b), (a, h), (xo, h)])


def _clip(outline: np.ndarray, x0: float, x1: float) -> np.ndarray:
    """Part of an x-monotone polyline with x0 <= x <= x1 (interpolated ends)."""
    pts = []
    xs = outline[:, 0]
    for x in (x0,):
        pts.append((x, float(np.interp(x, xs, outline[:, 1]))))
    for p in outline:
        if x0 < p[0] < x1:
            pts.append((float(p[0]), float(p[1])))
    pts.append((x1, float(np.interp(x1, xs, outline[:, 1]))))
    return np.array(pts)


def _band_piece(outline: np.ndarray, x0: float, x1: float, y_top: float) -> np.ndarray:
    """Counter-clockwise polygon between the outline and y = y_top for x0 <= x <= x1."""
    low = _clip(outline, x0, x1)
    return np.vstack([low, [(x1, y_top), (x0, y_top)]])


def island_gates(spec: IslandSpec, sagitta_m: float) -> list[GeneratedGate]:
    """The gate polygons of an island generator (see the module docstring for the geometry).

    Parameters
    ----------
    spec
        The generator's parameters (validated by the layout loader).
    sagitta_m
        Largest distance between an arc and its chords (m).

    Returns
    -------
    list of GeneratedGate
        Upper wall piece(s), upper plunger, lower wall piece(s), lower plunger if two plungers;
        every polygon counter-clockwise.
    """
    a, b = spec.half_extent_m
    xo = a + spec.wall_m
    y_top = b + spec.wall_m
    out = _upper_outline(spec, sagitta_m)
    gates: list[GeneratedGate] = []
    half_p = 0.5 * spec.plunger_width_m
    cut = half_p + spec.spacing_m
    for side, has_plunger in (("upper", True), ("lower", spec.plungers == 2)):
        pieces: list[tuple[str, str, np.ndarray, float]] = []
        if has_plunger:
            pieces.append(
                (f"{spec.name}_{side}_left", "wall", _band_piece(out, -xo, -cut, y_top), 0.0)
            )
            pieces.append(
                (
                    f"{spec.name}_plunger_{side}",
                    "plunger",
                    _band_piece(out, -half_p, half_p, y_top),
                    1.0,
                )
            )
            pieces.append(
                (f"{spec.name}_{side}_right", "wall", _band_piece(out, cut, xo, y_top), 0.0)
            )
        else:
            pieces.append((f"{spec.name}_{side}", "wall", _band_piece(out, -xo, xo, y_top), 0.0))
        for name, role, poly, _ in pieces:
            if side == "lower":
                poly = poly[::-1] * np.array([1.0, -1.0])  # mirror, keep counter-clockwise
            volt = spec.plunger_voltage_V if role == "plunger" else spec.wall_voltage_V
            gates.append(GeneratedGate(name=name, role=role, vertices_m=poly, voltage_V=volt))
    return gates
