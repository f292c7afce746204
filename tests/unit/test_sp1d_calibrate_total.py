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
            "--hall-density", "4.7e11 cm^-2", "--toml", str(out),
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
            "--density", "1e11 cm^-2", "--toml", str(tmp_path / "x.toml"),
        ],
    )  # fmt: skip
    assert_one_line_error(res, "--well")


def test_calibrate_edits_the_file_in_place_in_its_units(cli_runner, app, tmp_path):
    # the grower's file comes back as written: comments and layout kept, one value changed, in
    # the unit the file uses, to four significant digits
    src = tmp_path / "wafer.toml"
    text = SCREENED.read_text().replace(
        'barrier = "0.7 eV"', 'barrier = "700 meV"'
    )  # a unit other than the default
    src.write_text(text)
    out = tmp_path / "fitted.toml"
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(src), "--parameter", "substrate.barrier", "--well", "screen_lower",
            "--density", "2.02e11 cm^-2", "--toml", str(out), "--range", "0.5 eV..0.9 eV",
        ],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    new = out.read_text()
    old_lines, new_lines = text.splitlines(), new.splitlines()
    assert len(old_lines) == len(new_lines)
    changed = [(a, b) for a, b in zip(old_lines, new_lines, strict=True) if a != b]
    assert len(changed) == 1, changed
    line = changed[0][1]
    assert line.startswith('barrier = "') and ' meV"' in line  # the file's unit
    assert "# semi-insulating substrate" in line  # the comment after the value survives
    digits = line.split('"')[1].split()[0].replace(".", "").lstrip("0")
    assert len(digits) <= 4  # four significant digits, not 17
    assert "meV" in res.output and "SI" not in res.output  # reported in the file's units
    density = solve_bands(load_stack(out)).well("screen_lower").sheet_density_m2
    assert density == pytest.approx(2.02e15, rel=1e-3)
