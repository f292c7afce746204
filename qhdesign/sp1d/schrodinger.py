"""Schrödinger equation with position-dependent mass (BenDaniel–Duke) on a non-uniform grid.

    -(hbar^2/2) d/dz [ (1/m(z)) dpsi/dz ] + U(z) psi = E psi,   psi = 0 at both ends.

Box (finite-volume) discretisation: 1/m lives on the cells (half-grid points), so psi and
(1/m) dpsi/dz are continuous across interfaces as BenDaniel and Duke require. With node weights
w_j (the control-volume widths) the discrete problem A psi = E W psi is made symmetric
tridiagonal by phi = W^(1/2) psi and solved by ``scipy.linalg.eigh_tridiagonal`` with index
selection. The wavefunctions returned are normalised as sum_j w_j psi_j^2 = 1 (units m^-1/2).

Inside a self-consistent loop the potential changes little between iterations, so
:func:`refine_subbands` takes the previous subbands as the start of Rayleigh-quotient iteration
(one O(N) tridiagonal solve per step, cubic convergence) and certifies the result: every pair has
a residual below ``_RQI_RES_EV``, the pairs are separated by more than their residual bounds,
and a Sturm count shows that no other level lies below the highest one. Otherwise it returns
``None`` and the caller uses the bisection solve.

References
----------
D. J. BenDaniel and C. B. Duke, Phys. Rev. 152, 683 (1966).
B. N. Parlett, The Symmetric Eigenvalue Problem, SIAM (1998), ch. 4 (Rayleigh-quotient
iteration; residual bound |lambda - rho| <= ||r|| for symmetric matrices) and ch. 3 (Sturm count).
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc
from scipy.linalg import eigh_tridiagonal
from scipy.linalg.lapack import dgtsv, dstebz

__all__ = [
    "control_widths",
    "count_below",
    "refine_lowest_block",
    "refine_subbands",
    "solve_subbands",
    "subband_energies",
]

_HB2_2M0 = sc.hbar**2 / (2.0 * sc.m_e)  # J m^2
#: Residual ||T v - rho v|| (eV, v normalised) accepted by the warm-started solve: the
#: eigenvalue is then within 1e-12 eV of an exact one, well inside the 1e-10 eV bisection
#: tolerance of the cold solve.
_RQI_RES_EV = 1e-12
_RQI_MAX_STEPS = 6


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


def _sturm_count(diag, off, energy_eV: float) -> int:
    """Eigenvalues of the symmetric tridiagonal (diag, off) at or below ``energy_eV``."""
    lo = float(diag.min() - 2.0 * np.abs(off).max() - 1.0)
    # range "V" with a 1 eV bisection tolerance: stebz only counts (no bisection steps)
    m, *_ = dstebz(diag, off, 1, lo, energy_eV, 0, 0, 1.0, "E")
    return int(m)


def count_below(z, potential_J, mass_cell, energy_J: float) -> int:
    """Number of subbands at or below ``energy_J`` (Sturm count by LAPACK ``stebz``)."""
    diag, off, _ = _matrix(z, potential_J, mass_cell)
    return _sturm_count(diag, off, energy_J / sc.e)


def subband_energies(
    z: np.ndarray, potential_J: np.ndarray, mass_cell: np.ndarray, count: int, tol_eV: float = 0.0
) -> np.ndarray:
    """Lowest ``count`` subband energies (J) only: the eigenvalues :func:`solve_subbands`
    returns, from the same bisection, without the eigenvectors."""
    count = int(min(count, len(z) - 2))
    diag, off, _ = _matrix(z, potential_J, mass_cell)
    ev = eigh_tridiagonal(
        diag,
        off,
        eigvals_only=True,
        select="i",
        select_range=(0, count - 1),
        check_finite=False,
        tol=tol_eV,
    )
    return ev * sc.e


def _fix_sign(psi: np.ndarray) -> np.ndarray:
    """Largest lobe positive (deterministic output), in place."""
    idx = np.argmax(np.abs(psi), axis=1)
    sign = np.sign(psi[np.arange(len(psi)), idx])
    psi *= sign[:, None]
    return psi


def refine_subbands(
    z: np.ndarray,
    potential_J: np.ndarray,
    mass_cell: np.ndarray,
    psi_start: np.ndarray,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Lowest ``len(psi_start)`` subbands, warm-started from nearby wavefunctions.

    Rayleigh-quotient iteration from each start vector (Gram–Schmidt against the pairs already
    found), then a certificate: residuals below ``_RQI_RES_EV``, eigenvalue estimates separated
    by more than twice that, and a Sturm count equal to the number of pairs at the highest
    estimate plus the residual bound. Together these prove the pairs are the lowest ones.

    Parameters
    ----------
    z, potential_J, mass_cell
        As for :func:`solve_subbands`.
    psi_start
        Start wavefunctions, shape (S, N+1) (e.g. the previous outer iteration's).

    Returns
    -------
    (energies, psi) as :func:`solve_subbands`, or ``None`` when not certified.
    """
    diag, off, w = _matrix(z, potential_J, mass_cell)
    sw = np.sqrt(w)
    count = len(psi_start)
    vecs = psi_start[:, 1:-1] * sw[None, :]
    out = np.empty_like(vecs)
    rho = np.empty(count)
    scale = float(np.abs(diag).max() + 2.0 * np.abs(off).max())

    def matvec(v):
        y = diag * v
        y[:-1] += off * v[1:]
        y[1:] += off * v[:-1]
        return y

    for i in range(count):
        v = vecs[i].copy()
        done = False
        for _ in range(_RQI_MAX_STEPS + 1):
            if i:
                v -= out[:i].T @ (out[:i] @ v)
            nrm = float(np.linalg.norm(v))
            if not nrm > 0.0:
                return None
            v /= nrm
            tv = matvec(v)
            r = float(v @ tv)
            res = float(np.linalg.norm(tv - r * v))
            if res < _RQI_RES_EV:
                done = True
                break
            # shift slightly off the Rayleigh quotient so the solve is never exactly singular
            shift = r + 1e-15 * scale
            _, _, _, v, info = dgtsv(off, diag - shift, off.copy(), v)
            if info != 0 or not np.all(np.isfinite(v)):
                return None
        if not done:
            return None
        out[i] = v
        rho[i] = r
    order = np.argsort(rho, kind="stable")
    rho, out = rho[order], out[order]
    if count > 1 and np.min(np.diff(rho)) <= 2.0 * _RQI_RES_EV:
        return None
    if _sturm_count(diag, off, rho[-1] + _RQI_RES_EV) != count:
        return None
    psi = np.zeros((count, len(z)))
    psi[:, 1:-1] = out / sw[None, :]
    return rho * sc.e, _fix_sign(psi)


