"""Nonlinear finite-volume Poisson equation on a non-uniform grid, solved by Newton.

For every node j with control volume [z_j - h_{j-1}/2, z_j + h_j/2]:

    F_j(phi) = k_j (phi_{j+1} - phi_j) - k_{j-1} (phi_j - phi_{j-1}) + Q_j(phi) = 0,

with k_c = eps0 eps_c / h_c the conductance of cell c and Q_j the charge in the control volume
(C/m^2). Dirichlet nodes are fixed; a Neumann boundary node carries its fixed sheet charge. The
charge may depend on phi at the same node only (local), so the Jacobian is tridiagonal and every
Newton step is one O(N) tridiagonal solve (LAPACK ``gtsv``). Q is non-increasing in phi (more
electrons, fewer ionised donors when phi rises), so -J is a symmetric positive-definite M-matrix
and the problem is the gradient of a strictly convex functional: Newton with a backtracking line
search on the residual converges from any start. At millikelvin the charge is only piecewise
smooth (semismooth); the line search keeps Newton globally convergent there too.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import constants as sc
from scipy.linalg.lapack import dgtsv

from ..errors import ConvergenceError

__all__ = ["PoissonOperator", "newton_poisson"]

#: Residual (relative to the charge scale) regarded as round-off.
_RES_FLOOR = 1e-13


class PoissonOperator:
    """The linear part of the discrete Poisson problem and its boundary handling.

    Parameters
    ----------
    z
        Nodes, shape (N+1,), m.
    eps
        Relative permittivity of each cell, shape (N,).
    fixed
        Boolean mask of Dirichlet nodes, shape (N+1,).
    """

    def __init__(self, z: np.ndarray, eps: np.ndarray, fixed: np.ndarray):
        self.k = sc.epsilon_0 * eps / np.diff(z)  # F/m^2 per cell
        self.fixed = fixed
        self.free = ~fixed
        n = len(z)
        self.diag0 = np.zeros(n)
        self.diag0[:-1] -= self.k
        self.diag0[1:] -= self.k

    def apply(self, phi: np.ndarray) -> np.ndarray:
        """Linear part K phi (C/m^2), shape (N+1,)."""
        flux = self.k * np.diff(phi)  # D-field-like flux in each cell
        out = np.zeros_like(phi)
        out[:-1] += flux
        out[1:] -= flux
        return out

    def solve_step(self, dq: np.ndarray, residual: np.ndarray) -> np.ndarray:
        """Newton step: solve (K + diag(dq)) delta = -residual on the free nodes."""
        diag = self.diag0 + dq
        up = self.k.copy()
        lo = self.k.copy()
        fixed = self.fixed
        rhs = -residual.copy()
        # Dirichlet rows: identity, zero update
        diag = np.where(fixed, 1.0, diag)
        rhs[fixed] = 0.0
        up[fixed[:-1]] = 0.0
        lo[fixed[1:]] = 0.0
        # columns of Dirichlet nodes do not matter since their update is zero; zero them so
        # the matrix stays symmetric
        up[fixed[1:]] = 0.0
        lo[fixed[:-1]] = 0.0
        # scale to O(1) for LAPACK
        s = 1.0 / np.abs(diag)
        _, _, _, x, info = dgtsv(lo * s[1:], diag * s, up * s[:-1], rhs * s)
        if info != 0:  # pragma: no cover - singular only for an ill-posed device
            raise np.linalg.LinAlgError(f"tridiagonal Poisson matrix is singular (info={info})")
        return x


def newton_poisson(
    op: PoissonOperator,
    phi0: np.ndarray,
    charge: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]],
    *,
    charge_scale: float,
    tol_V: float = 1e-11,
    max_iter: int = 200,
    initial: tuple[np.ndarray, np.ndarray] | None = None,
) -> tuple[np.ndarray, int]:
    """Solve K phi + Q(phi) = 0 on the free nodes by damped Newton.

    Parameters
    ----------
    op
        The linear operator with its Dirichlet mask (Dirichlet values are those in ``phi0``).
    phi0
        Starting potential, shape (N+1,), V.
    charge
        ``charge(phi) -> (Q, dQ/dphi)``: control-volume charges (C/m^2) including fixed boundary
        sheet charges, and their derivative, both shape (N+1,).
    charge_scale
        Typical charge (C/m^2) to scale the residual.
    tol_V
        Stop when the largest full Newton update is below this (V), or when it is below
        10 tol_V and a tenth of the previous update (quadratic convergence: the next update
        would be below tol_V).
    initial
        ``charge(phi0)`` if the caller has it already.

    Returns
    -------
    phi : numpy.ndarray
        Converged potential.
    iterations : int

    Raises
    ------
    ConvergenceError
        When the update does not fall below ``tol_V`` in ``max_iter`` steps.
    """
    phi = phi0.copy()
    free = op.free
    q, dq = charge(phi) if initial is None else initial
    res = op.apply(phi) + q
    res[~free] = 0.0
    rnorm = np.linalg.norm(res) / charge_scale
    history = []
    for it in range(1, max_iter + 1):
        if rnorm < _RES_FLOOR:
            # the residual is at round-off: nothing left to correct (this also ends the
            # iteration when an approximate Jacobian would keep proposing tiny steps)
            return phi, it - 1
        delta = op.solve_step(dq, res)
        step = float(np.max(np.abs(delta)))
        history.append(step)
        if step < tol_V or (len(history) > 1 and step < 10 * tol_V and step < 0.1 * history[-2]):
            return phi + delta, it
        t = 1.0
        while True:
            trial = phi + t * delta
            q_t, dq_t = charge(trial)
            res_t = op.apply(trial) + q_t
            res_t[~free] = 0.0
            rn_t = np.linalg.norm(res_t) / charge_scale
            if rn_t <= (1.0 - 1e-4 * t) * rnorm or t < 1e-6 or rn_t < _RES_FLOOR:
                break
            t *= 0.5
        phi, q, dq, res, rnorm = trial, q_t, dq_t, res_t, rn_t
    raise ConvergenceError("1D Poisson Newton", max_iter, history, "V")
