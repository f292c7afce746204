"""Calibration against the total (Hall) density of all wells, which is what a grower measures."""

from __future__ import annotations

import pytest
from conftest import SCREENED, assert_one_line_error

from qhdesign.sp1d import calibrate, solve_bands
from qhdesign.stack import load_stack

MEASURED_M2 = 4.70e15  # an invented Hall density of the demo wafer, 4.70e11 cm^-2


def total(stack) -> float:
    return sum(w.sheet_density_m2 for w in solve_bands(stack).wells)


def test_total_density_target_reproduces_the_hall_density():
    stack = load_stack(SCREENED)
    before = total(stack)
    assert abs(before / MEASURED_M2 - 1) > 0.03  # the fit has something to do
    res = calibrate(stack, "doping.delta_lower.sheet", target="total", measured=MEASURED_M2)
    # an independent solve of the fitted stack gives the measured total (brentq tolerance
    # 1e-6 of the parameter; the density follows to well below 1e-4)
    assert total(res.stack) == pytest.approx(MEASURED_M2, rel=1e-4)
    assert res.achieved == pytest.approx(MEASURED_M2, rel=1e-4)
    assert res.well == "all wells"
    assert res.to_dict()["measured_sheet_density_m2"] == MEASURED_M2
    # fewer donors below for a lower total
    assert res.fitted_value < res.initial_value


def test_cli_hall_density(cli_runner, app, tmp_path):
    out = tmp_path / "fitted.toml"
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(SCREENED), "--parameter", "doping.delta_lower.sheet",
            "--hall-density", "4.7e11 cm^-2", "--out", str(out),
        ],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "all wells" in res.output
    assert total(load_stack(out)) == pytest.approx(MEASURED_M2, rel=1e-4)


def test_cli_needs_a_well_for_one_well_targets(cli_runner, app, tmp_path):
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(SCREENED), "--parameter", "surface.barrier",
            "--density", "1e11 cm^-2", "--out", str(tmp_path / "x.toml"),
        ],
    )  # fmt: skip
    assert_one_line_error(res, "--well")