def refine_lowest_block(
    z: np.ndarray,
    potential_J: np.ndarray,
    mass_cell: np.ndarray,
    psi_start: np.ndarray,
    *,
    separation_eV: float = 1e-4,
    tol_eV: float = 1e-15,
) -> tuple[np.ndarray, np.ndarray] | None:
    """Lowest ``len(psi_start)`` subbands as one block, for nearly degenerate levels.

    Block inverse iteration (shift just below the lowest Rayleigh–Ritz value of the start
    block, one tridiagonal solve per vector and step) followed by Rayleigh–Ritz on the block.
    Unlike :func:`refine_subbands` it resolves levels much closer together than their
    residuals (a tunnel-split pair): the Ritz values of a block whose residual matrix R is
    small are within ||R||^2 / s of exact eigenvalues when the rest of the spectrum lies at
    least s away (Parlett 1998, ch. 11). Certificate: the Sturm count below the lowest Ritz
    value minus the bound is 0, and the count below the highest plus ``separation_eV`` equals
    the block size (so s >= ``separation_eV`` minus the bound), with ||R||^2 / s below
    ``tol_eV``.

    Returns
    -------
    (energies, psi) as :func:`solve_subbands`, or ``None`` when not certified.
    """
    diag, off, w = _matrix(z, potential_J, mass_cell)
    sw = np.sqrt(w)
    k = len(psi_start)
    v = psi_start[:, 1:-1] * sw[None, :]

    def matvec(x):
        y = diag[None, :] * x
        y[:, :-1] += off[None, :] * x[:, 1:]
        y[:, 1:] += off[None, :] * x[:, :-1]
        return y

    # the Rayleigh–Ritz matrix in its energy form, sum_cells c (dpsi_a)(dpsi_b) +
    # sum_nodes U x_a x_b: sums without the cancellation of x.(T x) (kinetic diagonal entries of
    # hundreds of eV on fine cells), so gaps of 1e-11 eV keep their digits
    cell_c = _HB2_2M0 / (mass_cell * np.diff(z)) / sc.e
    node_u = potential_J[1:-1] / sc.e

    def ritz(x):
        q, _ = np.linalg.qr(x.T)
        x = q.T
        tx = matvec(x)
        pn = np.zeros((k, len(z)))
        pn[:, 1:-1] = x / sw[None, :]
        dp = np.diff(pn, axis=1)
        h = (dp * cell_c[None, :]) @ dp.T + (x * node_u[None, :]) @ x.T
        rho, c = np.linalg.eigh(0.5 * (h + h.T))
        x = c.T @ x
        tx = c.T @ tx
        res = tx - rho[:, None] * x
        return rho, x, float(np.sqrt(np.sum(res * res)))

    rho, v, rnorm = ritz(v)
    for _ in range(_RQI_MAX_STEPS):
        if rnorm * rnorm / separation_eV < tol_eV:
            break
        # shift below the block: the solve amplifies the block over the levels above it
        shift = rho[0] - max(10.0 * rnorm, 1e-9)
        sol = np.empty_like(v)
        for i in range(k):
            _, _, _, x, info = dgtsv(off, diag - shift, off.copy(), v[i])
            if info != 0 or not np.all(np.isfinite(x)):
                return None
            sol[i] = x / np.linalg.norm(x)
        rho, v, rnorm = ritz(sol)
    else:
        return None
    bound = rnorm * rnorm / separation_eV
    if bound >= tol_eV:
        return None
    if _sturm_count(diag, off, rho[0] - max(rnorm, bound)) != 0:
        return None
    if _sturm_count(diag, off, rho[-1] + separation_eV) != k:
        return None
    psi = np.zeros((k, len(z)))
    psi[:, 1:-1] = v / sw[None, :]
    return rho * sc.e, _fix_sign(psi)


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
    return ev / scale, _fix_sign(psi)
