"""Check values of the operating-point island (docs/island.md), each against a source outside the
code: direct integration, a conformal map, and a brute-force minimisation over the quasiparticle
number."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc
from scipy import integrate

from qhdesign.island.stage import PHI0, _closed_forms


def test_uniform_disk_self_energy_by_direct_integration(record_check):
    # From memory: U = 8 Q^2 / (3 pi 4 pi eps0 a) for a uniformly charged thin disk. Direct
    # integration: the potential at radius rho in the disk's plane is sigma/(4 pi eps0) times
    # int_0^{2 pi} s_max(theta) d theta (s_max: distance from the point to the rim along theta),
    # and U = (1/2) int sigma phi dA.
    a, Q = 0.7e-6, sc.e
    sigma = Q / (math.pi * a**2)

    def phi(rho):
        f = lambda t: -rho * math.cos(t) + math.sqrt(a * a - (rho * math.sin(t)) ** 2)  # noqa: E731
        return (
            sigma
            / (4 * math.pi * sc.epsilon_0)
            * integrate.quad(f, 0, 2 * math.pi, limit=400, epsabs=0, epsrel=1e-12)[0]
        )

    U = (
        0.5
        * integrate.quad(
            lambda r: sigma * phi(r) * 2 * math.pi * r, 0, a, limit=400, epsabs=0, epsrel=1e-12
        )[0]
    )
    ref = 8 * Q**2 / (3 * math.pi * 4 * math.pi * sc.epsilon_0 * a)
    record_check(
        "uniform thin disk self-energy 8Q^2/(3 pi 4 pi eps0 a), a = 0.7 um",
        "from memory, verified by direct integration in this test",
        U,
        ref,
        1e-7,
    )
    assert U == pytest.approx(ref, rel=1e-7, abs=0)


def test_conformal_map_profile_under_a_half_plane_gate(record_check):
    # Our derivation (docs/island.md, "Check values"): a perfectly screening sheet at depth d
    # under a pinned surface with a gate over x < 0 takes up the induced density
    # dn(x) = dn(-inf) / (1 + exp(pi x / d)): half the wide-gate value at the gate edge.
    # Solved here with the 2D stage's nonlinear Thomas–Fermi solver (the island reuses it), a
    # sheet with 1000 times the GaAs DOS (quantum screening length 2.5 pm) and a small bias.
    from qhdesign.section.geometry import GateLayout, MeshOptions
    from qhdesign.section.model import CrossSection, SheetSpec
    from qhdesign.section.solver import CrossSectionSolver

    d = 50e-9
    D = 1000 * 0.067 * sc.m_e / (math.pi * sc.hbar**2)
    section = CrossSection(
        layer_z_m=np.array([0.0, d, 3 * d]),
        layer_permittivity=np.array([12.9, 12.9]),
        sheets=(SheetSpec("s", "primary", d, D, 2e15),),
        temperature_K=1.0,
        surface_mode="pinned",
        surface_potential_V=0.0,
        gate_barrier_J=0.0,
    )
    solver = CrossSectionSolver(
        section, GateLayout.single_edge(), MeshOptions(half_width_m=1.5e-6, h_max_x_m=20e-9)
    )
    n0 = solver.solve(0.0).density_m2[0]
    sol = solver.solve(-0.01)
    dn = sol.density_m2[0] - n0
    x = sol.x_m
    wide = dn[np.argmin(np.abs(x + 20 * d))]
    assert wide == pytest.approx(-0.01 * 12.9 * sc.epsilon_0 / (sc.e * d), rel=2e-3, abs=0)  # plate
    sel = np.abs(x) < 4 * d
    expected = 1.0 / (1.0 + np.exp(np.pi * x[sel] / d))
    record_check(
        "screening sheet under a half-plane gate: dn(x)/dn(-inf) = 1/(1+exp(pi x/d)), |x| < 4d",
        "our conformal-map derivation (docs/island.md)",
        dn[sel] / wide,
        expected,
        3e-3,
        kind="abs",
    )
    assert np.max(np.abs(dn[sel] / wide - expected)) < 3e-3
    assert np.interp(0.0, x, dn) / wide == pytest.approx(0.5, abs=2e-3)


def _ground_state_N(x, K_tilde, e_star, gap, Ns=range(-6, 7)):
    """Brute force: bulk charge N e*/e - x (units of e), edge relaxed: E = K~/2 n_L^2 + |N| gap."""
    E = [0.5 * K_tilde * (N * e_star - x) ** 2 + abs(N) * gap for N in Ns]
    return list(Ns)[int(np.argmin(E))], np.array(E)


def test_window_against_brute_force_over_quasiparticle_number(record_check):
    # Our derivation (docs/island.md): dB_window = Phi0/(nu A_L) [e*/e + (e/e*) Delta_qp / E_C],
    # E_C = K~/2; with x = nu A_L dB / Phi0 the bulk holds N e*/e - x. Checked by minimising over
    # N at every field; and the thermal smearing of the window's edge (width k_B T / (K~ e*/e) in
    # x) against a Boltzmann average over N.
    nu = 1 / 3
    K_I, K_L, K_IL = 60e-6 * sc.e, 10e-6 * sc.e, 2.5e-6 * sc.e
    A_I, A_L, r = 4.1e-12, 3.9e-12, K_IL / K_I
    gap, kT = 2e-6 * sc.e, sc.k * 0.001  # k_B T << K~ (e*/e)^2: two-state edges
    f = _closed_forms(A_I, A_L, r, nu, K_L, K_IL, K_I, gap, kT)
    Kt = K_L - K_IL**2 / K_I
    assert f["charging_energy_J"] == pytest.approx(Kt / 2, rel=1e-12, abs=0)
    xs = np.linspace(-3, 3, 600_001)
    zero = np.array([_ground_state_N(x, Kt, nu, gap)[0] == 0 for x in xs[::50]])
    width_x = zero.sum() * (xs[50] - xs[0])
    dB = width_x * PHI0 / (nu * A_L)
    record_check(
        "island window (via qhdesign.interferometer) vs brute force over N",
        "brute-force minimisation of the HSNR energy, PRB 83, 155440 (2011)",
        f["window_T"],
        dB,
        2e-3,
    )
    assert dB == pytest.approx(f["window_T"], rel=2e-3, abs=0)
    # thermal edge: <N> from 0 to 1 across the upper edge follows 1/(1 + exp(-(x - x_c)/w))
    x_c = nu / 2 + gap / (nu * Kt)
    xe = np.linspace(x_c - 0.05, x_c + 0.05, 2001)
    mean = []
    for x in xe:
        _, E = _ground_state_N(x, Kt, nu, gap)
        p = np.exp(-(E - E.min()) / kT)
        mean.append(np.sum(np.arange(-6, 7) * p) / p.sum())
    slope = np.gradient(np.array(mean), xe)[1000]  # at x_c: 1/(4 w)
    w_B = 1 / (4 * slope) * PHI0 / (nu * A_L)
    record_check(
        "window edge width k_B T Phi0/(2 E_C nu^2 A_L) vs Boltzmann average over N",
        "thermal average of the HSNR energy over N (brute force in the test)",
        f["window_edge_width_T"],
        w_B,
        1e-2,
    )
    assert w_B == pytest.approx(f["window_edge_width_T"], rel=1e-2, abs=0)


def test_periods():
    # Our derivation (docs/island.md): compressible Phi0/A_I, incompressible
    # (e/e*) Phi0/(A_I - r A_L)
    f = _closed_forms(4e-12, 3.8e-12, 0.05, 1 / 3, 1e-24, 1e-25, 1e-23, 1e-23, 1e-25)
    assert f["period_compressible_T"] == pytest.approx(PHI0 / 4e-12, rel=1e-12, abs=0)
    assert f["period_incompressible_T"] == pytest.approx(
        3 * PHI0 / (4e-12 - 0.05 * 3.8e-12), rel=1e-12, abs=0
    )
