"""The one tensor-mesh builder: a graded (x, z) node grid -> gmsh discrete model -> DOLFINx mesh.

Every FEM stage meshes a stack of layers, which are rectangles, so its mesh is the tensor product
of a horizontal node list (x, or r for an axisymmetric problem) and a z-level list, each
rectangle cut into two triangles. The grid is handed to gmsh as discrete entities (one surface
per layer, one curve per facet group) with physical groups and converted with
``dolfinx.io.gmsh.model_to_mesh``. This is O(N) numpy work: meshing never dominates a solve.

Conventions
-----------
* Mesh coordinates are nanometres with y = -z (height; the surface is y = 0), so a field file
  opens the right way up in ParaView.
* Grid node (level k, column i) has gmsh node tag ``k * nx + i + 1``; :class:`TensorNumbering`
  turns rows, row pieces and columns of the grid into line segments of node tags.
* The rectangle diagonal is mirrored at x = 0, so symmetric layouts stay symmetric on the mesh
  (an axisymmetric grid has r >= 0 everywhere and gets one diagonal direction).
* Cell tag = layer index + 1 (physical group per layer); facet tags are the caller's.
* The gmsh model is built on rank 0 only; the mesh is distributed with ghosted shared facets
  (:func:`qhdesign.fem.backend.mesh_from_gmsh`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["NM", "TensorModel", "TensorNumbering", "build_tensor_mesh", "gmsh_tensor_model"]

#: Mesh length unit (m): coordinates are in nanometres.
NM = 1e-9


@dataclass(frozen=True, eq=False)
class TensorNumbering:
    """gmsh node tags of a tensor grid with ``nx`` columns and ``nz`` levels.

    Examples
    --------
    >>> t = TensorNumbering(3, 2)
    >>> t.node.tolist()
    [[1, 2, 3], [4, 5, 6]]
    >>> t.row(1).tolist()
    [[4, 5], [5, 6]]
    >>> t.column(2).tolist()
    [[3, 6]]
    """

    nx: int
    nz: int

    @property
    def node(self) -> np.ndarray:
        """Node tags, shape (nz, nx); row k is level k."""
        return np.arange(1, self.nx * self.nz + 1, dtype=np.int64).reshape(self.nz, self.nx)

    def row(self, k: int, keep: np.ndarray | None = None) -> np.ndarray:
        """Segments along level ``k``, shape (M, 2); ``keep`` (nx-1,) selects intervals."""
        node = self.node
        seg = np.column_stack((node[k, :-1], node[k, 1:]))
        return seg if keep is None else seg[keep]

    def column(self, i: int) -> np.ndarray:
        """Segments along column ``i`` (all levels), shape (nz-1, 2)."""
        node = self.node
        return np.column_stack((node[:-1, i], node[1:, i]))


def _triangles(node: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The two triangles of every rectangle, shape (nz-1, nx-1, 3) each; diagonal mirrored at 0."""
    a = node[:-1, :-1]  # upper-left of each rectangle (level k, column i)
    b = node[:-1, 1:]
    c = node[1:, 1:]
    d = node[1:, :-1]
    xc = 0.5 * (x[1:] + x[:-1])
    right = np.broadcast_to(xc >= 0.0, a.shape)
    t1 = np.where(right[..., None], np.stack((a, b, c), -1), np.stack((a, b, d), -1))
    t2 = np.where(right[..., None], np.stack((a, c, d), -1), np.stack((b, c, d), -1))
    return t1, t2


@dataclass(frozen=True, eq=False)
class TensorModel:
    """A tensor grid with its layers and facet groups, ready to mesh.

    Attributes
    ----------
    name
        gmsh model name.
    x_m, z_m
        Horizontal nodes and z-levels (m), shapes (nx,), (nz,); z positive down.
    layer_of_interval
        Layer index of each z-interval, shape (nz-1,).
    n_layers
        Number of layers (surface tag and physical group ``layer + 1``).
    facet_groups
        ``(physical tag, name, segments)``: node-tag pairs (:class:`TensorNumbering`) of each
        facet group, in the order their curves are added; empty groups are skipped.
    """

    name: str
    x_m: np.ndarray
    z_m: np.ndarray
    layer_of_interval: np.ndarray
    n_layers: int
    facet_groups: Sequence[tuple[int, str, np.ndarray]] = ()


def gmsh_tensor_model(model: TensorModel) -> None:
    """Create the discrete gmsh model of a tensor grid (rank 0; gmsh must be initialised)."""
    import gmsh

    x = np.asarray(model.x_m, dtype=float) / NM
    y = -np.asarray(model.z_m, dtype=float) / NM
    num = TensorNumbering(x.size, y.size)
    node = num.node
    X, Y = np.meshgrid(x, y)  # (nz, nx): row = level
    coords = np.column_stack((X.ravel(), Y.ravel(), np.zeros(X.size))).ravel()
    gmsh.model.add(model.name)
    t1, t2 = _triangles(node, x)
    next_elem = 1
    first = True
    layer_of_interval = np.asarray(model.layer_of_interval)
    for li in range(model.n_layers):
        rows = np.nonzero(layer_of_interval == li)[0]
        if rows.size == 0:
            continue
        tag = li + 1
        gmsh.model.addDiscreteEntity(2, tag)
        if first:  # every node goes to the first surface
            gmsh.model.mesh.addNodes(2, tag, node.ravel(), coords)
            first = False
        tri = np.concatenate((t1[rows].reshape(-1, 3), t2[rows].reshape(-1, 3)))
        next_elem = _add_entity(gmsh, 2, tag, tri, next_elem, tag, f"layer{li}", add=False)
    curve = 0
    for phys, group_name, segments in model.facet_groups:
        seg = np.asarray(segments, dtype=np.int64).reshape(-1, 2)
        if seg.size == 0:
            continue
        curve += 1
        next_elem = _add_entity(gmsh, 1, curve, seg, next_elem, phys, group_name)


def _add_entity(gmsh, dim, tag, elements, next_elem, phys, name, *, add=True) -> int:
    """Add elements (triangles if dim 2, segments if dim 1; rows of node tags) to entity ``tag``
    (created unless ``add`` is False), put it in physical group ``phys``; next free element tag."""
    if add:
        gmsh.model.addDiscreteEntity(dim, tag)
    ne = elements.shape[0]
    # gmsh element type 2 is the 3-node triangle, type 1 the 2-node line: the type equals dim
    gmsh.model.mesh.addElementsByType(
        tag, dim, np.arange(next_elem, next_elem + ne), elements.ravel()
    )
    gmsh.model.addPhysicalGroup(dim, [tag], phys, name=name)
    return next_elem + ne


def build_tensor_mesh(model: TensorModel, comm):
    """Mesh a tensor grid with gmsh on rank 0 and distribute it (see :func:`gmsh_tensor_model`).

    Only rank 0 reads ``model`` (other ranks may pass None).

    Returns
    -------
    dolfinx.io.gmsh.MeshData
        ``.mesh``, ``.cell_tags`` (layer index + 1), ``.facet_tags`` (the groups' tags).
    """
    from .backend import mesh_from_gmsh

    return mesh_from_gmsh(lambda: gmsh_tensor_model(model), comm)
