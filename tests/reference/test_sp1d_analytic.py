"""Schrödinger solver against analytic results, on the default grid.

Check values are computed here from closed forms or from scipy (root finding of the
transcendental finite-well equations, zeros of the Airy function); nothing is taken from an
earlier run of qhdesign.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc
from scipy.optimize import brentq
from scipy.special import ai_zeros

from qhdesign.sp1d.grid import GridSpec, layered_grid
from qhdesign.sp1d.model import build_device
from qhdesign.sp1d.schrodinger import solve_subbands
from qhdesign.stack import loads_stack

MEV = 1e-3 * sc.e
SPEC = GridSpec()  # the default grid
REL = 1e-4  # tolerance set by issue 3 ("to 1e-4 relative at the default grid")


def well_grid(width: float) -> np.ndarray:
    """Nodes of a well layer on the default grid (width / well_points, capped spacing)."""
    h = min(SPEC.well_spacing_m, width / SPEC.well_points)
    z, _ = layered_grid(np.array([0.0, width]), np.array([h, h]), np.array([h]), SPEC.grading)
    return z


def test_infinite_square_well(record_check):
    # analytic: E_n = n^2 pi^2 hbar^2 / (2 m* L^2); L = 10 nm, m* = 0.067 m0
    # (analytic: 56.124, 224.496, 505.115 meV for these parameters)
    L, m = 10e-9, 0.067
    z = well_grid(L)
    en, psi = solve_subbands(z, np.zeros(len(z)), np.full(len(z) - 1, m), 3)
    n = np.arange(1, 4)
    exact = n**2 * np.pi**2 * sc.hbar**2 / (2 * m * sc.m_e * L**2)
    record_check(
        "infinite well L = 10 nm, m* = 0.067: E_1..E_3 (default grid)",
        "analytic n²π²ħ²/(2m*L²)",
        en,
        exact,
        REL,
    )
    np.testing.assert_allclose(en, exact, rtol=REL)
    np.testing.assert_allclose(exact / MEV, [56.124, 224.496, 505.115], rtol=2e-5)
    # normalisation sum w psi^2 = 1 (analytic: |psi|^2 integrates to one)
    w = np.gradient(z) * 0 + np.concatenate(([0.5], np.ones(len(z) - 2), [0.5])) * np.diff(z)[0]
    np.testing.assert_allclose((psi**2 * w).sum(axis=1), 1.0, rtol=1e-12)


def finite_well_levels(L, v0, m_w, m_b):
    """Bound levels of a finite well with BenDaniel–Duke matching, solved with scipy brentq.

    even: tan(kL/2) = (m_w/m_b)(q/k); odd: -cot(kL/2) = (m_w/m_b)(q/k)
    (analytic matching of psi and psi'/m at the interfaces).
    """
    hb = sc.hbar

    def kq(e):
        k = np.sqrt(2 * m_w * sc.m_e * e) / hb
        q = np.sqrt(2 * m_b * sc.m_e * (v0 - e)) / hb
        return k, q

    def even(e):
        k, q = kq(e)
        return np.sin(k * L / 2) * k / m_w - np.cos(k * L / 2) * q / m_b

    def odd(e):
        k, q = kq(e)
        return np.cos(k * L / 2) * k / m_w + np.sin(k * L / 2) * q / m_b

    grid = np.linspace(1e-6 * v0, v0 * (1 - 1e-9), 20001)
    roots = []
    for f in (even, odd):
        vals = f(grid)
        for i in np.nonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))[0]:
            roots.append(brentq(f, grid[i], grid[i + 1], xtol=1e-30, rtol=1e-14))
    return np.sort(roots)


def finite_well_stack(L_nm: float, v0_eV: float, m_b: float) -> str:
    return f"""
[wafer]
name = "finite well check"
temperature = "1 K"
freeze_temperature = "1 K"
[surface]
kind = "gate"
barrier = "0.8 eV"
[[layers]]
name = "top"
material = "AlGaAs"
x = 0.3
thickness = "80 nm"
band_offset = "{v0_eV} eV"
mass = {m_b}
[[layers]]
name = "well"
material = "GaAs"
thickness = "{L_nm} nm"
well = "primary"
mass = 0.067
band_offset = "0 eV"
[[layers]]
name = "bottom"
material = "AlGaAs"
x = 0.3
thickness = "80 nm"
band_offset = "{v0_eV} eV"
mass = {m_b}
"""


@pytest.mark.parametrize(
    ("L_nm", "m_b"),
    [(10.0, 0.0919), (20.0, 0.0919), (20.0, 0.067)],
)
def test_finite_square_well_default_grid(L_nm, m_b, record_check):
    # V0 = 259.1 meV, m_w = 0.067: GaAs in Al0.3Ga0.7As (docs/derivations.md §12 for V0);
    # check values from the transcendental equations solved with scipy above.
    v0 = 0.2591
    stack = loads_stack(finite_well_stack(L_nm, v0, m_b))
    # a wide margin so the hard walls of the quantum region do not shift the levels (1e-8)
    layout = build_device(stack, margin_m=70e-9)
    dev = layout.device
    q0, q1 = dev.quantum
    z = dev.z[q0 : q1 + 1]
    u = dev.node_offset()[q0 : q1 + 1]
    exact = finite_well_levels(L_nm * 1e-9, v0 * sc.e, 0.067, m_b)
    en, _ = solve_subbands(z, u, dev.mass[q0:q1], len(exact))
    record_check(
        f"finite well (BenDaniel–Duke), V0 = 259.1 meV, L = {L_nm:g} nm, m_b = {m_b}: "
        f"all {len(exact)} bound levels",
        "transcendental matching equations solved with scipy brentq",
        en,
        exact,
        REL,
    )
    np.testing.assert_allclose(en, exact, rtol=REL)
    # (values the team computed earlier list 30.837, 121.295, 249.236 meV for L = 10 nm; the
    # scipy roots with
    # CODATA constants are 30.8354, 121.2901, 249.2147 meV, 5e-5 to 9e-5 lower: the [D] values
    # are not used as check values.)


def test_triangular_well_airy_zeros(record_check):
    # analytic: E_n = (hbar^2/2m*)^(1/3) (eF)^(2/3) |a_n|, a_n zeros of Ai (scipy.special.ai_zeros)
    F, m = 1e6, 0.067
    L = 200e-9
    # the region is one "well" layer on the default grid (spacing min(0.1 nm, L/300))
    z = well_grid(L)
    u = sc.e * F * z
    en, psi = solve_subbands(z, u, np.full(len(z) - 1, m), 3)
    a = -ai_zeros(3)[0]
    exact = (sc.hbar**2 / (2 * m * sc.m_e)) ** (1 / 3) * (sc.e * F) ** (2 / 3) * a
    record_check(
        "triangular well F = 1e6 V/m: E_1..E_3",
        "Airy zeros (scipy.special.ai_zeros), E_n = (ħ²/2m*)^(1/3) (eF)^(2/3) |a_n|",
        en,
        exact,
        REL,
    )
    np.testing.assert_allclose(en, exact, rtol=REL)
    # <z>_0 = 2 E_0 / (3 e F) (analytic, virial theorem for a linear potential)
    w = np.concatenate(([0.5 * (z[1] - z[0])], 0.5 * (z[2:] - z[:-2]), [0.5 * (z[-1] - z[-2])]))
    zbar = np.sum(w * z * psi[0] ** 2)
    record_check(
        "triangular well F = 1e6 V/m: ⟨z⟩ of the lowest level",
        "analytic ⟨z⟩_0 = 2E_0/(3eF) (virial theorem, linear potential)",
        zbar,
        2 * exact[0] / (3 * sc.e * F),
        REL,
    )
    assert zbar == pytest.approx(2 * exact[0] / (3 * sc.e * F), rel=REL)
