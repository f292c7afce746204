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
        # below the mesh's 0.2 nm edge cells: C_IL would be a mesh artefact
        ({"radius_m": 1e-6, "split_gap_m": 0.5e-9}, "--split-gap"),
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
    # a bare gap would be 0.5 J; strings that are not booleans; a fractional element degree
    for bad, option in (
        ({"gap": 0.5, "filling": "1/3"}, "--gap"),
        ({"outer_well": "no"}, "--outer-well"),
        ({"degree": 1.7}, "--degree"),
        ({"refine": "x"}, "--refine"),
        ({"refine": 0.001}, "--refine"),
    ):
        with pytest.raises(InputError, match=option):
            solve_island(stack, radius="0.8 um", **bad)


@pytest.mark.fem
def test_sweep_stage_gives_flat_floats(screened_path):
    from qhdesign.stack import load_stack
    from qhdesign.sweep.stages import get_stage

    row = get_stage("island")(load_stack(screened_path), radius="0.5 um", filling="1/3")
    assert all(isinstance(v, float) for v in row.values())
    assert 0 < row["K_IL_over_K_I"] < 1
    assert math.isnan(row["fixed_filling_window_mT"])  # no gap given
    # docs/derivations.md sec. 11 (our derivation): incompressible period
    # = (e/e*) Phi0/(A (1 - r)) = 3 * compressible/(1 - r)
    expect = 3 * row["compressible_period_mT"] / (1 - row["K_IL_over_K_I"])
    assert row["incompressible_period_mT"] == pytest.approx(expect, rel=1e-12)


def _ql2403(tmp_path, **edits):
    from qhdesign.stack import loads_stack

    root = __import__("pathlib").Path(__file__).resolve().parents[2]
    text = (root / "stacks" / "ql2403_heterojunction.toml").read_text()
    for old, new in edits.items():
        assert old in text
        text = text.replace(old, new)
    return loads_stack(text, source="variant.toml")


@pytest.mark.fem
def test_sheet_model_source_keeps_the_substrate_and_the_stack_surface_model(tmp_path):
    # QL-2403 on a back gate: the island from the stack and from its sheet model must agree (the
    # sheet model used to drop the grounded bottom: K_IL/K_I 0.683 against 0.508)
    from qhdesign.sp1d import sheet_model, solve_bands

    stack = _ql2403(tmp_path, **{'kind = "deep"': 'kind = "back_gate"\nbarrier = "0.7 eV"'})
    a = solve_island(stack, radius="0.8 um")
    b = solve_island(sheet_model(stack, solve_bands(stack)), radius="0.8 um")
    assert b.to_dict()["K_IL_over_K_I"] == pytest.approx(a.to_dict()["K_IL_over_K_I"], rel=1e-9)
    # a stack whose exposed surface is pinned gets a pinned surface by default (was: frozen)
    pinned = _ql2403(tmp_path, **{'kind = "exposed"': 'kind = "exposed"\ncharge = "pinned"'})
    r = solve_island(pinned, radius="0.8 um")
    assert r.settings.surface == "pinned"
    assert r.to_dict()["K_IL_over_K_I"] == pytest.approx(
        solve_island(pinned, radius="0.8 um", surface="pinned").to_dict()["K_IL_over_K_I"],
        rel=1e-12,
    )
