"""3D vs axisymmetric: a circular layout's island has the axisymmetric island stage's E_C, K_IL/K_I.

Source: the axisymmetric island stage (``qhdesign.island.stage.solve_island_operating``, docs/
island.md) solves the same model (nonlinear Thomas–Fermi operating point, compressible strip as a
floating conductor, fixed bulk charge, Landau-level screening) on an independent discretisation:
a structured (r, z) grid with 1 nm cells at the strip and the gate edge, against the 3D layout
mesh (gmsh triangles x graded levels) with node rows along the strip. Same stack (QL-2417), same
ring gate (opening 400 nm, width 300 nm, -1.0 V), same ungated margin (300 nm; a square of side
2 um in 3D, a disk of radius 1 um axisymmetric), same filling 1/3, gap 120 ueV, field (the
primary's 1D density at 1/3), temperature and Landau widths (tau_q = 1 ps for every well).
Tolerance 2 % (issue 12). K_IL/K_I does not meet it at the CI resolution (docs/layout3d.md): the
check is a strict expected failure here (the heavy tier, tests/convergence/
test_layout3d_island_fine.py, meets it on a finer mesh), and a second check separates
discretisation from model: the
axisymmetric stage solved on the 3D mesh's own radial node positions (the strip rows around its
radii, the 40 nm cells elsewhere) and the 3D stage's z-levels must give the 3D value within 2 %.
Green's reciprocity (analytic): the two forms of K_IL/K_I agree.

The ring is two half-annuli at the same voltage that touch along the x axis: a layout file
refuses touching gates (a drawing error there), so the test builds the layout in Python.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from conftest import ROOT

from qhdesign.stack import load_stack

R_GATE, WIDTH, MARGIN, GATE_V = 400e-9, 300e-9, 300e-9, -1.0
#: 3D resolution of the test: 40 nm at the gate edges, 200 nm far (225k dofs on the second mesh);
#: finer runs are in docs/layout3d.md.
GATE_EDGE, FAR = 40e-9, 200e-9
AXISYMMETRIC = (
    "axisymmetric island stage (qhdesign.island.stage.solve_island_operating, docs/island.md): "
    "the same model on an independent (r, z) discretisation"
)


def ring_layout(gate_edge=GATE_EDGE, far=FAR, n=128):
    from qhdesign.layout.layoutfile import Gate, Layout

    def half(sign: float) -> np.ndarray:
        th = np.linspace(0.0, np.pi, n // 2 + 1)
        inner = np.column_stack([R_GATE * np.cos(th), sign * R_GATE * np.sin(th)])
        r_out = R_GATE + WIDTH
        outer = np.column_stack([r_out * np.cos(th[::-1]), sign * r_out * np.sin(th[::-1])])
        poly = np.vstack([inner, outer])  # inner arc anticlockwise, outer back: clockwise
        return poly[::-1] if sign > 0 else poly  # counter-clockwise, as a layout file's

    h = R_GATE + WIDTH + MARGIN
    return Layout(
        name="ring gate (axisymmetric check)",
        notes="",
        source="tests/consistency/test_layout3d_island.py",
        stack_path=Path("."),
        domain_m=((-h, h), (-h, h)),
        gate_edge_m=gate_edge,
        far_m=far,
        gates=(Gate("ring_upper", half(1.0), GATE_V), Gate("ring_lower", half(-1.0), GATE_V)),
        seed_m=(0.0, 0.0),
    )


@pytest.fixture(scope="module")
def both():
    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings, solve_island_operating
    from qhdesign.layout.model3d import Layout3DOptions, LayoutSolver
    from qhdesign.layout.response3d import island_response
    from qhdesign.pipeline import section_from_stack

    # the closed-form sheets of the 3D stage on both sides
    section = section_from_stack(
        load_stack(ROOT / "stacks" / "ql2417_screened.toml"), sheets="constant-dos"
    )
    settings = OperatingSettings(quantum_lifetime_s=1e-12)
    device = IslandDevice(GATE_V, gate_radius_m=R_GATE, gate_width_m=WIDTH, outer_margin_m=MARGIN)
    axi = solve_island_operating(section, device, settings).point
    solver = LayoutSolver(section, ring_layout(), Layout3DOptions())
    solver.solve()
    return axi, island_response(solver, settings), section, settings, device


@pytest.mark.slow
def test_charging_energy_matches_axisymmetric(both, record_check):
    axi, r3 = both[:2]
    e3 = r3.point.forms["charging_energy_J"]
    e2 = axi.forms["charging_energy_J"]
    # measured +1.3 % at the CI resolution (40 nm cells), +0.1 % with the gate-edge band
    record_check(
        "circular layout in 3D (40 nm cells): charging energy E_C = axisymmetric island stage's",
        AXISYMMETRIC,
        e3,
        e2,
        0.02,
        unit="J",
    )
    assert e3 == pytest.approx(e2, rel=0.02)


@pytest.mark.slow
@pytest.mark.xfail(
    strict=True,
    reason="discretisation, not model (test_axisymmetric_on_the_3d_nodes_matches_3d): K_IL/K_I "
    "+7.0 % at the CI mesh (40 nm isotropic cells); with the gate-edge band, 1.5 nm at the sheets "
    "and adapted strip rows +1.8 % (683k dofs, the heavy tier: "
    "tests/convergence/test_layout3d_island_fine.py; docs/layout3d.md)",
)
def test_ratio_matches_axisymmetric(both, record_check):
    axi, r3 = both[:2]
    record_check(
        "circular layout in 3D: K_IL/K_I = axisymmetric island stage's",
        AXISYMMETRIC,
        r3.point.ratio,
        axi.ratio,
        0.02,
    )
    assert r3.point.ratio == pytest.approx(axi.ratio, rel=0.02)


@pytest.mark.slow
def test_reciprocity_in_3d(both, record_check):
    r3 = both[1]
    p = r3.point
    record_check(
        "3D island: K_IL/K_I by reciprocity = by the induced charge",
        "analytic: Green's reciprocity theorem",
        p.r_direct,
        p.r_reciprocity,
        1e-6,
    )
    assert p.r_direct == pytest.approx(p.r_reciprocity, rel=1e-6)
    # physics: the edge term is positive and the ratio lies in (0, 1)
    assert p.K_I_edge_term_J > 0 and 0 < p.ratio < 1


def _grid_on_3d_nodes(orig, radii_m, z_opts):
    """build_grid for the axisymmetric stage with the radial nodes of the 3D mesh along a ray
    (``GATE_EDGE`` cells, the strip rows of qhdesign.layout.response3d around ``radii_m``) and
    the 3D stage's z-levels (``z_opts``: its MeshOptions for the levels)."""
    from qhdesign.layout.response3d import _row_offsets
    from qhdesign.section.geometry import StructuredGrid

    def build(section, layout, opts):
        g = orig(section, layout, opts)
        rmax = float(g.x_m[-1])
        x = [*np.arange(0.0, rmax, GATE_EDGE), rmax, *layout.edges_m]
        x += [r + o for r in radii_m for o in _row_offsets()]
        x = np.unique(np.clip(np.round(np.asarray(x), 12), 0.0, rmax))
        keep = [x[0]]
        for xi in x[1:]:  # as the rows: nodes nearer than 0.5 nm merge
            if xi - keep[-1] >= 0.5e-9 or xi == rmax:
                keep.append(xi)
        gz = orig(section, layout, z_opts)
        return StructuredGrid(
            np.asarray(keep), gz.z_m, gz.layer_of_interval, gz.sheet_level, g.layout,
            gz.read_level, gz.deep_level,
        )  # fmt: skip

    return build


