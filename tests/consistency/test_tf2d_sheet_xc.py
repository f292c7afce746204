"""The 2D edge with the sheets' own exchange (qhdesign.sheetxc laws on constant-DOS sheets):
the far field still holds the 1D densities, and the primary's edge sharpens as the sheet's
compressibility grows (dmu/dn is 24.8 % of pi hbar^2/m* at its density; docs/models.md)."""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture(scope="module")
def edges(screened_path_module):
    from qhdesign.pipeline import section_from_stack
    from qhdesign.section import EdgeSettings, MeshOptions, SolverOptions, solve_edge
    from qhdesign.stack import load_stack

    stack = load_stack(screened_path_module)
    out = {}
    for xc in ("none", "exchange"):
        sec = section_from_stack(stack, sheets="constant-dos", sheet_xc=xc)
        out[xc] = (sec, solve_edge(sec, EdgeSettings(-1.0), MeshOptions(), SolverOptions()))
    return out


@pytest.fixture(scope="module")
def screened_path_module():
    from conftest import SCREENED

    return SCREENED


def test_far_field_holds_the_1d_densities_with_exchange(edges):
    # consistency: the law's offset is calibrated so the far field is the 1D column
    sec, res = edges["exchange"]
    sol = res.solver.solve(-1.0)
    for i, s in enumerate(sec.sheets):
        assert s.law is not None and "exchange" in s.law.label
        assert sol.density_m2[i][-1] == pytest.approx(s.density_m2, rel=1e-6)


def test_exchange_sharpens_the_primary_edge(edges):
    # a more compressible sheet screens better: the 10-90 % rise of the primary shortens
    w0 = edges["none"][1].to_dict()["wells"]["primary"]
    w1 = edges["exchange"][1].to_dict()["wells"]["primary"]
    assert w1["rise_10_90_m"] < 0.9 * w0["rise_10_90_m"]
    assert np.isfinite(w1["depletion_width_m"]) and w1["cut_under_gate"]
