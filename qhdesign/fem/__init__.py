"""The finite-element engine under every FEM stage (DOLFINx 0.11, PETSc, gmsh).

Stage packages (:mod:`qhdesign.section`, :mod:`qhdesign.island`, later 3D layouts) build on these
modules; nothing here knows a stack, a well or a gate layout:

* :mod:`~qhdesign.fem.backend` -- loads mpi4py before dolfinx; ``mesh_from_gmsh``;
* :mod:`~qhdesign.fem.grid` -- the graded node generator (``graded_nodes``);
* :mod:`~qhdesign.fem.tensor_mesh` -- tensor grid -> gmsh numbering -> DOLFINx mesh;
* :mod:`~qhdesign.fem.forms` -- weak-form pieces (dielectric with optional r weight, sheet
  terms, far-field Robin term, the series-layer Robin term of a gate dielectric);
* :mod:`~qhdesign.fem.petsc` -- PETSc option sets, each used under its own options prefix;
* :mod:`~qhdesign.fem.capacitance` -- the axisymmetric linear capacitance solver (build,
  assemble, solve, extract).

Importing this package is light: dolfinx, gmsh, mpi4py and petsc4py load inside the functions
that need them.
"""

from __future__ import annotations

__all__: list[str] = []
