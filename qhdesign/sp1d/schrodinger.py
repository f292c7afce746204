"""Schrödinger equation with position-dependent mass (BenDaniel–Duke) on a non-uniform grid.

    -(hbar^2/2) d/dz [ (1/m(z)) dpsi/dz ] + U(z) psi = E psi,   psi = 0 at both ends.

Box (finite-volume) discretisation: 1/m lives on the cells (half-grid points), so psi and
(1/m) dpsi/dz are continuous across interfaces as BenDaniel and Duke require. With node weights
w_j (the control-volume widths) the discrete problem A psi = E W psi is made symmetric
tridiagonal by phi = W^(1/2) psi and solved by ``scipy.linalg.eigh_tridiagonal`` with index
selection. The wavefunctions returned are normalised as sum_j w_j psi_j^2 = 1 (units m^-1/2).

References
----------
D. J. BenDaniel and C. B. Duke, Phys. Rev. 152, 683 (1966).
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc
from scipy.linalg import eigh_tridiagonal
from scipy.linalg.lapack import dstebz

__all__ = ["control_widths", "count_below", "solve_subbands"]

_HB2_2M0 = sc.hbar**2 / (2.0 * sc.m_e)  # J m^2


def control_widths(z: np.ndarray) -> np.ndarray:
    """Control-volume width of every node of ``z`` (half cells at the two ends), shape (N+1,)."""
    h = np.diff(z)
    w = np.empty(len(z))
    w[0] = 0.5 * h[0]
    w[-1] = 0.5 * h[-1]
    w[1:-1] = 0.5 * (h[:-1] + h[1:])
    return w


def _matrix(z, potential_J, mass_cell):
    """Symmetric tridiagonal form (diagonal, off-diagonal, in eV) and the node weights."""
    h = np.diff(z)
    w = control_widths(z)[1:-1]
    c = _HB2_2M0 / (mass_cell * h)  # J m (coupling per cell)
    # work in eV so LAPACK's absolute tolerances see O(1e-3..1) numbers
    scale = 1.0 / sc.e
    diag = (c[:-1] + c[1:]) / w * scale + potential_J[1:-1] * scale
    off = -c[1:-1] / np.sqrt(w[:-1] * w[1:]) * scale
    return diag, off, w


def count_below(z, potential_J, mass_cell, energy_J: float) -> int:
    """Number of subbands at or below ``energy_J`` (Sturm count by LAPACK ``stebz``)."""
    diag, off, _ = _matrix(z, potential_J, mass_cell)
    lo = float(diag.min() - 2.0 * np.abs(off).max() - 1.0)
    m, *_ = dstebz(diag, off, 1, lo, energy_J / sc.e, 0, 0, 1.0, "E")
    return int(m)


def solve_subbands(
    z: np.ndarray,
    potential_J: np.ndarray,
    mass_cell: np.ndarray,
    count: int,
    tol_eV: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Lowest ``count`` subbands of a 1D region with hard walls at ``z[0]`` and ``z[-1]``.

    Parameters
    ----------
    z
        Nodes, shape (N+1,), increasing (m).
    potential_J
        Potential energy U at the nodes, shape (N+1,) (J); the end values are unused.
    mass_cell
        Effective mass on each cell in units of m0, shape (N,).
    count
        Number of subbands (lowest first).
    tol_eV
        Absolute tolerance of the eigenvalue bisection in eV (0: machine precision).

    Returns
    -------
    energies : numpy.ndarray
        Shape (count,), J, increasing.
    psi : numpy.ndarray
        Shape (count, N+1), m^-1/2, zero at both ends, sum_j w_j psi_j^2 = 1.
    """
    n_int = len(z) - 2
    count = int(min(count, n_int))
    diag, off, w = _matrix(z, potential_J, mass_cell)
    scale = 1.0 / sc.e
    ev, vec = eigh_tridiagonal(
        diag, off, select="i", select_range=(0, count - 1), check_finite=False, tol=tol_eV
    )
    psi = np.zeros((count, len(z)))
    psi[:, 1:-1] = (vec / np.sqrt(w)[:, None]).T
    # fix the sign: largest lobe positive (deterministic output)
    idx = np.argmax(np.abs(psi), axis=1)
    sign = np.sign(psi[np.arange(count), idx])
    psi *= sign[:, None]
    return ev / scale, psi
