"""Load the DOLFINx stack in the order it needs: mpi4py's MPI before dolfinx.

``libmpi`` is found only when ``mpi4py.MPI`` is loaded first (DOLFINX-NOTES.md); keeping the
order in one function protects it from import sorting.
"""

from __future__ import annotations

import functools

__all__ = ["load"]


@functools.cache
def load():
    """Import mpi4py.MPI, then dolfinx (with fem.petsc and io.gmsh); return ``(MPI, dolfinx)``."""
    from mpi4py import MPI

    # isort: split
    import dolfinx
    import dolfinx.fem.petsc
    import dolfinx.io.gmsh

    return MPI, dolfinx
