"""Disorder estimate on real 1D solutions: the sources behave as the Born formulas say they
must (linearity, distance, screening), and the sweep stage returns the same numbers."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import SCREENED

from qhdesign.errors import InputError
from qhdesign.sp1d import solve_bands
from qhdesign.sp1d.scattering import ScatteringOptions, fit_background, scattering
from qhdesign.stack import load_stack


@pytest.fixture(scope="module")
def demo():
    return solve_bands(load_stack(SCREENED))


def _rates(sr, well, name):
    s = next(s for s in sr.well(well).sources if s.name == name)
    return s.transport_rate_s, s.quantum_rate_s


def test_background_rate_is_linear_in_its_density(demo):
    # Born approximation: the rate is proportional to the impurity density (Ando, Fowler,
    # Stern, RMP 54, 437 (1982)); the screening does not depend on it
    a = scattering(demo, ScatteringOptions(background_m3=1e20))
    b = scattering(demo, ScatteringOptions(background_m3=3e20))
    for w in ("primary", "screen_upper"):
        ra, rb = _rates(a, w, "background"), _rates(b, w, "background")
        assert rb[0] == pytest.approx(3 * ra[0], rel=1e-12)
        assert rb[1] == pytest.approx(3 * ra[1], rel=1e-12)
        # the other sources do not change
        assert _rates(a, w, "delta_upper") == _rates(b, w, "delta_upper")


def test_remote_tau_t_exceeds_tau_q(demo):
    # remote (small-angle) scattering: tau_t / tau_q > 1 (Das Sarma and Stern, PRB 32, 8442
    # (1985)); for the donors 68 nm away from the primary well it is large (>> 10)
    sr = scattering(demo)
    for w in sr.wells:
        assert w.transport_lifetime_s > w.quantum_lifetime_s
    rt, rq = _rates(sr, "primary", "delta_upper")
    assert rq / rt > 10


def test_farther_donors_scatter_less():
    # moving the upper donor layer away from the wells lowers its rate in the primary well
    # (the form factor exp(-q d) falls with d; Davies 1998, ch. 9): spacer 24 nm -> 40 nm,
    # with the donor sheet scaled to keep the ionised density comparable
    st = load_stack(SCREENED)
    r1 = solve_bands(st)
    r2 = solve_bands(st.with_value("layers.spacer_upper.thickness", 40e-9))
    n1 = next(d for d in r1.doping if d.name == "delta_upper").ionized_m2
    n2 = next(d for d in r2.doping if d.name == "delta_upper").ionized_m2
    per1 = _rates(scattering(r1), "primary", "delta_upper")[0] / n1
    per2 = _rates(scattering(r2), "primary", "delta_upper")[0] / n2
    assert per2 < per1


def test_screening_raises_the_mobility(demo):
    # static screening divides the matrix element by eps(q) >= 1 (Stern, PRL 18, 546 (1967))
    on = scattering(demo)
    off = scattering(demo, ScatteringOptions(screening="none"))
    for a, b in zip(on.wells, off.wells, strict=True):
        assert a.mobility_m2_per_Vs > b.mobility_m2_per_Vs


def test_roughness_hits_narrow_wells_harder(demo):
    # interface roughness grows steeply as a well narrows (Sakaki et al., Appl. Phys. Lett. 51,
    # 1934 (1987): mu ~ L^6 for deep wells): the 8 nm screening wells lose more than the 24 nm
    # primary
    o = ScatteringOptions(roughness_height_m=0.3e-9, roughness_length_m=10e-9)
    sr = scattering(demo, o)
    rate = {w.name: _rates(sr, w.name, "roughness")[0] for w in sr.wells}
    assert rate["screen_upper"] > 20 * rate["primary"]
    assert rate["screen_lower"] > 20 * rate["primary"]


def test_fit_background_round_trip(demo):
    base = scattering(demo, ScatteringOptions(background_m3=2.5e20))
    mu = base.well("primary").mobility_m2_per_Vs
    nb, sr = fit_background(demo, "primary", mu)
    assert nb == pytest.approx(2.5e20, rel=1e-10)  # linear in N_B (see above): exact inverse
    assert sr.well("primary").mobility_m2_per_Vs == pytest.approx(mu, rel=1e-10)
    with pytest.raises(InputError, match="above what the other sources allow"):
        fit_background(demo, "primary", 1e3)


def test_sweep_stage_columns_equal_direct_estimate(demo):
    from qhdesign.sweep.stages import get_stage

    row = get_stage("bands")(load_stack(SCREENED), background="2e14 cm^-3")
    sr = scattering(demo, ScatteringOptions(background_m3=2e20))
    assert row["primary_mobility_cm^2/Vs"] == pytest.approx(
        sr.well("primary").mobility_m2_per_Vs * 1e4, rel=1e-9
    )
    assert row["flag_low_mobility"] == float(sr.low_mobility)
    plain = get_stage("bands")(load_stack(SCREENED))
    assert "primary_mobility_cm^2/Vs" not in plain  # opt-in: existing sweeps keep their columns
    with pytest.raises(InputError, match=r"options\.roughness_length"):
        get_stage("bands")(load_stack(SCREENED), roughness_length="0 nm")
    with pytest.raises(InputError, match=r"options\.background"):
        get_stage("bands")(load_stack(SCREENED), background="-1 cm^-3")


def test_profile_form_factor_matches_direct_sum(demo):
    # the FFT convolution of the well profile against a direct O(N^2) sum (numpy)
    from qhdesign.sp1d.scattering import WellProfile

    w = demo.primary
    p = WellProfile.from_samples(demo.z_m, demo.psi[w.subbands[0]] ** 2)
    q = np.array([1e6, 3e7, 2e8])
    z = p.z_m
    wr = p.rho_m * p.h_m
    wr[[0, -1]] *= 0.5
    direct = np.exp(-q[:, None, None] * np.abs(z[None, :, None] - z[None, None, :])) @ wr
    np.testing.assert_allclose(p.grid_form_factor(q), direct, rtol=1e-9, atol=1e-12)


def test_empty_well_gets_no_estimate_and_same_columns(demo):
    # under a depleting gate the upper screening well empties: its estimate is NaN (null in
    # JSON), the other wells keep theirs, and the CSV columns are those of the zero-bias solve
    import json
    import math

    r = solve_bands(load_stack(SCREENED), gate_voltage=-1.0)
    empty = [w.name for w in r.wells if w.sheet_density_m2 < 1e12]
    assert empty, "the -1.0 V gate should empty a well of the demo stack"
    sr = scattering(r)
    for w in sr.wells:
        assert math.isnan(w.mobility_m2_per_Vs) == (w.name in empty)
    d = json.loads(json.dumps(sr.merge_into(r.to_dict(arrays=False))))
    assert d["wells"][empty[0]]["mobility_m2_per_Vs"] is None
    assert set(sr.summary()) == set(scattering(demo).summary())
