"""Load the DOLFINx stack in the order it needs: mpi4py's MPI before dolfinx.

``libmpi`` is found only when ``mpi4py.MPI`` is loaded first (observed with the DOLFINx 0.11
wheels); keeping the order in one function protects it from import sorting. Part of the FEM
engine, :mod:`qhdesign.fem`.
"""

from __future__ import annotations

import functools

__all__ = ["load", "mesh_from_gmsh", "write_fields"]


@functools.cache
def load():
    """Import mpi4py.MPI, then dolfinx (with fem.petsc and io.gmsh); return ``(MPI, dolfinx)``."""
    from mpi4py import MPI

    # isort: split
    import dolfinx
    import dolfinx.fem.petsc
    import dolfinx.io.gmsh

    return MPI, dolfinx


def mesh_from_gmsh(build_model, comm, gdim: int = 2):
    """Build a gmsh model on rank 0 with ``build_model()`` and distribute it as a DOLFINx mesh.

    gmsh is started here (not interruptible, quiet) unless it already runs, and finalized only if
    started here. Facets are ghosted (``GhostMode.shared_facet``): interior-facet (sheet)
    integrals need it in parallel (facets on a process boundary need both neighbouring cells).
    ``gdim`` is the geometric dimension (2 for the (x, z) and (r, z) meshes).

    Returns
    -------
    dolfinx.io.gmsh.MeshData
    """
    _, dolfinx = load()
    partitioner = dolfinx.mesh.create_cell_partitioner(dolfinx.mesh.GhostMode.shared_facet, 2)
    gmsh = None
    started = False
    try:
        if comm.rank == 0:
            import gmsh

            if not gmsh.isInitialized():
                gmsh.initialize(interruptible=False)
                started = True
            gmsh.option.setNumber("General.Terminal", 0)
            build_model()
            data = dolfinx.io.gmsh.model_to_mesh(
                gmsh.model, comm, 0, gdim=gdim, partitioner=partitioner
            )
            gmsh.model.remove()
        else:
            data = dolfinx.io.gmsh.model_to_mesh(None, comm, 0, gdim=gdim, partitioner=partitioner)
    finally:
        if started and gmsh is not None:
            gmsh.finalize()
    return data


def write_fields(path, comm, mesh, potential, permittivity) -> None:
    """Write the mesh, the potential and the relative permittivity (a DG0 function, written as
    ``relative_permittivity``) to one XDMF file, collectively on ``comm`` (lengths as in the mesh,
    nm)."""
    _, dolfinx = load()
    from dolfinx.io import XDMFFile

    eps = dolfinx.fem.Function(permittivity.function_space, name="relative_permittivity")
    eps.x.array[:] = permittivity.x.array
    with XDMFFile(comm, str(path), "w") as f:
        f.write_mesh(mesh)
        f.write_function(potential)
        f.write_function(eps)
