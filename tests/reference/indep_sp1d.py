"""An independent 1D self-consistent Schroedinger-Poisson solver, used only by the tests.

A second implementation written apart from qhdesign.sp1d (numpy/scipy only; uniform grid, whole
domain quantum, donors fully ionised, Dirichlet ends) to cross-check it. qhdesign is used ONLY for
the stack's resolved layer profile
(z_top, z_bottom, band_offset, mass, permittivity, donor_density, well) and the
boundary settings (stack.surface / stack.substrate).

Physics (own implementation):
- uniform grid, spacing h, every layer boundary on a node; material on cells.
- V(z) = -e*phi (J); U(z) = Ec_offset(z) + V(z), energies relative to E_F = 0.
- Poisson (finite volumes, eps on cells):  d/dz(eps dV/dz) = e^2 (N_D^+ - n).
- Dirichlet: U(0) = barrier - e*V_gate (pinned surface: V_gate = 0),
             U(L) = substrate barrier - e*V_back (pinned / back gate).
- BenDaniel-Duke Schroedinger over the whole domain (psi = 0 at z=0 and z=L), 1/m on cells.
- 2D Fermi-Dirac subband occupation, DOS mass m_i = <psi_i|m*|psi_i>.
- Donors fully ionised. No classical electrons (the test stacks have none).
- Self-consistency: Newton on Poisson with the quantum density as a functional of the
  potential change (predictor) + outer Schroedinger updates until max|dV| < tol.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import constants as sc
from scipy.linalg import eigh_tridiagonal, solve_banded

HB = sc.hbar
M0 = sc.m_e
E = sc.e
EPS0 = sc.epsilon_0
KB = sc.k


class Device:
    def __init__(self, stack, prof, h):
        self.stack = stack
        self.prof = prof
        self.h = h
        L = prof[-1].z_bottom
        n = L / h
        N = round(n)
        if abs(n - N) > 1e-6:
            raise ValueError("grid does not divide the stack")
        for p in prof:
            for zz in (p.z_top, p.z_bottom):
                if abs(zz / h - round(zz / h)) > 1e-6:
                    raise ValueError(f"layer edge {zz} not on grid h={h}")
        self.N = N  # cells
        self.z = np.arange(N + 1) * h
        zc = (np.arange(N) + 0.5) * h
        idx = np.searchsorted([p.z_bottom for p in prof], zc)
        self.layer_of_cell = idx
        self.ec_c = np.array([prof[i].band_offset for i in idx])
        self.m_c = np.array([prof[i].mass for i in idx]) * M0
        self.eps_c = np.array([prof[i].permittivity for i in idx]) * EPS0
        self.nd_c = np.array([prof[i].donor_density for i in idx])
        # node values (control-volume averages)
        ec_n = np.empty(N + 1)
        ec_n[1:-1] = 0.5 * (self.ec_c[:-1] + self.ec_c[1:])
        ec_n[0] = self.ec_c[0]
        ec_n[-1] = self.ec_c[-1]
        self.ec_n = ec_n
        nd_cv = np.zeros(N + 1)  # donors per control volume, m^-2
        nd_cv[:-1] += 0.5 * h * self.nd_c
        nd_cv[1:] += 0.5 * h * self.nd_c
        self.nd_cv = nd_cv
        # node weights for per-layer integration: node i gets h/2 from each adjacent cell
        self.layer_names = [p.name for p in prof]
        self.q = (0, N)  # the whole domain is quantum (test stacks have no classical electrons)

    def boundary_U(self, gate_V=None, back_V=None):
        surf = self.stack.surface
        sub = self.stack.substrate
        if surf.kind == "gate":
            vg = surf.bias if gate_V is None else gate_V
            if surf.dielectric_thickness > 0:
                raise NotImplementedError("dielectric not implemented")
            u0 = surf.barrier - E * vg
        else:  # exposed, pinned (or gated with the surface barrier)
            vg = 0.0 if gate_V is None else gate_V
            u0 = surf.barrier - E * vg
        if sub.kind == "pinned":
            uL = sub.barrier
        elif sub.kind == "back_gate":
            vb = sub.bias if back_V is None else back_V
            uL = sub.barrier - E * vb
        else:
            raise NotImplementedError("deep substrate not implemented (needs Neumann)")
        return u0, uL


def schrodinger(dev, U, nstates):
    """Lowest `nstates` of BenDaniel-Duke H on nodes q0+1..q1-1 (psi = 0 at q0, q1)."""
    h = dev.h
    q0, q1 = dev.q
    t = HB**2 / (2 * h * h) / dev.m_c[q0:q1]  # per cell inside the region
    diag = (t[:-1] + t[1:]) + U[q0 + 1 : q1]
    off = -t[1:-1]
    w, v = eigh_tridiagonal(diag, off, select="i", select_range=(0, nstates - 1))
    psi = np.zeros((nstates, dev.N + 1))
    psi[:, q0 + 1 : q1] = v.T / math.sqrt(h)  # sum psi^2 h = 1
    return w, psi


def dos_mass(dev, psi):
    p2 = psi**2
    cell = 0.5 * (p2[:, :-1] + p2[:, 1:]) * dev.h
    return cell @ dev.m_c  # <m>


def occupation(Ei, mi, kT, shift=0.0):
    x = -(Ei + shift) / kT
    return mi / (math.pi * HB**2) * kT * np.logaddexp(0.0, x)


def solve(dev, T, gate_V=None, back_V=None, tol=1e-9, V0=None, verbose=False, max_outer=200):
    h, N = dev.h, dev.N
    kT = KB * T
    u0, uL = dev.boundary_U(gate_V, back_V)
    Vb0 = u0 - dev.ec_n[0]
    VbL = uL - dev.ec_n[-1]
    # Laplacian pieces on interior nodes: -L V with eps on cells
    a = dev.eps_c / h  # cell conductances
    main = a[:-1] + a[1:]  # interior nodes 1..N-1
    up = -a[1:-1]
    rhs_bc = np.zeros(N - 1)
    rhs_bc[0] += a[0] * Vb0
    rhs_bc[-1] += a[-1] * VbL

    def minusLap(Vint):
        r = main * Vint
        r[:-1] += up * Vint[1:]
        r[1:] += up * Vint[:-1]
        return r - rhs_bc

    nd_int = dev.nd_cv[1:-1]
    if V0 is None:
        # start: Poisson with donors only, then clipped so wells are not absurdly deep
        ab = np.zeros((3, N - 1))
        ab[0, 1:] = up
        ab[1] = main
        ab[2, :-1] = up
        Vint = solve_banded((1, 1), ab, rhs_bc - E**2 * nd_int)
    else:
        Vint = V0[1:-1].copy()
    nst = 6
    hist = []
    for _ in range(max_outer):
        V = np.concatenate([[Vb0], Vint, [VbL]])
        U = dev.ec_n + V
        # eigen: enough states so the highest lies > 12 kT + 20 meV above E_F
        while True:
            Ei, psi = schrodinger(dev, U, nst)
            if Ei[-1] > 12 * kT + 20e-3 * E:
                break
            nst *= 2
        mi = dos_mass(dev, psi)
        p2i = psi[:, 1:-1] ** 2
        Vk = Vint.copy()

        def dens(Vx, Vk=Vk, Ei=Ei, mi=mi, p2i=p2i):
            d = Vx - Vk  # shift of all levels (local shift approximation)
            # n at nodes
            x = -(Ei[:, None] + d[None, :]) / kT
            occ = (mi / (math.pi * HB**2))[:, None] * kT * np.logaddexp(0.0, x)
            f = (mi / (math.pi * HB**2))[:, None] * 0.5 * (1 + np.tanh(0.5 * x))
            n = np.sum(p2i * occ, axis=0)
            dn = -np.sum(p2i * f, axis=0)  # dn/dV
            return n, dn

        # Newton on G(V) = -LV + e^2 h (Nd/h - n) ... in CV form: e^2 (nd_cv - n h)
        Vx = Vint.copy()
        for _ in range(100):
            n, dn = dens(Vx)
            G = minusLap(Vx) + E**2 * (nd_int - n * h)
            J = main - E**2 * h * dn
            ab = np.zeros((3, N - 1))
            ab[0, 1:] = up
            ab[1] = J
            ab[2, :-1] = up
            dV = -solve_banded((1, 1), ab, G)
            mx = np.max(np.abs(dV))
            cap = 0.05 * E
            if mx > cap:
                dV *= cap / mx
            Vx = Vx + dV
            if mx < 1e-14 * E:
                break
        change = np.max(np.abs(Vx - Vint)) / E
        hist.append(change)
        Vint = Vx
        if change < tol:
            break
    else:
        raise RuntimeError(f"no convergence: {hist[-5:]}")
    # final consistent quantities at the converged potential
    V = np.concatenate([[Vb0], Vint, [VbL]])
    U = dev.ec_n + V
    Ei, psi = schrodinger(dev, U, nst)
    mi = dos_mass(dev, psi)
    Ni = occupation(Ei, mi, kT)
    n = np.sum(psi**2 * Ni[:, None], axis=0)
    return Result(dev, T, V, U, Ei, psi, mi, Ni, n, hist)


class Result:
    def __init__(self, dev, T, V, U, Ei, psi, mi, Ni, n, hist):
        self.__dict__.update(
            dict(dev=dev, T=T, V=V, U=U, Ei=Ei, psi=psi, mi=mi, Ni=Ni, n=n, hist=hist)
        )
        h = dev.h
        # per-layer integrals (trapezoid on nodes, half CVs at layer edges)
        self.layer_n = {}
        for p in dev.prof:
            i0 = round(p.z_top / h)
            i1 = round(p.z_bottom / h)
            seg = n[i0 : i1 + 1]
            self.layer_n[p.name] = h * (seg.sum() - 0.5 * seg[0] - 0.5 * seg[-1])
        # fraction of each subband in each layer
        p2 = psi**2
        self.sub_layer = []
        for s in range(len(Ei)):
            fr = {}
            for p in dev.prof:
                i0 = round(p.z_top / h)
                i1 = round(p.z_bottom / h)
                seg = p2[s, i0 : i1 + 1]
                fr[p.name] = h * (seg.sum() - 0.5 * seg[0] - 0.5 * seg[-1])
            self.sub_layer.append(fr)
        # boundary charges from Gauss (D field in the end cells plus half-CV charge)
        # node 0 balance: a0 (V1-V0) = e^2 (nd_cv0 - n0 h/2) + e^2 * sigma_t/e... (see report)
        dVdz0 = (V[1] - V[0]) / h
        dVdzL = (V[-1] - V[-2]) / h
        # sigma_top/e (m^-2): = eps V'(0)/e^2 minus the half-CV charge at node 0
        self.sigma_top = dev.eps_c[0] * dVdz0 / E**2 - (dev.nd_cv[0] - n[0] * h / 2)
        self.sigma_bot = -dev.eps_c[-1] * dVdzL / E**2 - (dev.nd_cv[-1] - n[-1] * h / 2)
        self.donors = dev.nd_cv.sum()
        self.electrons = float(Ni.sum())
        self.balance = self.donors - self.electrons + self.sigma_top + self.sigma_bot
