"""Pinch-off: a screening well still open after the primary pinches off is a parallel path."""

from __future__ import annotations

import numpy as np

from qhdesign.section.constriction import PinchoffResult

ROLES = {"screen_upper": "screening", "primary": "primary", "screen_lower": "screening"}


def result(pinch, status):
    return PinchoffResult(
        gap_m=300e-9,
        voltages_V=np.array([0.0, -1.0]),
        centre_density_m2={k: np.zeros(2) for k in ROLES},
        bulk_density_m2={k: 1e15 for k in ROLES},
        pinchoff_V=pinch,
        status=status,
        roles=ROLES,
    )


def test_lower_screening_well_open_after_primary_pinch_off_is_flagged():
    r = result(
        {"screen_upper": -0.4, "primary": -0.8, "screen_lower": None},
        {"screen_upper": "pinched", "primary": "pinched", "screen_lower": "open"},
    )
    assert r.parallel_path_wells == ("screen_lower",)
    d = r.to_dict()
    assert d["flags"]["parallel_path"] is True
    assert d["parallel_path_wells"] == ["screen_lower"]


def test_screening_well_pinching_later_than_the_primary_is_flagged():
    r = result(
        {"screen_upper": -0.4, "primary": -0.8, "screen_lower": -1.1},
        {k: "pinched" for k in ROLES},
    )
    assert r.parallel_path_wells == ("screen_lower",)


def test_no_flag_when_every_screening_well_pinches_first_or_primary_stays_open():
    first = result(
        {"screen_upper": -0.4, "primary": -0.8, "screen_lower": -0.7},
        {k: "pinched" for k in ROLES},
    )
    assert first.parallel_path_wells == ()
    assert first.to_dict()["flags"]["parallel_path"] is False
    open_primary = result(
        {"screen_upper": -0.4, "primary": None, "screen_lower": None},
        {"screen_upper": "pinched", "primary": "open", "screen_lower": "open"},
    )
    assert open_primary.parallel_path_wells == ()
