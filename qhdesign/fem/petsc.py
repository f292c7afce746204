"""PETSc option sets of the FEM stages, each used under its own options prefix.

Every solver object gets a unique prefix (:func:`options_prefix`), so the options of one stage
never leak into another, and a user may still steer one of them from the PETSc options database
by its prefix. The sets:

* :func:`newton` -- SNES Newton with a backtracking line search (nonlinear cross-section);
* :data:`LU_MUMPS` -- direct solve, LU factorisation by MUMPS (small and medium problems; one
  factorisation serves every right-hand side);
* :data:`CG_GAMG` -- conjugate gradients with algebraic multigrid (large symmetric positive
  definite problems; no hypre in the wheel).

References
----------
S. Balay et al., PETSc/TAO Users Manual, ANL-21/39 (Argonne National Laboratory), chapters on
SNES, KSP and PC (the option names).
"""

from __future__ import annotations

import itertools

__all__ = ["CG_GAMG", "LU_MUMPS", "linear_solver", "newton", "options_prefix"]

#: Direct solve: LU by MUMPS.
LU_MUMPS = {"ksp_type": "preonly", "pc_type": "lu", "pc_factor_mat_solver_type": "mumps"}
#: Iterative solve of a symmetric positive definite system: CG + GAMG with Chebyshev/Jacobi.
CG_GAMG = {
    "ksp_type": "cg",
    "pc_type": "gamg",
    "ksp_rtol": 1e-9,
    "ksp_atol": 1e-16,
    "ksp_max_it": 500,
    "pc_gamg_threshold": 0.02,
    "mg_levels_ksp_type": "chebyshev",
    "mg_levels_pc_type": "jacobi",
}

_COUNTER = itertools.count()


def options_prefix(stage: str) -> str:
    """A fresh options prefix ``qh_<stage>_<n>_`` (n counts up in this process)."""
    return f"qh_{stage}_{next(_COUNTER)}_"


def newton(rtol: float, atol: float, max_it: int) -> dict:
    """SNES Newton, backtracking line search; residual tolerances and iteration cap."""
    return {
        "snes_type": "newtonls",
        "snes_linesearch_type": "bt",
        "snes_rtol": rtol,
        "snes_atol": atol,
        "snes_stol": 0.0,
        "snes_max_it": max_it,
    }


def linear_solver(comm, A, options: dict, prefix: str):
    """A KSP for the assembled matrix ``A``, configured from ``options`` under ``prefix``.

    The options are written to the PETSc options database under the prefix, read by
    ``setFromOptions`` and removed again, so nothing stays behind for other solvers.
    """
    from petsc4py import PETSc

    ksp = PETSc.KSP().create(comm)
    ksp.setOptionsPrefix(prefix)
    ksp.setOperators(A)
    db = PETSc.Options()
    for key, value in options.items():
        db[f"{prefix}{key}"] = value
    try:
        ksp.setFromOptions()
    finally:
        for key in options:
            db.delValue(f"{prefix}{key}")
    return ksp
