"""How a gate's perturbation dies away far from the edge: the decay modes of a layered section.

Far from the gate edge the perturbation of the potential is small, so the Thomas–Fermi sheets
respond linearly: a sheet with density of states D takes the charge -e^2 D phi. Laplace's equation
in the layers then has separable solutions phi = f(z) exp(-k x) with f'' = -k^2 f in each layer
(f and eps f' continuous across layer boundaries), a jump eps [f'(z_s+) - f'(z_s-)] = e^2 D f(z_s)
at each filled sheet, and the boundary conditions of the exposed surface between the gates (frozen
surface charge: f'(0) = 0; a pinned Fermi level: f(0) = 0) and of the bottom (zero field:
f' = 0; a contact: f = 0). Only discrete k are allowed; the smallest k, the slowest mode, sets the
far tail of every sheet's density, exp(-x/lambda) with lambda = 1/k (derivation and the closed
forms in docs/derivations.md, "Edge tails").

Closed forms for the region above the top sheet (depth d), when the sheets below screen well:
frozen surface lambda = 2 (d + eps/(e^2 D))/pi; pinned (metal) surface
lambda = (d + eps/(e^2 D))/pi.
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc
from scipy.optimize import brentq

__all__ = ["fit_tail_length", "tail_modes", "top_mode_length"]

#: Window of the tail fit: where |n - n_bulk| lies between these fractions of the edge step.
TAIL_WINDOW = (1e-4, 1e-2)


def top_mode_length(depth_m: float, eps_r: float, dos_J_m2: float, surface: str) -> float:
    """Decay length (m) of the mode above the top sheet: 2(d + eps/C_q)/pi (frozen) or
    (d + eps/C_q)/pi (pinned), C_q = e^2 D; the first-order screening-length correction of
    tan(k d) = C_q/(eps k) resp. -eps k/C_q (docs/derivations.md, "Edge tails")."""
    length = depth_m + sc.epsilon_0 * eps_r / (sc.e**2 * dos_J_m2)
    if surface == "frozen":
        return 2.0 * length / np.pi
    if surface == "pinned":
        return length / np.pi
    raise ValueError(f"surface must be 'frozen' or 'pinned', got {surface!r}")


def _residual(k: float, layers, eps, sheets, top: str, bottom: str) -> float:
    """Bottom boundary residual of the mode with wavenumber k (1/m), started at the surface."""
    f, d = (1.0, 0.0) if top == "frozen" else (0.0, 1.0)
    # sheets sorted by depth; walk the layers, stopping at each sheet inside them
    js = 0
    for i in range(len(eps)):
        z0, z1, e = layers[i], layers[i + 1], eps[i] * sc.epsilon_0
        stops = []
        while js < len(sheets) and sheets[js][0] <= z1:
            stops.append(sheets[js])
            js += 1
        z = z0
        for zs, cq in [*stops, (z1, None)]:
            t = k * (zs - z)
            c, s = np.cos(t), np.sin(t)
            f, d = f * c + d / (e * k) * s, -e * k * f * s + d * c
            if cq is not None:
                d = d + cq * f
            z = zs
        # rescale (only the sign and the zeros matter)
        scale = max(abs(f), abs(d) / (e * k), 1e-300)
        f, d = f / scale, d / scale
    return f if bottom == "gate" else d / (eps[-1] * sc.epsilon_0 * k)


def tail_modes(section, surface: str, count: int = 2) -> tuple[float, ...]:
    """Decay lengths (m) of the ``count`` slowest modes of ``section``, longest first.

    Parameters
    ----------
    section
        :class:`~qhdesign.tf2d.model.CrossSection` (layers, permittivities, sheets, bottom).
    surface
        ``"frozen"`` or ``"pinned"``: the exposed surface beside the gate.

    Notes
    -----
    Only sheets holding electrons (density > 0) screen. The modes are the zeros in k of the bottom
    residual of a transfer through the layers; it is continuous in k, so a scan on a fine
    logarithmic grid brackets them and Brent's method refines each.
    """
    layers = np.asarray(section.layer_z_m, dtype=float)
    eps = np.asarray(section.layer_permittivity, dtype=float)
    from .model import sheet_screening

    sheets = sorted(sheet_screening(s) for s in section.sheets if s.density_m2 > 0)
    total = float(layers[-1] - layers[0])
    # ratio 1.0045 between neighbours: far finer than the spacing of the slow modes
    ks = np.geomspace(0.05 / total, 400.0 / total, 2000)
    r = np.array([_residual(k, layers, eps, sheets, surface, section.bottom) for k in ks])
    roots = []
    for i in np.nonzero(np.sign(r[:-1]) * np.sign(r[1:]) < 0)[0]:
        k = brentq(_residual, ks[i], ks[i + 1], args=(layers, eps, sheets, surface, section.bottom))
        roots.append(k)
        if len(roots) == count:
            break
    return tuple(1.0 / k for k in roots)


def fit_tail_length(
    x: np.ndarray, n: np.ndarray, n_bulk: float, step: float, window=TAIL_WINDOW
) -> float | None:
    """e-folding length (m) of |n - n_bulk| where it lies between ``window`` fractions of
    ``step`` (the far tail beyond the 10-90 % rise), by a least-squares fit of its logarithm;
    None when fewer than 5 nodes fall in the window or the tail does not decay."""
    if not step > 0:
        return None
    dev = np.abs(np.asarray(n) - n_bulk) / step
    lo, hi = window
    # only the monotone far tail: from the bulk end inward to the first point above the window
    above = np.nonzero(dev >= hi)[0]
    start = int(above[-1]) + 1 if above.size else 0
    sel = np.zeros(len(x), dtype=bool)
    sel[start:] = True
    sel &= (dev > lo) & (dev < hi)
    if np.count_nonzero(sel) < 5:
        return None
    slope = np.polyfit(np.asarray(x)[sel], np.log(dev[sel]), 1)[0]
    return float(-1.0 / slope) if slope < 0 else None
