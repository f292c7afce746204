"""Pinch-off of a split gate against the bare-potential result, exact for this configuration.

A single Thomas–Fermi sheet at depth d in a uniform dielectric, a pinned surface (phi = 0 in the
gap), gates at V_g over |x| > w/2 (gate barrier 0), a zero-field bottom far below (20 um), and a
neutralising donor sheet. At pinch-off the well is empty everywhere (it is cut under the gates
first), so the potential is the bare one. For a gap of width w in a gate plane over a half-space
(exact Laplace solution; docs/derivations.md section 6) the potential at the centre at depth d is
V_g [1 - (2/pi) arctan(w/2d)] plus the x-independent donor part; a wide gate depletes the sheet
at V_dep = -e n0 (d/eps + 1/(e^2 D)) (series capacitance of the dielectric and the 2D quantum
capacitance, Luryi, Appl. Phys. Lett. 52, 501 (1988)). Hence (our derivation; the "quick design"
formula of docs/derivations.md section 6, here exact)

    V_pinch = V_dep / [1 - (2/pi) arctan(w / 2d)].

The code's pinch-off is a 1 % density threshold bisected to 1 mV, so we allow 0.5 %.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.tf2d import CrossSection, MeshOptions, SheetSpec, SolverOptions, solve_pinchoff
from qhdesign.tf2d.examples import GAAS_DOS_J_M2

EPS_R = 12.9
D = 100e-9
N0 = 2e15
Z_DONOR = 50e-9


@pytest.mark.parametrize("gap", [200e-9, 400e-9])
def test_split_gate_pinch_off_matches_bare_potential(gap, record_check):
    dd = 1e-13
    section = CrossSection(
        layer_z_m=np.array([0.0, 20e-6]),
        layer_permittivity=np.array([EPS_R]),
        sheets=(SheetSpec("well", "primary", D, GAAS_DOS_J_M2, N0),),
        temperature_K=0.1,
        charge_z_m=np.array([Z_DONOR - 2 * dd, Z_DONOR, Z_DONOR + 2 * dd]),
        charge_C_m3=np.array([0.0, sc.e * N0 / (2 * dd), 0.0]),
        surface_potential_V=0.0,
        gate_barrier_J=0.0,
        extra_levels_m=(Z_DONOR,),
    )
    eps = sc.epsilon_0 * EPS_R
    v_dep = -sc.e * N0 * (D / eps + 1 / (sc.e**2 * GAAS_DOS_J_M2))
    expect = v_dep / (1 - (2 / np.pi) * np.arctan(gap / (2 * D)))
    res = solve_pinchoff(
        section,
        gap,
        v_start=0.0,
        v_stop=1.6 * expect,
        v_step=-0.1,
        mesh_options=MeshOptions(h_max_z_m=2e-6, half_width_m=4e-6),
        options=SolverOptions(exposed="pinned"),
    )
    record_check(
        f"split-gate pinch-off, single sheet at d = 100 nm, gap w = {gap * 1e9:g} nm",
        "V_dep/[1 − (2/π)arctan(w/2d)], exact bare-potential result (docs/derivations.md §6); "
        "quantum capacitance: Luryi, Appl. Phys. Lett. 52, 501 (1988)",
        res.pinchoff_V["well"],
        expect,
        0.005,
    )
    assert res.pinchoff_V["well"] == pytest.approx(expect, rel=0.005)
