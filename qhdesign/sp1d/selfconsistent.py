"""Self-consistent Schrödinger–Poisson loop with the predictor–corrector scheme of Trellakis et al.

After each Schrödinger solve at the potential phi_k, the quantum electron density is written as a
functional of the (unknown) new potential by shifting every subband with the local potential
change (the predictor):

    n[phi](z) = sum_i |psi_i(z)|^2 D_i kT ln(1 + exp((E_F - E_i + e (phi(z) - phi_k(z))) / kT)),

and the nonlinear Poisson equation with this density (plus classical electrons and donors) is
solved by Newton (:mod:`.poisson`). The new potential goes back into the Schrödinger equation
(the corrector) until neither the potential nor the charge changes. Because the predictor builds
the 2DEG's own screening (its quantum capacitance) into the Poisson step, the outer iteration
does not slosh charge and needs no under-relaxation; its fixed point is exactly the
self-consistent solution (at phi = phi_k the predictor equals the true density).

References
----------
A. Trellakis, A. T. Galick, A. Pacelli and U. Ravaioli, "Iteration scheme for the solution of
the two-dimensional Schrödinger–Poisson equations in quantum structures",
J. Appl. Phys. 81, 7880 (1997).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants as sc
from scipy.special import expit

from ..errors import ConvergenceError, InputError
from .charge import classical_density, donor_ionized_fraction, subband_dos
from .device import Device
from .poisson import PoissonOperator, newton_poisson
from .schrodinger import control_widths, count_below, refine_subbands, solve_subbands
from .xc import xc_potential

__all__ = ["SolveOptions", "State", "solve_device"]

E = sc.e
_KT_REG = 2e-3 * sc.e  # regularising temperature of the Newton Jacobian (2 meV)
_JAC_FLOOR = 1e-2


@dataclass(frozen=True)
class SolveOptions:
    """Numerical options of the self-consistent solve.

    Attributes
    ----------
    tol_potential_V
        Outer convergence: largest potential change between corrector steps (V).
    tol_charge
        Outer convergence: charge imbalance of the discrete Poisson equation evaluated with the
        density of the latest Schrödinger solve, relative to the total positive charge.
    max_iterations
        Outer iterations before :class:`~qhdesign.errors.ConvergenceError`.
    min_subbands
        Least number of subbands computed.
    max_subbands
        Most subbands computed (the highest must lie ``cutoff_kT`` above E_F or the solve warns).
    cutoff_kT, cutoff_J
        Subbands are added until the highest one lies more than cutoff_kT kT + cutoff_J above E_F.
    eigen_tol_eV
        Absolute tolerance of the eigenvalue bisection (eV).
    anderson_depth
        History length of the Anderson acceleration of the outer iteration (0: off). The outer
        map (Schrödinger solve, then the predictor's nonlinear Poisson solve) is contractive;
        Anderson's extrapolation (D. G. Anderson, J. ACM 12, 547 (1965); H. F. Walker and
        P. Ni, SIAM J. Numer. Anal. 49, 1715 (2011)) speeds up its linear convergence.
    """

    tol_potential_V: float = 1e-6
    tol_charge: float = 1e-6
    max_iterations: int = 60
    min_subbands: int = 4
    max_subbands: int = 60
    cutoff_kT: float = 10.0
    cutoff_J: float = 0.005 * sc.e
    eigen_tol_eV: float = 1e-10
    anderson_depth: int = 3


@dataclass(frozen=True)
class State:
    """Converged state of a device (all arrays on the device grid).

    Attributes
    ----------
    phi_V
        Electrostatic potential at the nodes, shape (N+1,).
    U_J
        Conduction-band edge at the nodes (control-volume average), relative to E_F, shape (N+1,).
    energies_J, psi
        Subband energies relative to E_F, shape (S,), and wavefunctions on the full grid
        (zero outside the quantum region), shape (S, N+1), m^-1/2.
    subband_mass
        Mass of each subband <psi|m|psi> in m0, shape (S,).
    n_quantum_m3, n_classical_m3
        Electron densities at the nodes, shape (N+1,); each node's value times its
        control-volume width is its sheet density.
    donor_charge_C_m2
        Ionised-donor charge in each control volume, shape (N+1,).
    donor_fraction_cell
        Ionised fraction of each cell's donors (mean of its two halves), shape (N,).
    top_charge_C_m2, bottom_charge_C_m2
        Charge on the top / bottom boundary (gate metal, surface states, back gate).
    iterations
        Outer (Schrödinger) iterations.
    residuals
        Largest potential change per outer iteration (V).
    charge_balance_C_m2
        Sum of all charges including the boundaries.
    xc_J
        Exchange–correlation potential energy of the quantum electrons at the nodes, shape
        (N+1,), J (zero outside the quantum region and for ``Device.xc == "none"``). The
        Schrödinger potential is ``U_J + xc_J``.
    """

    phi_V: np.ndarray
    U_J: np.ndarray
    energies_J: np.ndarray
    psi: np.ndarray
    subband_mass: np.ndarray
    n_quantum_m3: np.ndarray
    n_classical_m3: np.ndarray
    donor_charge_C_m2: np.ndarray
    donor_fraction_cell: np.ndarray
    top_charge_C_m2: float
    bottom_charge_C_m2: float
    iterations: int
    residuals: tuple[float, ...]
    charge_balance_C_m2: float
    positive_charge_C_m2: float
    temperature_K: float
    newton_iterations: int = 0
    xc_J: np.ndarray | None = None


class _Problem:
    """Pre-computed arrays of one device at one temperature."""

    def __init__(self, dev: Device, temperature: float, frozen_donors: np.ndarray | None):
        self.dev = dev
        self.kT = sc.k * temperature
        z = dev.z
        h = dev.h
        self.w = control_widths(z)
        self.node_offset = dev.node_offset()
        n_nodes = len(z)
        fixed = np.zeros(n_nodes, dtype=bool)
        if dev.top.kind == "dirichlet":
            fixed[0] = True
        if dev.bottom.kind == "dirichlet":
            fixed[-1] = True
        self.op = PoissonOperator(z, dev.eps, fixed)
        self.fixed = fixed
        q0, q1 = dev.quantum
        self.q0, self.q1 = q0, q1
        qmask = np.zeros(n_nodes, dtype=bool)
        qmask[q0 + 1 : q1] = True
        self.qmask = qmask
        # classical electrons: both halves of every semiconductor cell outside the quantum
        # region [z_q0, z_q1] (the cells inside belong to the subbands alone, including the
        # half cells at its end nodes, where psi = 0)
        semi = dev.semiconductor.astype(float)
        cells = np.arange(len(h))
        outside = (cells < q0) | (cells >= q1)
        self._set_classical(0.5 * h * semi * outside, 0.5 * h * semi * outside)
        # donors
        self.frozen = frozen_donors
        self.don_half = 0.5 * h * dev.donors_m3  # m^-2 in each half cell
        self.has_donor_levels = np.isfinite(dev.donor_depth_J) & (dev.donors_m3 > 0)
        self.lev_idx = np.nonzero(self.has_donor_levels)[0]
        # fixed boundary sheet charges
        self.q_fixed = np.zeros(n_nodes)
        if dev.top.kind == "neumann":
            self.q_fixed[0] += dev.top.charge_C_m2
        if dev.bottom.kind == "neumann":
            self.q_fixed[-1] += dev.bottom.charge_C_m2
        total_donors = float(np.sum(h * dev.donors_m3))
        self.charge_scale = E * max(total_donors, 1e14) + abs(self.q_fixed).sum()
        self.qz = z[q0 : q1 + 1]
        self.q_mass = dev.mass[q0:q1]
        # local band mass and permittivity at the quantum nodes (effective atomic units of the
        # exchange-correlation potential)
        self.xc = dev.xc
        self.q_node_mass = dev.node_average(dev.mass)[q0 : q1 + 1]
        self.q_node_eps = dev.node_average(dev.eps)[q0 : q1 + 1]

    def xc_of(self, n_q: np.ndarray) -> np.ndarray:
        """Exchange–correlation potential energy (J) on the quantum nodes for density n_q (m^-3)."""
        v = xc_potential(n_q, self.q_node_mass, self.q_node_eps, self.xc)
        v[0] = v[-1] = 0.0  # psi = 0 on the end nodes
        return v

    def _set_classical(self, left_w, right_w):
        """Half-cell widths counted classically: cell c's left half sits at node c, its right
        half at node c+1. Only the non-zero ones are evaluated (most of the grid is quantum)."""
        self.cl_left_w, self.cl_right_w = left_w, right_w
        il = np.nonzero(left_w)[0]
        ir = np.nonzero(right_w)[0]
        cell = np.concatenate([il, ir])
        self.cl_node = np.concatenate([il, ir + 1])
        self.cl_w = np.concatenate([left_w[il], right_w[ir]])
        self.cl_offset = self.dev.offset_J[cell]
        self.cl_mass = self.dev.mass[cell]

    # ---- charges ------------------------------------------------------------------------
    def donors(self, phi):
        """Ionised donor charge per control volume and its derivative."""
        dev = self.dev
        if self.frozen is not None:
            return self.frozen, np.zeros_like(phi), None
        q = np.zeros_like(phi)
        dq = np.zeros_like(phi)
        f_l = np.ones(len(dev.h))
        f_r = np.ones(len(dev.h))
        df_l = np.zeros(len(dev.h))
        df_r = np.zeros(len(dev.h))
        c = self.lev_idx
        if len(c):
            # E_D in the half cell at node c (left) and at node c+1 (right)
            base = dev.offset_J[c] - dev.donor_depth_J[c]
            f_l[c], df_l[c] = donor_ionized_fraction(base - E * phi[c], self.kT)
            f_r[c], df_r[c] = donor_ionized_fraction(base - E * phi[c + 1], self.kT)
        q[:-1] += E * self.don_half * f_l
        q[1:] += E * self.don_half * f_r
        # dQ/dphi = e N h/2 df/dE_D * dE_D/dphi = -e^2 ...
        dq[:-1] -= E * E * self.don_half * df_l
        dq[1:] -= E * E * self.don_half * df_r
        return q, dq, 0.5 * (f_l + f_r)

    def classical(self, phi):
        """Classical electron sheet density per control volume (m^-2) and d/dphi."""
        # all classical half cells in one vectorised call: cell index, node index, width
        u = self.cl_offset - E * phi[self.cl_node]
        n, dn = classical_density(u, self.cl_mass, self.kT)
        s = np.bincount(self.cl_node, weights=n * self.cl_w, minlength=len(phi))
        # d/dphi = dn/dU * (-e)
        ds = np.bincount(self.cl_node, weights=-E * dn * self.cl_w, minlength=len(phi))
        return s, ds

    def quantum_predictor(self, energies, psi2_dos, phi_k):
        """Trellakis predictor: density (m^-3) on quantum nodes as a function of phi."""
        kT = self.kT
        kT_reg = max(kT, _KT_REG)
        sl = slice(self.q0, self.q1 + 1)

        e_over = -energies[:, None] / kT
        ratio = kT / kT_reg
        phik = phi_k[sl] * (E / kT)

        def n_of(phi):
            arg = e_over + (phi[sl] * (E / kT) - phik)[None, :]
            # softplus and logistic from one exponential: t = exp(-|arg|)
            t = np.exp(-np.abs(arg))
            occ = kT * (np.maximum(arg, 0.0) + np.log1p(t))
            n = np.einsum("ij,ij->j", psi2_dos, occ)
            # Jacobian: the exact derivative expit(arg), floored for empty subbands by a small
            # multiple of the derivative at a regularising temperature. At mK an empty subband
            # has an exactly vanishing derivative, which would make the Newton matrix singular
            # while the potential is still far from the solution; the floor only changes the
            # Newton direction (the residual stays exact), and is negligible once a subband is
            # occupied, so the fast final convergence is kept.
            sig = np.where(arg >= 0.0, 1.0, t) / (1.0 + t)
            if ratio < 1.0:
                slope = np.maximum(sig, _JAC_FLOOR * expit(arg * ratio))
            else:
                slope = sig
            dn = E * np.einsum("ij,ij->j", psi2_dos, slope)
            return n, dn

        return n_of

    def total_charge(self, phi, n_quantum_fn):
        qd, dqd, _ = self.donors(phi)
        s, ds = self.classical(phi)
        q = qd + self.q_fixed - E * s
        dq = dqd - E * ds
        if n_quantum_fn is not None:
            sl = slice(self.q0, self.q1 + 1)
            nq, dnq = n_quantum_fn(phi)
            q[sl] -= E * nq * self.w[sl] * self.qmask[sl]
            dq[sl] -= E * dnq * self.w[sl] * self.qmask[sl]
        return q, dq

    # ---- Schrödinger -------------------------------------------------------------------
    def subbands(
        self,
        phi,
        opts: SolveOptions,
        count_hint: int,
        warm: np.ndarray | None = None,
        vxc: np.ndarray | None = None,
    ):
        """Subbands at ``phi``: as many as lie below the cutoff plus one (at least
        ``opts.min_subbands``). ``warm``: the previous iteration's wavefunctions on the
        quantum grid, shape (S, Nq); tried first (certified warm-started solve). ``vxc``:
        exchange–correlation potential energy on the quantum nodes (J), added to U."""
        sl = slice(self.q0, self.q1 + 1)
        u = self.node_offset[sl] - E * phi[sl]
        if vxc is not None:
            u = u + vxc
        n_int = self.q1 - self.q0 - 1
        target = opts.cutoff_kT * self.kT + opts.cutoff_J
        got = None if warm is None else refine_subbands(self.qz, u, self.q_mass, warm)
        if got is not None:
            en, psi = got
            # the certified pairs are the lowest len(en) levels; the count rule is then
            # decided by them alone exactly as by the Sturm count below
            needed = max(int(np.count_nonzero(en <= target)) + 1, opts.min_subbands)
            if needed <= len(en):
                return self._with_mass(en[:needed], psi[:needed])
        # how many levels lie below the cutoff (cheap Sturm count), plus one above it
        needed = count_below(self.qz, u, self.q_mass, target) + 1
        count = max(needed, opts.min_subbands)
        while True:
            count = min(count, n_int, opts.max_subbands)
            en, psi = solve_subbands(self.qz, u, self.q_mass, count, opts.eigen_tol_eV)
            if en[-1] > target or count >= min(n_int, opts.max_subbands):
                break
            count = int(count * 1.6) + 2
        return self._with_mass(en, psi)

    def _with_mass(self, en, psi):
        mass_cell = self.q_mass
        # subband mass <m>: weight each cell by the mean |psi|^2 of its two nodes
        hq = np.diff(self.qz)
        p2 = psi**2
        cell_w = 0.5 * (p2[:, :-1] + p2[:, 1:]) * hq
        m_sub = (cell_w @ mass_cell) / cell_w.sum(axis=1)
        return en, psi, m_sub

    def boundary_charges(self, phi, q):
        """Charge on each boundary from the flux of its first cell (C/m^2)."""
        flux = self.op.k * np.diff(phi)
        # node 0 equation: flux_0 + Q_0 + sigma_top = 0 -> sigma_top = -(flux_0 + Q_0)
        top = -(flux[0] + q[0]) if self.fixed[0] else 0.0
        bottom = -(-flux[-1] + q[-1]) if self.fixed[-1] else 0.0
        return float(top), float(bottom)


#: Fewer free electrons than this (m^-2, i.e. 1e9 cm^-2) in a floating, frozen device: no 2DEG.
_MIN_FREE_ELECTRONS_M2 = 1e13


def _initial_potential(prob: _Problem, phi_guess: np.ndarray | None) -> np.ndarray:
    dev = prob.dev
    if phi_guess is not None:
        phi = phi_guess.copy()
    else:
        # flat band in the interior, boundary values set below
        phi = np.zeros(len(dev.z))
    if dev.top.kind == "dirichlet":
        phi[0] = (prob.node_offset[0] - dev.top.energy_J) / E
    if dev.bottom.kind == "dirichlet":
        phi[-1] = (prob.node_offset[-1] - dev.bottom.energy_J) / E
    return phi


def solve_device(
    dev: Device,
    temperature: float,
    *,
    frozen_donors: np.ndarray | None = None,
    phi_guess: np.ndarray | None = None,
    options: SolveOptions | None = None,
    count_hint: int = 0,
    warm_psi: np.ndarray | None = None,
    xc_guess: np.ndarray | None = None,
) -> State:
    """Self-consistent Schrödinger–Poisson solve of ``dev`` at ``temperature``.

    Parameters
    ----------
    dev
        The device (grid, materials, boundaries).
    temperature
        Solve temperature (K), > 0.
    frozen_donors
        If given, the ionised-donor charge of every control volume (C/m^2, shape (N+1,)) is held
        fixed at these values (donors frozen below the freeze-out temperature).
    phi_guess
        Warm start potential (V), shape (N+1,).
    options
        Numerical options.
    count_hint
        Subband count of a previous solve (unused by the count rule; kept for callers).
    warm_psi
        Wavefunctions of a previous solve on the quantum grid, shape (S, Nq), as the start of
        the first warm-started eigen-solve (later iterations start from their predecessor).
        Only the speed depends on it: the subbands are certified or solved cold.
    xc_guess
        Exchange–correlation potential energy (J, shape (N+1,)) of a previous solve to start
        from (with ``Device.xc != "none"``). Without it, a warm start takes v_xc from the
        density of the subbands at ``phi_guess``, a cold start from the semiclassical guess.

    Returns
    -------
    State

    Raises
    ------
    ConvergenceError
        If the potential or the charge does not settle within ``options.max_iterations``.
    """
    opts = options or SolveOptions()
    if not (temperature > 0.0 and np.isfinite(temperature)):
        raise InputError(f"temperature must be > 0 K, got {temperature} K", key="temperature")
    prob = _Problem(dev, temperature, frozen_donors)
    if frozen_donors is not None and not prob.fixed.any():
        # Both boundaries float (a frozen surface charge, a zero-field bottom) and the donors are
        # frozen: neutrality then fixes the number of free electrons in advance. With almost
        # none, nothing sets the Fermi level (at mK the density is exponentially stiff in it)
        # and the stack has no 2DEG to speak of: say so instead of failing in Newton.
        free = float(np.sum(frozen_donors) + np.sum(prob.q_fixed)) / E
        if free < _MIN_FREE_ELECTRONS_M2:
            raise InputError(
                f"after freeze-out the stack keeps only {free * 1e-4:.2g} cm^-2 free electrons "
                "(the surface states take the rest of the ionised donors): no 2DEG forms, and "
                "with a frozen surface over a zero-field substrate nothing fixes the Fermi level; "
                "raise the doping or lower surface.barrier",
                key="doping",
            )
    phi = _initial_potential(prob, phi_guess)
    if phi_guess is None:
        # start from the semiclassical (Thomas-Fermi everywhere) solution: electrons in the
        # quantum region counted classically for this first guess only
        semi = dev.semiconductor.astype(float)
        h = dev.h
        saved = prob.cl_left_w, prob.cl_right_w
        prob._set_classical(0.5 * h * semi, 0.5 * h * semi)
        # (a starting guess only: 0.1 mV is plenty)
        phi, _ = newton_poisson(
            prob.op,
            phi,
            lambda p: prob.total_charge(p, None),
            charge_scale=prob.charge_scale,
            tol_V=1e-4,
        )
        if dev.xc != "none":
            # exchange-correlation of the first Schrödinger solve from this semiclassical density
            s_cl, _ = prob.classical(phi)
            n_start = (s_cl / prob.w)[prob.q0 : prob.q1 + 1]
        prob._set_classical(*saved)

    sl = slice(prob.q0, prob.q1 + 1)
    use_xc = dev.xc != "none"
    nq_nodes = prob.q1 - prob.q0 + 1
    vxc = np.zeros(nq_nodes)
    if use_xc:
        if xc_guess is not None:
            vxc = np.array(xc_guess[sl], dtype=float)
        elif phi_guess is None:
            vxc = prob.xc_of(n_start)
        else:
            # density of the subbands at the guessed potential (Hartree only) seeds v_xc
            en0, psi0, m0 = prob.subbands(phi, opts, count_hint, warm=warm_psi)
            n0_fn = prob.quantum_predictor(en0, psi0**2 * subband_dos(m0)[:, None], phi.copy())
            vxc = prob.xc_of(n0_fn(phi)[0])
    residuals: list[float] = []
    charge_res: list[float] = []
    count = count_hint
    warm = warm_psi
    newton_total = 0
    hist_x: list[np.ndarray] = []
    hist_g: list[np.ndarray] = []
    for it in range(1, opts.max_iterations + 1):
        en, psi, m_sub = prob.subbands(phi, opts, count, warm=warm, vxc=vxc if use_xc else None)
        warm = psi
        count = len(en)
        psi2_dos = psi**2 * subband_dos(m_sub)[:, None]
        n_fn = prob.quantum_predictor(en, psi2_dos, phi.copy())
        # charge residual of the current potential with the density of this Schrödinger solve
        q, dq = prob.total_charge(phi, n_fn)
        res = prob.op.apply(phi) + q
        res[prob.fixed] = 0.0
        rel_charge = float(np.abs(res).sum() / prob.charge_scale)
        charge_res.append(rel_charge)
        if residuals and residuals[-1] < opts.tol_potential_V and rel_charge < opts.tol_charge:
            break
        # inexact inner solve: Newton needs only be a hundred times more accurate than the
        # current outer change (quadratic convergence makes the last digits nearly free)
        # (the first solve only to the outer tolerance: the next outer step corrects it)
        tol_inner = opts.tol_potential_V
        if residuals:
            tol_inner = max(opts.tol_potential_V * 1e-3, min(1e-2 * residuals[-1], 1e-4))
        phi_new, n_newton = newton_poisson(
            prob.op,
            phi,
            lambda p, f=n_fn: prob.total_charge(p, f),
            charge_scale=prob.charge_scale,
            tol_V=tol_inner,
            initial=(q, dq),
        )
        newton_total += n_newton
        change = float(np.max(np.abs(phi_new - phi)))
        # the iterated state: the potential, and with exchange-correlation also v_xc (in V) on
        # the quantum nodes, recomputed from the predictor's density at the new potential
        x_cur, x_new = phi, phi_new
        if use_xc:
            vxc_new = prob.xc_of(n_fn(phi_new)[0])
            change = max(change, float(np.max(np.abs(vxc_new - vxc))) / E)
            x_cur = np.concatenate([phi, vxc / E])
            x_new = np.concatenate([phi_new, vxc_new / E])
        x_next = x_new
        if opts.anderson_depth > 0:
            # Anderson acceleration of the outer fixed-point map x -> G(x) (G: Schrödinger
            # solve + predictor Newton). Restart when the change grows (outside the
            # contractive regime the extrapolation is not trusted).
            if residuals and change > 2.0 * residuals[-1]:
                hist_x.clear()
                hist_g.clear()
            hist_x.append(x_cur.copy())
            hist_g.append(x_new.copy())
            del hist_x[: -(opts.anderson_depth + 1)], hist_g[: -(opts.anderson_depth + 1)]
            if len(hist_x) >= 2:
                f_cols = np.array([g - x for g, x in zip(hist_g, hist_x, strict=True)]).T
                g_cols = np.array(hist_g).T
                d_f = np.diff(f_cols, axis=1)
                d_g = np.diff(g_cols, axis=1)
                gamma, *_ = np.linalg.lstsq(d_f, f_cols[:, -1], rcond=None)
                x_next = x_new - d_g @ gamma
        residuals.append(change)
        phi = x_next[: len(phi)]
        if use_xc:
            vxc = x_next[len(phi) :] * E
        if not np.all(np.isfinite(phi)):
            raise ConvergenceError(
                "1D Schrödinger–Poisson", it, residuals, "V", reason="potential not finite"
            )
    else:
        raise ConvergenceError(
            "1D Schrödinger–Poisson",
            opts.max_iterations,
            residuals,
            "V",
            reason=f"last relative charge residual {charge_res[-1]:.2e}",
        )

    # final bookkeeping with the converged subbands at phi (predictor shift zero)
    nq_sl, _ = n_fn(phi)
    n_quantum = np.zeros(len(phi))
    n_quantum[sl] = nq_sl * prob.qmask[sl]
    s_cl, _ = prob.classical(phi)
    n_classical = s_cl / prob.w
    qd, _, frac = prob.donors(phi)
    if frac is None:
        frac = np.full(len(dev.h), np.nan)
    q = qd + prob.q_fixed - E * (s_cl + n_quantum * prob.w)
    top, bottom = prob.boundary_charges(phi, q)
    balance = float(q.sum() + top + bottom)
    positive = float(qd.sum() + max(prob.q_fixed.sum(), 0.0) + max(top, 0) + max(bottom, 0))
    psi_full = np.zeros((len(en), len(phi)))
    psi_full[:, sl] = psi
    xc_full = np.zeros(len(phi))
    if use_xc:
        xc_full[sl] = vxc
    return State(
        phi_V=phi,
        U_J=prob.node_offset - E * phi,
        energies_J=en,
        psi=psi_full,
        subband_mass=m_sub,
        n_quantum_m3=n_quantum,
        n_classical_m3=n_classical,
        donor_charge_C_m2=qd,
        donor_fraction_cell=frac,
        top_charge_C_m2=top,
        bottom_charge_C_m2=bottom,
        iterations=it,
        residuals=tuple(residuals),
        newton_iterations=newton_total,
        charge_balance_C_m2=balance,
        positive_charge_C_m2=positive,
        temperature_K=float(temperature),
        xc_J=xc_full,
    )
