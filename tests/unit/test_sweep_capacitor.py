"""The capacitor-ladder stage against closed-form series-capacitor results.

Closed forms derived in docs/derivations.md sec. 4.
"""

from __future__ import annotations

import math

import pytest
from scipy.constants import electron_mass, epsilon_0, hbar
from scipy.constants import elementary_charge as e

from qhdesign.errors import InputError
from qhdesign.stack import loads_stack
from qhdesign.sweep.capacitor import capacitor_stage, ladder_slopes, quantum_capacitance

EPS = 12.9 * epsilon_0
CQ = e**2 * 0.067 * electron_mass / (math.pi * hbar**2)  # Luryi, APL 52, 501 (1988)


def test_quantum_capacitance_value():
    # docs/derivations.md sec. 2: C_q = 4.484 uF/cm^2 for m* = 0.067 m0
    assert quantum_capacitance(0.067) * 1e6 / 1e4 == pytest.approx(4.484, abs=0.001)


def test_single_well_is_the_series_formula():
    d = 100e-9
    (s,) = ladder_slopes(EPS / d, [], [CQ])
    # analytic (Luryi 1988): e dn/dV = 1 / (d/eps + 1/C_q)
    assert s == pytest.approx(1 / (d / EPS + 1 / CQ) / e, rel=1e-12)
    # docs/derivations.md sec. 2: geometric coupling eps/(e d) = 7.1e11 cm^-2/V at 100 nm
    # (C_q -> inf)
    (s_geo,) = ladder_slopes(EPS / d, [], [1e6 * CQ])
    assert s_geo / 1e4 == pytest.approx(7.1e11, abs=0.05e11)


def test_screening_well_above_primary_matches_the_two_well_formula():
    c1, c2 = EPS / 60e-9, EPS / 30e-9
    s_scr, s_pri = ladder_slopes(c1, [c2], [CQ, CQ])
    cb = c2 * CQ / (c2 + CQ)
    # docs/derivations.md sec. 4 (our derivation): e dn_p/dV = C1 C_b/(C1 + C_qs + C_b),
    # e dn_s/dV = C1 C_qs/(...)
    assert s_pri == pytest.approx(c1 * cb / (c1 + CQ + cb) / e, rel=1e-12)
    assert s_scr == pytest.approx(c1 * CQ / (c1 + CQ + cb) / e, rel=1e-12)
    # docs/derivations.md sec. 4 example: 8.30e10 cm^-2/V, 7.3 % of the total (to the quoted digits)
    assert s_pri / 1e4 == pytest.approx(8.30e10, abs=0.005e10)
    assert s_pri / (s_pri + s_scr) == pytest.approx(0.073, abs=0.0005)


_TWO_WELLS = """
[wafer]
name = "QL-2499 test ladder"
temperature = "300 mK"
freeze_temperature = "120 K"
[models]
permittivity = "uniform"
uniform_permittivity = 12.9
[surface]
kind = "exposed"
barrier = "0.7 eV"
[[layers]]
name = "top"
material = "AlGaAs"
x = 0.3
thickness = "55 nm"
[[layers]]
name = "screen"
material = "GaAs"
thickness = "10 nm"
well = "screening"
mass = 0.067
[[layers]]
name = "setback"
material = "AlGaAs"
x = 0.3
thickness = "20 nm"
[[layers]]
name = "main"
material = "GaAs"
thickness = "10 nm"
well = "primary"
mass = 0.067
[[layers]]
name = "bottom"
material = "AlGaAs"
x = 0.3
thickness = "100 nm"
[[layers]]
name = "buffer"
material = "GaAs"
thickness = "500 nm"
"""


def test_stage_on_a_stack_reproduces_the_two_well_example():
    # well centres at 60 nm and 90 nm: d1 = 60 nm, d2 = 30 nm, uniform kappa 12.9
    stack = loads_stack(_TWO_WELLS, source="two_wells")
    out = capacitor_stage(stack)
    assert out["depth_primary_nm"] == pytest.approx(90.0, rel=1e-12)
    # docs/derivations.md sec. 4 example
    assert out["dn_dV_main_cm^-2/V"] == pytest.approx(8.30e10, abs=0.005e10)
    assert out["primary_share"] == pytest.approx(0.073, abs=0.0005)
    # once the screening well is empty: single-well series formula at d = 90 nm
    unscr = 1 / (90e-9 / EPS + 1 / CQ) / e / 1e4
    assert out["dn_dV_primary_unscreened_cm^-2/V"] == pytest.approx(unscr, rel=1e-12)


def test_depletion_voltages_follow_the_piecewise_linear_sequence():
    stack = loads_stack(_TWO_WELLS, source="two_wells")
    out = capacitor_stage(stack, densities={"screen": "0.5e11 cm^-2", "main": "2e11 cm^-2"})
    c1, c2 = EPS / 60e-9, EPS / 30e-9
    cb = c2 * CQ / (c2 + CQ)
    s_s = c1 * CQ / (c1 + CQ + cb) / e
    s_p = c1 * cb / (c1 + CQ + cb) / e
    v1 = -0.5e15 / s_s  # analytic: the screening well empties first
    n_p1 = 2e15 + s_p * v1
    s_u = 1 / (90e-9 / EPS + 1 / CQ) / e
    assert out["v_empty_screen_V"] == pytest.approx(v1, rel=1e-10)
    assert out["v_screening_empty_V"] == pytest.approx(v1, rel=1e-10)
    assert out["v_dep_primary_V"] == pytest.approx(v1 - n_p1 / s_u, rel=1e-10)


def test_missing_density_is_a_one_line_error_naming_the_option():
    stack = loads_stack(_TWO_WELLS, source="two_wells")
    with pytest.raises(InputError, match=r"stage\.options\.densities.*screen"):
        capacitor_stage(stack, densities={"main": "2e11 cm^-2"})
    with pytest.raises(InputError, match="'nope' is not a well"):
        capacitor_stage(stack, densities={"nope": "2e11 cm^-2"})


def test_equipotential_bottom_adds_a_capacitor_below_the_last_well():
    c1, cb = EPS / 60e-9, EPS / 40e-9
    (s,) = ladder_slopes(c1, [], [CQ], c_bottom=cb)
    # analytic: node charge balance C1 (phi - V) + C_b phi + C_q phi = 0
    assert s == pytest.approx(c1 * CQ / (c1 + CQ + cb) / e, rel=1e-12)
    deep = loads_stack(_TWO_WELLS, source="two_wells")
    pinned = loads_stack(
        _TWO_WELLS + '[substrate]\nkind = "pinned"\nbarrier = "0.7 eV"\n', source="pinned"
    )
    # primary centre at 90 nm, stack bottom at 95 + 100 + 500 = 695 nm: C_b = eps / 605 nm
    c2 = EPS / 30e-9
    cbot = EPS / 605e-9
    a = [[c1 + c2 + CQ, -c2], [-c2, c2 + CQ + cbot]]
    det = a[0][0] * a[1][1] - a[0][1] * a[1][0]
    phi_p = c2 * c1 / det  # Cramer's rule for the 2x2 ladder, gate at 1 V
    out_p = capacitor_stage(pinned)
    assert out_p["dn_dV_main_cm^-2/V"] == pytest.approx(CQ * phi_p / e / 1e4, rel=1e-12)
    assert capacitor_stage(deep)["dn_dV_main_cm^-2/V"] > out_p["dn_dV_main_cm^-2/V"]
