"""Heavy tier: the circular layout in 3D reproduces the axisymmetric island's K_IL/K_I and E_C
within 2 % (issue 12) on a mesh that resolves the gate edge and the strip.

Source: the axisymmetric island stage (``qhdesign.island.stage.solve_island_operating``,
docs/island.md), the same model on an independent (r, z) discretisation with 1 nm cells at the
strip and the gate edge, as in tests/consistency/test_layout3d_island.py, whose CI-sized 3D mesh
(40 nm isotropic cells) is too coarse for K_IL/K_I (a strict expected failure there). Here the
3D mesh adds an 8 nm gate-edge band 60 nm wide, first row 1 nm from the edge, 1.5 nm levels
at the sheets and strip rows adapted to the curvature (tests/convergence/ring3d_fine.py).
Tolerance 2 % (issue 12).

Measured 2026-12-03, 2 ranks of the 2-core machine: K_IL/K_I +1.80 %, E_C -0.71 % (683k dofs on
the first mesh, 501 s for the four solves); without the adapted rows +2.40 % and -0.98 %. Not
run in CI: ``make test-heavy``.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import ROOT

from qhdesign.stack import load_stack

HERE = Path(__file__).resolve().parent
AXISYMMETRIC = (
    "axisymmetric island stage (qhdesign.island.stage.solve_island_operating, docs/island.md): "
    "the same model on an independent (r, z) discretisation"
)


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    sys.path.insert(0, str(ROOT / "tests" / "consistency"))
    from test_layout3d_island import GATE_V, MARGIN, R_GATE, WIDTH

    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings, solve_island_operating
    from qhdesign.pipeline import section_from_stack

    section = section_from_stack(
        load_stack(ROOT / "stacks" / "ql2417_screened.toml"), sheets="constant-dos"
    )
    device = IslandDevice(GATE_V, gate_radius_m=R_GATE, gate_width_m=WIDTH, outer_margin_m=MARGIN)
    axi = solve_island_operating(section, device, OperatingSettings(quantum_lifetime_s=1e-12))
    out = tmp_path_factory.mktemp("ring3d") / "ring3d.json"
    bindir = Path(sys.executable).parent
    subprocess.run(
        [
            str(bindir / "mpiexec"),
            "-n",
            "2",
            sys.executable,
            str(HERE / "ring3d_fine.py"),
            str(out),
        ],
        check=True,
        cwd=ROOT,
    )
    return axi.point, json.loads(out.read_text())


@pytest.mark.heavy
@pytest.mark.mpi
@pytest.mark.fem
def test_ratio_matches_axisymmetric_on_the_fine_mesh(both, record_check):
    axi, r3 = both
    record_check(
        "circular layout in 3D (8 nm gate-edge band): K_IL/K_I = axisymmetric island stage's",
        AXISYMMETRIC,
        r3["ratio"],
        axi.ratio,
        0.02,
    )
    assert r3["ratio"] == pytest.approx(axi.ratio, rel=0.02)


@pytest.mark.heavy
@pytest.mark.mpi
@pytest.mark.fem
def test_charging_energy_and_strip_match_axisymmetric_on_the_fine_mesh(both, record_check):
    axi, r3 = both
    e2 = axi.forms["charging_energy_J"]
    record_check(
        "circular layout in 3D (8 nm gate-edge band): E_C = axisymmetric island stage's",
        AXISYMMETRIC,
        r3["charging_energy_J"],
        e2,
        0.02,
        unit="J",
    )
    assert r3["charging_energy_J"] == pytest.approx(e2, rel=0.02)
    # the strip's area-equivalent radii (measured 0.06 nm and 0.4 nm apart): the island is the
    # same size, not a compensation of errors
    assert r3["inner_radius_m"] == pytest.approx(axi.strip.inner_radius_m, abs=1e-9)
    assert r3["outer_radius_m"] == pytest.approx(axi.strip.outer_radius_m, abs=1e-9)
