"""3D split gates: a narrower constriction pinches off at a less negative voltage, and the 3D
pinch-off voltage of a short constriction against the 2D (infinitely long) cross-section value.

Sources: the ordering with the gap is the bare-potential result for a split gate, pinch-off at
V_dep / [1 - (2/pi) arctan(w/2d)] (common practice; the arctan is the exact Laplace potential of
a strip gap on a pinned surface, J. H. Davies, I. A. Larkin, E. V. Sukhorukov, J. Appl. Phys. 77,
4504 (1995), from memory), which grows in magnitude with w. The 2D comparison is documented in
docs/layout3d.md ("Pinch-off in 3D and in 2D").
"""

from __future__ import annotations

import pytest
from conftest import ROOT

from qhdesign.layout import loads_layout
from qhdesign.stack import load_stack

SMALL = 0.5  # refine factor: about 20k dofs


def qpc_layout(gap_nm: float, length_nm: float = 300.0) -> str:
    h, half = gap_nm / 2, length_nm / 2
    up = [(-half, h), (half, h), (half, 900), (-half, 900)]
    dn = [(-half, -900), (half, -900), (half, -h), (-half, -h)]

    def verts(pts):
        return ", ".join(f'["{x:g} nm", "{y:g} nm"]' for x, y in pts)

    return f"""
[layout]
name = "test split gate"
stack = "../ql2417_screened.toml"
domain_x = ["-1.4 um", "1.4 um"]
domain_y = ["-1 um", "1 um"]
[mesh]
gate_edge = "40 nm"
far = "250 nm"
[[gates]]
name = "up"
voltage = "-0.5 V"
vertices = [{verts(up)}]
[[gates]]
name = "dn"
voltage = "-0.5 V"
vertices = [{verts(dn)}]
[[constrictions]]
name = "q"
path = [["-600 nm", "0 nm"], ["600 nm", "0 nm"]]
"""


@pytest.fixture(scope="module")
def section():
    from qhdesign.pipeline import section_from_stack

    return section_from_stack(
        load_stack(ROOT / "stacks" / "ql2417_screened.toml"), sheets="constant-dos"
    )


def _pinch_3d(section, gap_nm: float) -> float:
    from qhdesign.layout.model3d import Layout3DOptions, LayoutSolver
    from qhdesign.layout.stage import find_pinchoff

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    lay = loads_layout(
        qpc_layout(gap_nm), source="qpc.toml", base=ROOT / "stacks" / "layouts", stack=stack
    )
    solver = LayoutSolver(section, lay, Layout3DOptions(refine=SMALL))
    primary = [s.role for s in section.sheets].index("primary")
    return find_pinchoff(solver, ["up", "dn"], "q", primary, -0.3, -3.0, tolerance_V=0.01)


@pytest.mark.slow
def test_narrower_constriction_pinches_first(section):
    v_narrow = _pinch_3d(section, 200.0)
    v_wide = _pinch_3d(section, 320.0)
    assert v_narrow > v_wide + 0.02  # less negative, by more than the bisection tolerance
