"""Reading a sheet-density profile n(x): electronic edge, 10-90 % rise, filling, strips.

Pure numpy on sorted line profiles, so every definition is testable without a solve. The bulk
(ungated) side is at large x; scans start there and move toward the gate.

Definitions (docs/models.md, "2D Thomas–Fermi")
-----------------------------------------------
* Electronic edge: the first point, scanning from the bulk toward the gate, where n falls to
  ``EDGE_FRACTION`` (1 %) of the bulk density; linear interpolation between nodes.
* Depletion width: electronic edge minus the lithographic gate edge (positive when the electrons
  stop short of the gate).
* 10-90 % rise (``healing_length``, its old name): distance between the points where n - n_gate
  reaches 10 % and 90 % of n_bulk - n_gate, with n_gate the density deep under the gate (0 for a
  cut well); for an accumulating gate (n_gate > n_bulk) the same fractions of the fall.
* Cut under the gate: the density deep under the gate (at the domain end) is below
  ``EDGE_FRACTION`` of the bulk.
* Local filling nu(x) = n(x) h / (e B).
* Incompressible strip at filling nu_k (Chklovskii, Shklovskii, Glazman, Phys. Rev. B 46, 4026
  (1992)): centred where nu(x) = nu_k, width a_k = sqrt(16 eps Delta / (pi e^2 dn/dx)) (SI; our
  derivation from the mixed boundary problem of a strip in a metallic sheet, which matches the
  paper's Gaussian-unit a_k^2 = 4 kappa Delta / (pi^2 e^2 dn/dx)), with the average field in the
  strip Delta / (e a_k). Gaps: even nu_k, hbar omega_c - |g*| mu_B B; odd nu_k, the Zeeman gap
  (bare or exchange-enhanced) or a user gap. A strip narrower than ``STRIP_MIN_WIDTH_LB`` magnetic
  lengths is flagged: the model does not hold there.
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

__all__ = [
    "EDGE_FRACTION",
    "STRIP_MIN_WIDTH_LB",
    "crossing_from_bulk",
    "healing_length",
    "incompressible_strips",
    "magnetic_length",
    "strip_width",
]

#: Fraction of the bulk density that defines the electronic edge and a cut well.
EDGE_FRACTION = 0.01
#: A strip narrower than this many magnetic lengths is flagged: the electrostatic strip model
#: (Chklovskii, Shklovskii, Glazman 1992) describes the density on scales larger than l_B and
#: needs a_k >> l_B; below l_B not even one Landau-level wavefunction fits in the strip.
#: One l_B is the least any practitioner would accept (common practice); raise it to ask for
#: "a few l_B".
STRIP_MIN_WIDTH_LB = 1.0


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


def magnetic_length(field_T: float) -> float:
    """l_B = sqrt(hbar / (e B)) in m (25.66 nm / sqrt(B/T))."""
    return float(np.sqrt(sc.hbar / (sc.e * field_T)))


def incompressible_strips(
    x: np.ndarray,
    n: np.ndarray,
    field_T: float,
    *,
    dos_J_m2: float,
    eps_r: float,
    g_bare: float,
    odd_gap_J: float,
    odd_gap_kind: str,
    extra: tuple[tuple[float, float, str], ...] = (),
    min_width_lB: float = STRIP_MIN_WIDTH_LB,
    nu_bulk: float | None = None,
) -> list[dict]:
    """Incompressible strips of a density profile n(x) (bulk at large x), CSG widths, l_B flags.

    Parameters
    ----------
    x, n
        Sorted positions (m) and sheet density (m^-2), shape (N,).
    field_T
        Perpendicular field (T).
    dos_J_m2
        Zero-field DOS m*/(pi hbar^2) of the sheet (J^-1 m^-2), for hbar omega_c.
    eps_r
        Permittivity around the sheet (CSG's kappa).
    g_bare
        Bare |g*|: even-integer gaps are hbar omega_c - |g*| mu_B B (the Landau gap less the
        Zeeman splitting of the levels on either side; a spin-unpolarized filling has no exchange
        enhancement of it).
    odd_gap_J, odd_gap_kind
        Gap at odd-integer fillings (J) and how it was set (bare or enhanced Zeeman, user).
    extra
        Further (filling, gap J, kind) levels (a fractional filling with its gap).
    min_width_lB
        Strips narrower than this many l_B are flagged (``narrower_than_lB``).
    nu_bulk
        Bulk filling (default: the filling at the largest x); strips below it are looked for.

    Returns
    -------
    list of dict
        Per strip: filling, gap_J, gap_kind, centre_m, width_m, density_gradient_m3,
        field_V_per_m, velocity_m_per_s, magnetic_length_m, width_over_lB, narrower_than_lB.

    References
    ----------
    D. B. Chklovskii, B. I. Shklovskii and L. I. Glazman, Phys. Rev. B 46, 4026 (1992).
    """
    nu = local_filling(n, field_T)
    nu_bulk = float(nu[-1]) if nu_bulk is None else nu_bulk
    mstar = np.pi * sc.hbar**2 * dos_J_m2
    hw_c = sc.hbar * sc.e * field_T / mstar
    zeeman = g_bare * sc.physical_constants["Bohr magneton"][0] * field_T
    levels: list[tuple[float, float, str]] = []
    for k in range(1, int(np.ceil(nu_bulk))):
        if k % 2 == 0:
            levels.append((float(k), hw_c - zeeman, "Landau gap hbar*omega_c - |g*| mu_B B"))
        else:
            levels.append((float(k), odd_gap_J, odd_gap_kind))
    levels += [lev for lev in extra if lev[0] < nu_bulk]
    l_b = magnetic_length(field_T)
    dndx = np.gradient(n, x)
    out = []
    for nu_k, gap, why in sorted(levels):
        xc = crossing_from_bulk(x, nu, nu_k)
        if xc is None or not gap > 0:
            continue
        g = interp_at(x, dndx, xc)
        if not g > 0:
            continue
        a = strip_width(eps_r, gap, g)
        e_strip = gap / (sc.e * a)
        out.append(
            {
                "filling": nu_k,
                "gap_J": gap,
                "gap_kind": why,
                "centre_m": xc,
                "width_m": a,
                "density_gradient_m3": g,
                "field_V_per_m": e_strip,
                "velocity_m_per_s": e_strip / field_T,
                "magnetic_length_m": l_b,
                "width_over_lB": a / l_b,
                "narrower_than_lB": bool(a < min_width_lB * l_b),
            }
        )
    return out
