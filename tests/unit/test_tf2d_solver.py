"""Solver behaviour: non-convergence raises ConvergenceError with the residual history."""

from __future__ import annotations

import pytest

from qhdesign.errors import ConvergenceError
from qhdesign.tf2d import CrossSectionSolver, GateLayout, MeshOptions, SolverOptions
from qhdesign.tf2d.examples import screened_section


def test_newton_failure_raises_with_residual_history():
    solver = CrossSectionSolver(
        screened_section(),
        GateLayout.single_edge(),
        MeshOptions(refine=0.5),
        SolverOptions(max_it=1),  # one Newton step cannot reach 1e-12 e/nm from the 1D column
    )
    with pytest.raises(ConvergenceError) as info:
        solver.solve(-1.0)
    err = info.value
    assert err.solver == "2D Thomas–Fermi Newton"
    assert err.residuals and err.residuals[0] > 1e-12
    assert err.residual_unit == "e/nm"
    assert "\n" not in str(err)


def test_multigrid_and_direct_solvers_give_the_same_solution():
    # the same discrete problem: CG + GAMG (large meshes) must reproduce LU (small meshes)
    import numpy as np

    sols = []
    for kind in ("lu", "gamg"):
        solver = CrossSectionSolver(
            screened_section(),
            GateLayout.single_edge(),
            MeshOptions(refine=0.5),
            SolverOptions(linear_solver=kind),
        )
        assert solver.linear_solver == kind
        sols.append(solver.solve(-0.8).density_m2)
    scale = np.max(np.abs(sols[0]))
    assert np.max(np.abs(sols[0] - sols[1])) < 1e-8 * scale
