"""Reading a sheet-density profile n(x): electronic edge, healing length, filling, strips.

Pure numpy on sorted line profiles, so every definition is testable without a solve. The bulk
(ungated) side is at large x; scans start there and move toward the gate.

Definitions (docs/models.md, "2D Thomas–Fermi")
-----------------------------------------------
* Electronic edge: the first point, scanning from the bulk toward the gate, where n falls to
  ``EDGE_FRACTION`` (1 %) of the bulk density; linear interpolation between nodes.
* Depletion width: electronic edge minus the lithographic gate edge (positive when the electrons
  stop short of the gate).
* Healing length: distance between the points where n - n_gate reaches 10 % and 90 % of
  n_bulk - n_gate, with n_gate the density deep under the gate (0 for a cut well); for an
  accumulating gate (n_gate > n_bulk) the same fractions of the fall.
* Cut under the gate: the density deep under the gate (at the domain end) is below
  ``EDGE_FRACTION`` of the bulk.
* Local filling nu(x) = n(x) h / (e B).
* Incompressible strip at filling nu_k (Chklovskii, Shklovskii, Glazman, Phys. Rev. B 46, 4026
  (1992)): centred where nu(x) = nu_k, width a_k = sqrt(16 eps Delta / (pi e^2 dn/dx)) (SI; our
  derivation from the mixed boundary problem of a strip in a metallic sheet, which matches the
  paper's Gaussian-unit a_k^2 = 4 kappa Delta / (pi^2 e^2 dn/dx)), with the average field in the
  strip Delta / (e a_k).
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

__all__ = [
    "EDGE_FRACTION",
    "crossing_from_bulk",
    "healing_length",
    "strip_width",
]

#: Fraction of the bulk density that defines the electronic edge and a cut well.
EDGE_FRACTION = 0.01


def crossing_from_bulk(x: np.ndarray, y: np.ndarray, level: float) -> float | None:
    """First x, scanning from the largest x down, where y falls below ``level``.

    Parameters
    ----------
    x, y
        Sorted positions and values, shape (N,). ``y[-1]`` is the bulk value.

    Returns
    -------
    float or None
        Linearly interpolated crossing, or None if y never falls below ``level``.
    """
    below = np.nonzero(y < level)[0]
    if below.size == 0:
        return None
    i = int(below[-1])
    if i == x.size - 1:
        return float(x[-1])
    y0, y1 = y[i], y[i + 1]
    t = (level - y0) / (y1 - y0) if y1 != y0 else 0.0
    return float(x[i] + t * (x[i + 1] - x[i]))


def healing_length(x: np.ndarray, n: np.ndarray, n_gate: float, n_bulk: float) -> float | None:
    """x(90 %) - x(10 %) of the rise from ``n_gate`` to ``n_bulk`` (m); None if undefined."""
    step = n_bulk - n_gate
    if step <= 0:
        return None
    x10 = crossing_from_bulk(x, n, n_gate + 0.1 * step)
    x90 = crossing_from_bulk(x, n, n_gate + 0.9 * step)
    if x10 is None or x90 is None:
        return None
    return x90 - x10


def local_filling(n_m2: np.ndarray, field_T: float) -> np.ndarray:
    """nu = n h / (e B)."""
    return np.asarray(n_m2) * sc.h / (sc.e * field_T)


def strip_width(eps_r: float, gap_J: float, dn_dx_m3: float) -> float:
    """CSG incompressible-strip width a = sqrt(16 eps Delta / (pi e^2 dn/dx)) in m."""
    return float(np.sqrt(16.0 * sc.epsilon_0 * eps_r * gap_J / (np.pi * sc.e**2 * dn_dx_m3)))


def interp_at(x: np.ndarray, y: np.ndarray, x0: float) -> float:
    """Linear interpolation of y at x0."""
    return float(np.interp(x0, x, y))
