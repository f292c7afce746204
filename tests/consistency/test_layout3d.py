"""3D layout model: far field = 1D, lever arm = finite difference of the area, serial = MPI.

Sources: the far-field check is the model's construction (the sheet energies are calibrated so
that an ungated column reproduces the 1D densities, as in the 2D stage); the lever-arm check
compares the linear-response derivative with a central finite difference of two nonlinear solves
(analytic: a derivative equals the limit of its difference quotient; the issue's 2 % tolerance);
serial = ``mpiexec -n 2`` to 1e-8 relative (island area, lever arm, charging energy, K_IL/K_I) is
the project's determinism rule (issue 12).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from conftest import ROOT

from qhdesign.layout import load_layout
from qhdesign.stack import load_stack

CIRCLE = ROOT / "stacks" / "layouts" / "ql2417_fp_circle.toml"
SMALL = 0.5  # refine factor for the tests: about 50k dofs


@pytest.fixture(scope="module")
def solved():
    from qhdesign.layout.model3d import Layout3DOptions, LayoutSolver
    from qhdesign.pipeline import section_from_stack

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    lay = load_layout(CIRCLE, stack)
    section = section_from_stack(stack, sheets="constant-dos")
    sol = LayoutSolver(section, lay, Layout3DOptions(refine=SMALL))
    sol.solve()
    return sol


@pytest.mark.slow
def test_far_field_equals_1d(solved):
    dens = solved.sheet_densities()
    xy = solved.plane.xy_m
    corner = int(np.argmax(np.abs(xy[:, 0]) + np.abs(xy[:, 1])))  # farthest from the gates
    bulk = np.array([s.density_m2 for s in solved.section.sheets])
    assert np.allclose(dens[:, corner], bulk, rtol=1e-3)


@pytest.mark.slow
def test_lever_arm_equals_finite_difference(solved):
    from qhdesign.layout.stage import analyse

    base = analyse(solved)
    lay = solved.layout
    (plunger,) = lay.plungers
    lever = base["levers"][plunger]
    # physics: a less negative plunger shrinks the depletion, the island grows
    assert lever > 0
    # the electronic island lies inside the lithographic opening (depletion only moves it in)
    r = lay.island.radius_m
    assert 0 < base["area"] < np.pi * r**2
    v0 = solved.voltages[plunger]
    dv = 0.01
    areas = []
    for v in (v0 - dv, v0 + dv):
        solved.solve({plunger: v})
        areas.append(analyse(solved, lever_arm=False)["area"])
    solved.solve({plunger: v0})
    fd = (areas[1] - areas[0]) / (2 * dv)
    assert lever == pytest.approx(fd, rel=0.02)


@pytest.mark.mpi
@pytest.mark.slow
def test_mpi_two_ranks_equal_serial(tmp_path):
    env = dict(os.environ, OMP_NUM_THREADS="1")
    bindir = Path(sys.executable).parent
    stack = str(ROOT / "stacks" / "ql2417_screened.toml")
    cmd = [str(bindir / "qhdesign"), "layout", stack, str(CIRCLE), "--refine", str(SMALL)]
    # with the island's linear response (K's, E_C) at the default field
    cmd += ["--gap", "120 ueV", "--quantum-lifetime", "1 ps"]
    serial, parallel = tmp_path / "serial.json", tmp_path / "mpi.json"
    subprocess.run([*cmd, "--json", str(serial)], check=True, env=env, timeout=900, cwd=ROOT)
    subprocess.run(
        [str(bindir / "mpiexec"), "-n", "2", *cmd, "--json", str(parallel)],
        check=True,
        env=env,
        timeout=900,
        cwd=ROOT,
    )
    a, b = json.loads(serial.read_text()), json.loads(parallel.read_text())
    assert b["info"]["ranks"] == 2 and a["info"]["ranks"] == 1
    assert b["info"]["dofs"] == a["info"]["dofs"]
    assert b["A_I_m2"] == pytest.approx(a["A_I_m2"], rel=1e-8)
    assert b["dA_I_dV_m2_per_V"] == pytest.approx(a["dA_I_dV_m2_per_V"], rel=1e-8)
    assert b["charging_energy_J"] == pytest.approx(a["charging_energy_J"], rel=1e-8)
    assert b["K_IL_over_K_I"] == pytest.approx(a["K_IL_over_K_I"], rel=1e-8)
    assert b["strip"]["A_L_m2"] == pytest.approx(a["strip"]["A_L_m2"], rel=1e-8)
    for ca, cb in zip(a["constrictions"], b["constrictions"], strict=True):
        for well, wa in ca["wells"].items():
            wb = cb["wells"][well]
            assert wa["state"] == wb["state"]
            if wa["min_density_m2"] > 1e9:  # an empty well's density is ~1e-280: compare filled
                assert wb["min_density_m2"] == pytest.approx(wa["min_density_m2"], rel=1e-8)
