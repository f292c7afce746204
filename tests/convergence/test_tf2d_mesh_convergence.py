"""Mesh convergence of the derived edge figures (QL-2417, V_g = -1 V, 2 T, nu = 1).

The default mesh against one twice as fine (every cell halved, about 4x the dofs). Positions and
lengths: < 1 nm (issue 4's edge criterion, applied to the healing length, a difference of two
positions); derivatives and fields (edge shift per volt, in-plane field at the nu = 1 channel,
CSG strip widths, which depend on dn/dx): < 5 % (common practice for a reported derivative).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from qhdesign.stack import load_stack
from qhdesign.tf2d import EdgeSettings, MeshOptions, section_from_stack, solve_edge

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def pair():
    section = section_from_stack(load_stack(ROOT / "stacks" / "ql2417_screened.toml"))
    settings = EdgeSettings(-1.0, field_T=2.0, filling=1.0)
    return solve_edge(section, settings), solve_edge(section, settings, MeshOptions(refine=2.0))


def test_healing_length_converged(pair):
    a, b = pair
    for w, wf in zip(a.wells, b.wells, strict=True):
        assert w.rise_10_90_m is not None
        assert abs(w.rise_10_90_m - wf.rise_10_90_m) < 1e-9  # < 1 nm


def test_edge_shift_per_volt_converged(pair):
    a, b = pair
    checked = 0
    for w, wf in zip(a.wells, b.wells, strict=True):
        if w.edge_shift_m_per_V is not None:
            assert w.edge_shift_m_per_V == pytest.approx(wf.edge_shift_m_per_V, rel=0.05)
            checked += 1
    assert checked >= 1


def test_edge_field_and_strips_converged(pair):
    a, b = pair
    assert a.edge_field_V_per_m == pytest.approx(b.edge_field_V_per_m, rel=0.05)
    assert [s["filling"] for s in a.strips] == [s["filling"] for s in b.strips]
    assert a.strips
    for s, sf in zip(a.strips, b.strips, strict=True):
        assert s["width_m"] == pytest.approx(sf["width_m"], rel=0.05)
        assert abs(s["centre_m"] - sf["centre_m"]) < 1e-9  # < 1 nm


def test_edge_independent_of_domain_width():
    # the heterojunction has no lower screening plane, so its tail is the slowest to heal;
    # doubling the half width must not move the edge by 1 nm (issue 4's edge criterion)
    section = section_from_stack(load_stack(ROOT / "stacks" / "ql2403_heterojunction.toml"))
    a = solve_edge(section, EdgeSettings(-1.0))
    wide = MeshOptions(half_width_m=2 * a.info["half_width_m"])
    b = solve_edge(section, EdgeSettings(-1.0), wide)
    for w, wb in zip(a.wells, b.wells, strict=True):
        assert w.edge_x_m is not None
        assert abs(w.edge_x_m - wb.edge_x_m) < 1e-9
