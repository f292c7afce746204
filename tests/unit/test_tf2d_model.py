"""Unit checks of the 2D stage's pure-numpy parts: charge lumping, the exact 1D column, the
sheet calibration, the profile readers and the CSG strip width. No DOLFINx here."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.tf2d.edge import EdgeSettings
from qhdesign.tf2d.examples import GAAS_DOS_J_M2, screened_section
from qhdesign.tf2d.grid import graded_nodes
from qhdesign.tf2d.model import calibrate, lump_volume_charge, solve_column, thomas_fermi_density
from qhdesign.tf2d.profile import crossing_from_bulk, healing_length, strip_width


def test_lumping_keeps_charge_and_first_moment():
    # analytic: hat functions reproduce constants and linear functions exactly
    levels = np.array([0.0, 3e-9, 10e-9, 11e-9, 40e-9, 100e-9])
    zc = np.linspace(0.5e-9, 99.5e-9, 100)
    rho = np.exp(-(((zc - 30e-9) / 7e-9) ** 2))
    q = lump_volume_charge(levels, zc, rho, 0.0, 100e-9)
    assert q.sum() == pytest.approx(np.sum(rho * 1e-9), rel=1e-12)
    assert np.sum(q * levels) == pytest.approx(np.sum(rho * 1e-9 * zc), rel=1e-12)


def test_lumping_on_a_graded_grid_uses_the_true_cell_edges():
    # a graded 1D grid (spacing growing 10 % per cell): the cells' edges are the nodes, not the
    # midpoints between centres; with the nodes given the total charge sum rho_i h_i and the
    # first moment sum rho_i h_i zbar_i (zbar_i = cell midpoint) are kept exactly (analytic:
    # hat functions reproduce constants and linear functions)
    h = 0.2e-9 * 1.1 ** np.arange(40)
    nodes = np.concatenate(([0.0], np.cumsum(h)))
    zc = 0.5 * (nodes[1:] + nodes[:-1])
    rho = 1.0 + np.sin(zc / 5e-9)
    levels = np.linspace(0.0, nodes[-1], 7)
    q = lump_volume_charge(levels, zc, rho, 0.0, nodes[-1], nodes)
    assert q.sum() == pytest.approx(np.sum(rho * h), rel=1e-12)
    assert np.sum(q * levels) == pytest.approx(np.sum(rho * h * zc), rel=1e-12)
    # without the nodes the midpoint edges miscount a graded grid (the defect this guards)
    q_mid = lump_volume_charge(levels, zc, rho, 0.0, nodes[-1])
    assert abs(q_mid.sum() / np.sum(rho * h) - 1.0) > 1e-3


def test_column_between_grounded_plates_matches_capacitor_formula():
    # analytic: sheet sigma at d1 between grounded plates: phi = sigma d1 d2 / (eps (d1 + d2))
    d1, d2, eps_r, sigma = 30e-9, 70e-9, 12.9, 1e-3
    levels = np.array([0.0, d1, d1 + d2])
    phi = solve_column(
        levels,
        np.array([eps_r, eps_r]),
        np.array([0.0, sigma, 0.0]),
        top="dirichlet",
        top_potential_V=0.0,
        bottom="gate",
        bottom_potential_V=0.0,
    )
    expect = sigma * d1 * d2 / (sc.epsilon_0 * eps_r * (d1 + d2))
    assert phi[1] == pytest.approx(expect, rel=1e-12)


def test_column_with_surface_charge_has_gauss_field():
    # analytic (Gauss): below a surface charge sigma with zero field above, E = sigma/eps
    levels = np.array([0.0, 50e-9, 80e-9])
    eps = np.array([12.0, 10.0])
    sigma = 2e-3
    phi = solve_column(
        levels,
        eps,
        np.array([sigma, 0.0, -sigma]),
        top="charge",
        top_potential_V=0.3,
        bottom="zero_field",
    )
    assert phi[0] == 0.3
    assert (phi[0] - phi[1]) / 50e-9 == pytest.approx(sigma / (sc.epsilon_0 * 12.0), rel=1e-12)
    assert (phi[1] - phi[2]) / 30e-9 == pytest.approx(sigma / (sc.epsilon_0 * 10.0), rel=1e-12)


def test_calibration_puts_each_sheet_at_its_1d_density():
    sec = screened_section()
    z = graded_nodes([*sec.layer_z_m, *(s.z_m for s in sec.sheets)], [(0.0, 1e-9)], 0.2, 20e-9)
    mid = 0.5 * (z[1:] + z[:-1])
    eps = sec.layer_permittivity[np.searchsorted(sec.layer_z_m, mid) - 1]
    cal = calibrate(sec, z, eps, exposed="frozen")
    kT = sc.k * sec.temperature_K
    for s, k, e in zip(sec.sheets, cal["sheet_level"], cal["energy_eV"], strict=True):
        n = thomas_fermi_density((cal["phi_V"][k] - e) * sc.e, s.dos_J_m2, kT)
        assert n == pytest.approx(s.density_m2, rel=1e-10)


def test_thomas_fermi_density_limits():
    # analytic: degenerate limit n = D * E; docs/derivations.md sec. 1: 2.7988e10 cm^-2 per meV
    # at 10 mK
    n = thomas_fermi_density(1e-3 * sc.e, GAAS_DOS_J_M2, sc.k * 0.01)
    assert n * 1e-4 == pytest.approx(2.7988e10, rel=1e-4)
    assert thomas_fermi_density(-1.0 * sc.e, GAAS_DOS_J_M2, sc.k * 0.01) == 0.0


def test_crossing_and_healing_on_a_ramp():
    x = np.linspace(0.0, 100.0, 11)
    n = np.clip((x - 20.0) / 50.0, 0.0, 1.0)  # analytic ramp from 20 to 70
    assert crossing_from_bulk(x, n, 0.5) == pytest.approx(45.0)
    assert healing_length(x, n, 0.0, 1.0) == pytest.approx(40.0)  # 0.9*50 - 0.1*50
    assert crossing_from_bulk(x, n + 1.0, 0.5) is None


def test_strip_width_equals_csg_gaussian_form():
    # CSG, Phys. Rev. B 46, 4026 (1992): a^2 = 4 kappa Delta / (pi^2 e_G^2 dn/dx) with the
    # Gaussian charge e_G^2 = e^2/(4 pi eps_0); our SI form is 16 eps Delta/(pi e^2 dn/dx).
    kappa, gap, grad = 12.9, 1.7279e-3 * 4 * sc.e, 1e22
    e2_gauss = sc.e**2 / (4 * np.pi * sc.epsilon_0)
    a_gauss = np.sqrt(4 * kappa * gap / (np.pi**2 * e2_gauss * grad))
    assert strip_width(kappa, gap, grad) == pytest.approx(a_gauss, rel=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "option"),
    [
        ({"field_T": 0.0, "filling": 1.0}, "field_T"),
        ({"filling": 1.0}, "field_T"),
        ({"field_T": -2.0}, "field_T"),
        ({"field_T": 101.0}, "field_T"),  # the one field rule: at most 100 T, as in 1D
        ({"field_T": 2.0, "filling": -1.0}, "filling"),
        ({"field_T": 2.0, "filling": 1.0, "gap_energy_J": 1e-23}, "gap_energy_J"),
    ],
)
def test_settings_reject_bad_field_and_filling(kwargs, option):
    # issue 15: keyed by the argument name; the front ends translate it
    with pytest.raises(InputError) as info:
        EdgeSettings(-0.5, **kwargs)
    assert info.value.key == option and "--" not in str(info.value)
