"""Island stage: Maxwell-matrix properties, screening limits, quantum capacitance, the stack path,
and serial = ``mpiexec -n 2``.

Sources: capacitance-matrix properties (symmetric, positive diagonal, negative off-diagonal,
non-negative row sums) are analytic facts of electrostatics (J. D. Jackson, Classical
Electrodynamics, 3rd ed., sec. 1.11); the screening-plane trends are the brief's physics (closer
grounded planes decouple edge and bulk); the quantum-capacitance shift eps/(e^2 D) = a_B*/4 is
docs/derivations.md sec. 2 (Luryi, Appl. Phys. Lett. 52, 501 (1988)).
"""

from __future__ import annotations

import itertools
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.island_options import island_inputs
from qhdesign.stack import load_stack
from qhdesign.tf2d import IslandColumn, solve_island
from qhdesign.tf2d.island import PHI0, WellLine

ROOT = Path(__file__).resolve().parents[2]
# 2D DOS with spin, m* = 0.067 (analytic, docs/derivations.md sec. 1)
D_GAAS = 0.067 * sc.m_e / (np.pi * sc.hbar**2)
Z_PRIMARY = 300e-9


def column(setback: float | None) -> IslandColumn:
    """Uniform kappa 12.9; primary well 300 nm deep; screening planes at +-setback (or none)."""
    wells = [WellLine("p", "primary", Z_PRIMARY, D_GAAS, 1e15)]
    if setback is not None:
        wells = [
            WellLine("up", "screening", Z_PRIMARY - setback, D_GAAS, 2e15),
            *wells,
            WellLine("lo", "screening", Z_PRIMARY + setback, D_GAAS, 2e15),
        ]
    return IslandColumn((0.0, 600e-9), (12.9,), tuple(wells), "surface", "open")


@pytest.fixture(scope="module")
def stack_island():
    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    return solve_island(stack, *island_inputs(radius="0.8 um", filling="1/3", gap="0.05 meV"))


def test_stack_path_end_to_end(stack_island):
    r = stack_island
    assert r.column_name == "QL-2417 screened well"
    assert set(r.sheets) == {"screen_upper", "screen_lower", "primary_outside"}
    # the primary well is the island, at its 1D centroid (stack notes: centre 145 nm deep)
    assert r.primary_depth_m == pytest.approx(152e-9, abs=2e-9)
    s = r.summary()
    assert all(isinstance(v, float) and np.isfinite(v) for v in s.values())
    assert s["area_um2"] == pytest.approx(np.pi * 0.8**2, rel=1e-12)  # analytic: pi R^2
    assert s["compressible_period_mT"] == pytest.approx(1e3 * PHI0 / (np.pi * 0.8e-6**2))
    # docs/derivations.md sec. 11 (our derivation), nu = 1/3: window A/Phi0 = 1 + 9 Delta/E_C
    window = s["fixed_filling_window_mT"] * 1e-3 * np.pi * 0.8e-6**2 / PHI0
    assert window == pytest.approx(1 + 9 * 0.05e3 / s["E_C_ueV"], rel=1e-12)
    # K~ = K_L - K_IL^2/K_I equals e^2/C_LL exactly (2x2 inverse, analytic)
    assert r.K_tilde_J == pytest.approx(sc.e**2 / r.capacitance_F[1, 1], rel=1e-12)


def test_maxwell_matrix_properties(stack_island):
    C = stack_island.capacitance_F
    info = stack_island.info
    assert info["reciprocity_error"] < 1e-10  # Q_j(u_i) = Q_i(u_j) from the solves
    assert info["reaction_vs_energy"] < 1e-10  # reaction charges = energy form
    assert np.allclose(C, C.T, rtol=0, atol=1e-10 * C.max())
    assert C[0, 0] > 0 and C[1, 1] > 0 and C[0, 1] < 0
    assert np.all(C.sum(axis=1) >= 0)  # row sums: capacitance to everything else


@pytest.fixture(scope="module")
def setback_scan():
    out = {}
    for s in (10e-9, 20e-9, 40e-9, 80e-9, None):
        out[s] = solve_island(
            column(s), *island_inputs(radius="0.5 um", screening="grounded", outer_well=False)
        )
    return out


def test_grounded_planes_decouple_edge_and_bulk(setback_scan):
    ratios = [setback_scan[s].ratio for s in (10e-9, 20e-9, 40e-9, 80e-9)]
    none = setback_scan[None].ratio
    assert all(a < b for a, b in itertools.pairwise(ratios))  # monotone in setback
    assert ratios[-1] < none  # no planes: strongest coupling (measured 0.70)
    assert ratios[0] < 0.02  # planes 10 nm away: K_IL/K_I small (measured 0.006)
    assert all(0 < x < 1 for x in [*ratios, none])


@pytest.mark.parametrize("setback", [20e-9, 40e-9])
def test_thomas_fermi_sheet_equals_shifted_plane(setback):
    # a linear TF sheet screens like a grounded plane moved away by eps/(e^2 D) = a_B*/4
    # (2.55 nm at kappa 12.9; docs/derivations.md sec. 2); exact for uniform fields, fringes differ
    delta = 12.9 * sc.epsilon_0 / (sc.e**2 * D_GAAS)
    assert delta == pytest.approx(2.55e-9, abs=0.01e-9)
    tf = solve_island(
        column(setback), *island_inputs(radius="0.5 um", screening="tf", outer_well=False)
    )
    plane = solve_island(
        column(setback + delta),
        *island_inputs(radius="0.5 um", screening="grounded", outer_well=False),
    )
    # bulk self-capacitance (area dominated): measured 0.14 % and 0.06 %
    assert tf.capacitance_F[1, 1] == pytest.approx(plane.capacitance_F[1, 1], rel=5e-3)
    assert (
        tf.ratio
        > solve_island(
            column(setback), *island_inputs(radius="0.5 um", screening="grounded", outer_well=False)
        ).ratio
    )  # quantum capacitance weakens the screening


MPI_SCRIPT = textwrap.dedent(
    """
    import sys
    import numpy as np
    from mpi4py import MPI
    from qhdesign.stack import load_stack
    from qhdesign.island_options import island_inputs
    from qhdesign.tf2d import solve_island

    r = solve_island(load_stack(sys.argv[2]), *island_inputs(radius="0.6 um", ring_width="40 nm"))
    if MPI.COMM_WORLD.rank == 0:
        np.save(sys.argv[1], r.capacitance_F)
    """
)


@pytest.mark.mpi
def test_mpi_two_ranks_equal_serial(tmp_path):
    script = tmp_path / "island_run.py"
    script.write_text(MPI_SCRIPT)
    env = dict(os.environ, OMP_NUM_THREADS="1")
    bindir = Path(sys.executable).parent
    stack = str(ROOT / "stacks" / "ql2417_screened.toml")
    serial, parallel = tmp_path / "serial.npy", tmp_path / "mpi.npy"
    subprocess.run(
        [sys.executable, str(script), str(serial), stack], check=True, env=env, timeout=300
    )
    subprocess.run(
        [str(bindir / "mpiexec"), "-n", "2", sys.executable, str(script), str(parallel), stack],
        check=True,
        env=env,
        timeout=300,
    )
    a, b = np.load(serial), np.load(parallel)
    assert np.max(np.abs(a - b)) <= 1e-10 * np.max(np.abs(a))  # brief: identical to ~1e-10