@pytest.mark.slow
def test_axisymmetric_on_the_3d_nodes_matches_3d(both, record_check, monkeypatch):
    """Same model, same resolution, two geometries: the 3D excess over the axisymmetric stage is
    discretisation. Measured: 0.1859 against the 3D 0.1846 (+0.7 %). Not exact: a row of 40 nm
    radial cells renders the gate edge differently from 40 nm triangles (radii 243.8/298.2 nm
    here, 248.3/302.3 nm in 3D, which alone raises the axisymmetric ratio by about 2 %); with an
    8 nm gate-edge band on both sides and the default levels (docs/layout3d.md, not run in CI)
    the radii agree within 1.2 nm and the ratios within 0.6 %. With the earlier any-neighbour
    conductor rule the 3D gave 0.1948 here (+4.8 %)."""
    import qhdesign.section.solver as section_solver
    from qhdesign.island.stage import solve_island_operating
    from qhdesign.layout.model3d import DEFAULT_SHEET_LEVEL_M, Layout3DOptions
    from qhdesign.section.geometry import MeshOptions, build_grid

    axi, r3, section, settings, device = both
    o = Layout3DOptions()
    z_opts = MeshOptions(
        h_edge_m=o.h_surface_m,
        h_sheet_m=DEFAULT_SHEET_LEVEL_M,  # the ring's layout sets no mesh.sheet_level
        growth=o.growth,
        h_max_z_m=o.h_max_z_m,
        h_max_x_m=1e-6,
        half_width_m=1e-6,
        refine=o.refine,
    )  # the 3D stage's levels (qhdesign.layout.model3d.LayoutSolver)
    radii = (axi.strip.inner_radius_m, axi.strip.outer_radius_m)
    monkeypatch.setattr(section_solver, "build_grid", _grid_on_3d_nodes(build_grid, radii, z_opts))
    coarse = solve_island_operating(section, device, settings).point
    record_check(
        "axisymmetric stage on the 3D mesh's radial nodes and z-levels: K_IL/K_I = 3D",
        "axisymmetric island stage at the 3D resolution (independent geometry, same nodes)",
        coarse.ratio,
        r3.point.ratio,
        0.02,
    )
    assert coarse.ratio == pytest.approx(r3.point.ratio, rel=0.02)
    # and the resolution alone moves the axisymmetric value towards the 3D one
    assert coarse.ratio > axi.ratio
