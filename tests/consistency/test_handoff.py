"""The one hand-off from the 1D stage to the FEM stages (the SheetModel contract).

Every example stack is built into a cross-section two ways -- the pipeline
(:func:`qhdesign.pipeline.section_from_stack`) and by hand from the 1D result
(``cross_section_from_sheet_model(sheet_model(stack, solve_bands(stack)))``) -- and the two
sections must be identical, field by field. The section must also carry what the 1D solution
says about the column: its surface potential, its bottom boundary and every charge.

Sources: Gauss's law (analytic): a column with zero field above the surface and below the bottom
is neutral, so donors + surface charge + sheet electrons + electrons outside the wells = 0.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from conftest import STACKS
from scipy import constants as sc

from qhdesign.pipeline import section_from_stack
from qhdesign.section.model import cross_section_from_sheet_model
from qhdesign.sp1d import solve_bands
from qhdesign.sp1d.sheets import sheet_model
from qhdesign.stack import load_stack


@pytest.fixture(scope="module", params=[p.name for p in STACKS])
def built(request):
    path = next(p for p in STACKS if p.name == request.param)
    stack = load_stack(path)
    bands = solve_bands(stack)
    model = sheet_model(stack, bands)
    return (
        stack,
        bands,
        model,
        section_from_stack(stack, sheets="constant-dos"),
        cross_section_from_sheet_model(model),
    )


def _same(a, b) -> bool:
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        return np.array_equal(np.asarray(a), np.asarray(b))
    return a == b


def test_both_builders_give_identical_sections(built):
    _, _, _, via_pipeline, via_sheet_model = built
    for f in dataclasses.fields(via_pipeline):
        a, b = getattr(via_pipeline, f.name), getattr(via_sheet_model, f.name)
        assert _same(a, b), f.name


def test_section_takes_the_surface_potential_of_the_1d_solution(built):
    _, bands, _, section, _ = built
    # phi(0) = -U(0)/e in the potential convention of the 2D stage (U: E_c - E_F at the nodes)
    i0 = int(np.argmin(np.abs(bands.z_m)))
    assert section.surface_potential_V == pytest.approx(-bands.conduction_band_J[i0] / sc.e, abs=0)


def test_bottom_boundary_follows_the_substrate(built):
    stack, bands, _, section, _ = built
    if stack.substrate.kind == "deep":
        assert section.bottom == "zero_field"
        return
    assert section.bottom == "gate"
    # the bottom potential is the 1D solution's own phi at the last node:
    # phi = -(U - E_c0(z) + E_c0(surface layer))/e
    prof = stack.profile()
    offset = prof[-1].band_offset - prof[0].band_offset
    expect = -(bands.conduction_band_J[-1] - offset) / sc.e
    assert section.bottom_potential_V == pytest.approx(expect, abs=1e-9)


def _zero_field_at_both_ends(path) -> bool:
    s = load_stack(path)
    return s.surface.kind == "exposed" and s.substrate.kind == "deep"


#: Gauss's law gives neutrality only with zero field above the surface and below the bottom.
NEUTRAL_STACKS = [p for p in STACKS if _zero_field_at_both_ends(p)]


@pytest.mark.parametrize("sheets", ["constant-dos", "1d-tables"])
@pytest.mark.parametrize("path", NEUTRAL_STACKS, ids=[p.name for p in NEUTRAL_STACKS])
def test_column_carries_every_charge(path, sheets):
    stack = load_stack(path)
    model = sheet_model(stack, solve_bands(stack))
    section = section_from_stack(stack, sheets=sheets)
    h = np.diff(section.charge_edges_m)
    donors = float(np.sum(model.fixed_charge_C_m3 * h))
    # a 1D-table sheet carries its subbands' electrons (tails included) and the frozen residual
    # only the electrons of no well: the total is the same column
    total = (
        float(np.sum(section.charge_C_m3 * h))
        + section.surface_charge_C_m2
        - sc.e * sum(s.far_charge_m2 for s in section.sheets)
    )
    # analytic (Gauss): neutral; the residual electrons outside the wells must be in the column
    # (leaving them out breaks neutrality by ~1e-4 of the donor charge on these stacks)
    assert abs(total) < 1e-6 * donors


def test_some_example_stack_is_neutral_by_gauss():
    assert NEUTRAL_STACKS, "no example stack has zero field at both ends: the check above is empty"


def test_hand_built_sheet_model_without_a_1d_solution_uses_the_pinning_formula(built):
    _, _, model, _, _ = built
    bare = dataclasses.replace(
        model, surface_potential_V=None, residual_charge_C_m3=None, bottom_kind="zero_field"
    )
    section = cross_section_from_sheet_model(bare)
    assert section.surface_potential_V == pytest.approx(
        model.surface_bias_V - model.surface_barrier_J / sc.e, abs=1e-15
    )
    assert np.array_equal(section.charge_C_m3, model.fixed_charge_C_m3)
    assert section.bottom == "zero_field"
