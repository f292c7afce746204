"""Island stage inputs: validation of geometry and settings (each error names its option), and the
sweep stage's flat output."""

from __future__ import annotations

import math

import pytest

from qhdesign.errors import InputError
from qhdesign.tf2d import IslandGeometry, IslandSettings, solve_island


@pytest.mark.parametrize(
    ("kwargs", "option"),
    [
        ({"radius_m": -1e-6}, "--radius"),
        ({"radius_m": 0.1e-6, "ring_width_m": 0.2e-6}, "--ring-width"),
        ({"radius_m": 1e-6, "gate_offset_m": -1e-8}, "--gate-offset"),
        ({"radius_m": 1e-6, "gate_offset_m": 0.0}, "--gate-offset"),  # R_gate = R
        ({"radius_m": 1e-6, "split_gap_m": 60e-9}, "--split-gap"),  # wider than the ring
        ({"radius_m": math.nan}, "--radius"),
    ],
)
def test_geometry_errors_name_the_option(kwargs, option):
    with pytest.raises(InputError, match=option):
        IslandGeometry(**kwargs)


@pytest.mark.parametrize(
    ("kwargs", "option"),
    [
        ({"screening": "metal"}, "--screening"),
        ({"surface": "wet"}, "--surface"),
        ({"far": "none"}, "--far"),
        ({"filling": 0.4}, "--filling"),
        ({"filling": 1 / 3, "gap_energy_J": -1.0}, "--gap"),
        ({"gap_energy_J": 1e-23}, "--gap"),
    ],
)
def test_settings_errors_name_the_option(kwargs, option):
    with pytest.raises(InputError, match=option):
        IslandSettings(**kwargs)


def test_option_errors_before_any_solve(screened_path):
    from qhdesign.stack import load_stack

    stack = load_stack(screened_path)
    with pytest.raises(InputError, match="--radius"):
        solve_island(stack, ring_width="40 nm")  # no radius
    with pytest.raises(InputError, match="--radius"):
        solve_island(stack, radius="0.8")  # no unit
    with pytest.raises(InputError, match=r"options\.colour"):
        solve_island(stack, radius="0.8 um", colour="red")


def test_sweep_stage_gives_flat_floats(screened_path):
    from qhdesign.stack import load_stack
    from qhdesign.sweep.stages import get_stage

    row = get_stage("island")(load_stack(screened_path), radius="0.5 um", filling="1/3")
    assert all(isinstance(v, float) for v in row.values())
    assert 0 < row["K_IL_over_K_I"] < 1
    assert math.isnan(row["fixed_filling_window_mT"])  # no gap given
    # PHYSICS sec. 6 [D]: incompressible period = (e/e*) Phi0/(A (1 - r)) = 3 * compressible/(1 - r)
    expect = 3 * row["compressible_period_mT"] / (1 - row["K_IL_over_K_I"])
    assert row["incompressible_period_mT"] == pytest.approx(expect, rel=1e-12)
