"""Sizing search (qhdesign.sizing) on analytic stand-ins for the island, whose feasible radius
range is known in closed form, and target parsing."""

from __future__ import annotations

import math

import pytest
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.sizing import parse_target, parse_targets, size_island

UEV = 1e-6 * sc.e


def disk(R):
    """Analytic stand-in: E_C of a disk of radius R in a medium, e^2/(8 eps R) (analytic: the
    self-capacitance 8 eps R of a thin conducting disk), r falling as 1/R, visibility x/sinh x."""
    eps = 12.9 * sc.epsilon_0
    E_C = sc.e**2 / (8 * eps * R) / 2
    r = 0.08 * 0.8e-6 / R
    x = R / 1.0e-6
    return {
        "charging_energy_J": E_C,
        "K_IL_over_K_I": r,
        "visibility": x / math.sinh(x),
        "period_compressible_T": sc.h / sc.e / (math.pi * R**2),
    }


def test_feasible_range_matches_the_closed_form():
    targets = parse_targets(["K_IL/K_I < 0.1", "E_C > 60 ueV"])
    res = size_island(disk, targets, 0.3e-6, 2e-6, points=5, rtol=1e-4)
    eps = 12.9 * sc.epsilon_0
    # analytic ends: r = 0.1 at R = 0.64 um; E_C = 60 ueV at R = e^2 / (16 eps 60 ueV)
    lo = 0.08 * 0.8e-6 / 0.1
    hi = sc.e**2 / (16 * eps * 60 * UEV)
    assert res.feasible
    assert res.radius_range_m[0] == pytest.approx(lo, rel=2e-4)
    assert res.radius_range_m[1] == pytest.approx(hi, rel=2e-4)
    # the returned ends meet the targets (feasible side of each crossing)
    for R in res.radius_range_m:
        f = disk(R)
        assert f["K_IL_over_K_I"] <= 0.1 and f["charging_energy_J"] >= 60 * UEV
    d = res.to_dict()
    assert d["binding_target"] is None
    assert d["binding_at_low_end"] == "K_IL/K_I < 0.1"
    assert d["binding_at_high_end"] == "E_C > 60 ueV"
    assert res.solves < 20


def test_infeasible_names_the_binding_target():
    targets = parse_targets(["K_IL/K_I < 0.02", "E_C > 20 ueV"])
    res = size_island(disk, targets, 0.3e-6, 2e-6, points=7)
    assert not res.feasible and res.radius_range_m is None
    # r < 0.02 needs R > 3.2 um, outside the range: it fails first, at the largest radius
    assert res.binding_target == "K_IL/K_I < 0.02"
    assert res.binding_radius_m == pytest.approx(2e-6)
    assert res.binding_margin == pytest.approx(-(0.032 - 0.02) / 0.02, rel=1e-12)
    assert "fails first" in res.verdict() and "\n" not in res.verdict()


@pytest.mark.parametrize(
    ("texts", "fragment"),
    [
        (["E_C > 10"], "E_C"),  # missing unit
        (["E_C > 10 nm"], "E_C"),  # wrong dimension
        (["Q_factor > 3"], "unknown quantity"),
        (["E_C > 10 ueV", "E_C < 5 ueV"], "contradictory"),
        (["K_IL/K_I <"], "cannot read"),
        (["visibility > 0.3 mK"], "pure number"),
    ],
)
def test_malformed_targets(texts, fragment):
    with pytest.raises(InputError, match=fragment):
        parse_targets(texts)


def test_target_margin_and_units():
    t = parse_target("window >= 50 mT")
    assert t.threshold == pytest.approx(0.05) and t.lower
    assert t.margin(0.06) == pytest.approx(0.2)
    assert parse_target("r < 0.1").quantity == "K_IL/K_I"


def test_a_window_between_scan_points_is_found():
    """Feasible 0.533..0.65 um lies between the scan points 0.3, 0.775 and 2 um: the
    maximisation of the worst margin finds it and the ends match the closed form."""
    targets = parse_targets(["K_IL/K_I < 0.12", "visibility > 0.93"])
    res = size_island(disk, targets, 0.3e-6, 2e-6, points=3, rtol=1e-4)
    assert res.feasible
    # analytic ends: r = 0.12 at 0.064/0.12 um; x/sinh x = 0.93 at x = R/1 um (scipy brentq)
    from scipy.optimize import brentq

    hi = 1e-6 * brentq(lambda x: x / math.sinh(x) - 0.93, 0.1, 3, xtol=1e-14)
    assert all(
        min(t.margin(f.get(t.key)) for t in targets) < 0
        for f in map(disk, (0.3e-6, 0.775e-6, 2e-6))
    )
    assert res.radius_range_m[0] == pytest.approx(0.064e-6 / 0.12, rel=2e-4)
    assert res.radius_range_m[1] == pytest.approx(hi, rel=2e-4)
