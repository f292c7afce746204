"""3D vs 2D: a long straight gate edge in 3D has the depletion width of the 2D edge stage.

Source: the 2D cross-section (``qhdesign.section.solve_edge``) is the 3D problem of an infinitely
long edge; the middle of a long edge in 3D is that problem up to end effects that decay over a
few well depths (with screening planes, as exp(-pi y/d): common practice). Tolerance 5 % (the
issue's). The depletion width is read the same way in both: the distance from the gate edge to
where the primary well's density reaches 1 % of its bulk value, located on the potential.
"""

from __future__ import annotations

import pytest
from conftest import ROOT
from scipy import constants as sc

from qhdesign.layout import loads_layout
from qhdesign.stack import load_stack

GATE_V = -1.0


def edge_layout(gate_edge_nm=20, far_nm=200, half_nm=800) -> str:
    m = half_nm - 1.5 * gate_edge_nm
    return f"""
[layout]
name = "long straight gate edge"
stack = "../ql2417_screened.toml"
domain_x = ["-{half_nm} nm", "{half_nm} nm"]
domain_y = ["-{half_nm} nm", "{half_nm} nm"]
[mesh]
gate_edge = "{gate_edge_nm} nm"
far = "{far_nm} nm"
[[gates]]
name = "g"
voltage = "{GATE_V} V"
vertices = [["-{m} nm", "-{m} nm"], ["0 nm", "-{m} nm"], ["0 nm", "{m} nm"], ["-{m} nm", "{m} nm"]]
"""


@pytest.mark.slow
@pytest.mark.xfail(
    strict=True,
    reason="not met at an affordable 3D resolution: 80.4 nm (20 nm cells, 162k dofs) and 78.5 nm "
    "(12 nm cells, 209k dofs) against 74.5 nm in 2D, +7.9 % and +5.4 %, converging towards it "
    "(docs/layout3d.md)",
)
def test_long_edge_depletion_width_matches_2d():
    from qhdesign.layout.analysis import constriction_profile
    from qhdesign.layout.model3d import Layout3DOptions, LayoutSolver
    from qhdesign.pipeline import section_from_stack
    from qhdesign.section import EdgeSettings, solve_edge
    from qhdesign.section.model import _inverse_tf
    from qhdesign.section.profile import EDGE_FRACTION, crossing_from_bulk

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    section = section_from_stack(stack, sheets="constant-dos")
    lay = loads_layout(
        edge_layout(), source="edge.toml", base=ROOT / "stacks" / "layouts", stack=stack
    )
    solver = LayoutSolver(section, lay, Layout3DOptions())
    solver.solve()
    ip = [s.role for s in section.sheets].index("primary")
    phi = solver.sheet_potentials()[ip]
    x, prof = constriction_profile(
        solver.plane.xy_m, solver.plane.triangles, phi, ((-0.3e-6, 0.0), (0.7e-6, 0.0)), 1001
    )
    x = x - 0.3e-6
    s = section.sheets[ip]
    kT = sc.k * section.temperature_K
    target = (
        solver.calibration["energy_eV"][ip]
        + _inverse_tf(EDGE_FRACTION * s.density_m2, s.dos_J_m2, kT) / sc.e
    )
    w3 = crossing_from_bulk(x, prof, target)
    res2 = solve_edge(section, EdgeSettings(gate_voltage_V=GATE_V))
    w2 = next(w.depletion_width_m for w in res2.wells if w.role == "primary")
    assert w3 is not None and w2 is not None
    assert w3 == pytest.approx(w2, rel=0.05), (w3, w2)
