"""Incompressible strips on an analytic profile: CSG widths, the gaps, the l_B flag.

Check values (analytic): l_B = sqrt(hbar/(eB)) = 25.656 nm/sqrt(B/T); hbar omega_c = hbar e B/m*
(1.7279 meV/T for m* = 0.067 m0); bare Zeeman |g*| mu_B B with |g*| = 0.44 (from memory, GaAs);
strip centre where n(x) = nu_k eB/h on a linear profile n = G x; CSG width
a_k = sqrt(16 eps Delta/(pi e^2 G)) (Chklovskii, Shklovskii, Glazman, Phys. Rev. B 46, 4026 (1992),
in SI); the flag is a_k < (criterion) l_B.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.section.edge import G_ENHANCEMENT, EdgeSettings, _odd_gap, bare_g_factor
from qhdesign.section.profile import incompressible_strips, magnetic_length

MEV = 1e-3 * sc.e
M = 0.067 * sc.m_e
DOS = M / (np.pi * sc.hbar**2)
MU_B = sc.physical_constants["Bohr magneton"][0]


def test_magnetic_length():
    assert magnetic_length(1.0) == pytest.approx(25.656e-9, rel=1e-4)
    assert magnetic_length(10.0) == pytest.approx(8.113e-9, rel=1e-3)


def strips_on_ramp(B, grad, odd_gap_J, extra=(), crit=1.0):
    x = np.linspace(0.0, 4e-6, 40001)
    n = grad * x
    return incompressible_strips(
        x,
        n,
        B,
        dos_J_m2=DOS,
        eps_r=12.9,
        g_bare=0.44,
        odd_gap_J=odd_gap_J,
        odd_gap_kind="test",
        extra=extra,
        min_width_lB=crit,
    )


def test_even_gap_is_landau_minus_zeeman_and_widths_are_csg():
    B, grad = 4.0, 1e11 * 1e4 / 1e-6  # 1e11 cm^-2 per um
    strips = strips_on_ramp(B, grad, odd_gap_J=0.44 * MU_B * B)
    nu_max = grad * 4e-6 * sc.h / (sc.e * B)
    assert [s["filling"] for s in strips] == [float(k) for k in range(1, int(np.ceil(nu_max)))]
    hw = sc.hbar * sc.e * B / M
    assert hw / B == pytest.approx(1.7279 * MEV, rel=1e-4)
    for s in strips:
        k = s["filling"]
        gap = hw - 0.44 * MU_B * B if k % 2 == 0 else 0.44 * MU_B * B
        assert s["gap_J"] == pytest.approx(gap, rel=1e-12)
        assert s["centre_m"] == pytest.approx(k * sc.e * B / sc.h / grad, rel=1e-6)
        a = np.sqrt(16 * sc.epsilon_0 * 12.9 * gap / (np.pi * sc.e**2 * grad))
        assert s["width_m"] == pytest.approx(a, rel=1e-6)
        assert s["width_over_lB"] == pytest.approx(a / magnetic_length(B), rel=1e-6)
        assert s["narrower_than_lB"] == (a < magnetic_length(B))


def test_flag_follows_the_criterion():
    # the odd strip with the bare Zeeman gap at 10 T is a few nm wide: below l_B = 8.1 nm
    B, grad = 10.0, 3e12 * 1e4 / 1e-6
    strips = strips_on_ramp(B, grad, odd_gap_J=0.44 * MU_B * B, extra=((1 / 3, 0.3 * MEV, "u"),))
    by_nu = {s["filling"]: s for s in strips}
    assert by_nu[1.0]["narrower_than_lB"] and by_nu[1.0]["width_m"] < magnetic_length(B)
    assert not by_nu[2.0]["narrower_than_lB"]
    a13 = by_nu[1 / 3]["width_m"]
    # a stricter criterion (a few l_B) flags more
    strict = strips_on_ramp(B, grad, 0.44 * MU_B * B, extra=((1 / 3, 0.3 * MEV, "u"),), crit=3.0)
    strict = {s["filling"]: s for s in strict}
    for s in strict.values():
        assert s["narrower_than_lB"] == (s["width_m"] < 3 * magnetic_length(B))
    assert strict[1 / 3]["width_m"] == pytest.approx(a13)


def test_odd_gap_models():
    B = 6.0
    bare = _odd_gap(EdgeSettings(-1.0, field_T=B))
    assert bare_g_factor() == pytest.approx(0.44)  # GaAs |g*| (from memory; materials table)
    assert bare[0] == pytest.approx(0.44 * MU_B * B) and bare[2] == pytest.approx(0.44)
    enh = _odd_gap(EdgeSettings(-1.0, field_T=B, spin_gap="enhanced"))
    assert enh[0] == pytest.approx(G_ENHANCEMENT * 0.44 * MU_B * B)
    # common practice: enhancement 10-20 times the bare Zeeman gap
    assert 10 <= enh[0] / bare[0] <= 20
    g7 = _odd_gap(EdgeSettings(-1.0, field_T=B, g_effective=7.0))
    assert g7[0] == pytest.approx(7.0 * MU_B * B)
    user = _odd_gap(EdgeSettings(-1.0, field_T=B, spin_gap_J=0.9 * MEV))
    assert user[0] == pytest.approx(0.9 * MEV) and user[2] is None


@pytest.mark.parametrize(
    "kw",
    [
        {"spin_gap": "huge"},
        {"g_effective": -1.0},
        {"spin_gap_J": 0.5 * sc.e},
        {"strip_min_width_lB": 0.0},
    ],
)
def test_bad_strip_settings_refused(kw):
    with pytest.raises(InputError):
        EdgeSettings(-1.0, field_T=4.0, **kw)
