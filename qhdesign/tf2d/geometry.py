"""Cross-section geometry and mesh: a structured, graded (x, z) grid built with the gmsh API.

Layers are rectangles, so the mesh is the tensor product of a graded x-node list (fine at the gate
edges) and a graded z-level list (fine at the surface and at every sheet, with a level on every
layer boundary, sheet and probe line), each rectangle cut into two triangles. The grid is handed
to gmsh as discrete entities with physical groups (one per layer, one per sheet line, gate and
exposed parts of the surface, bottom, sides, the other horizontal levels) and converted with
``dolfinx.io.gmsh.model_to_mesh``. This costs O(N) numpy work: meshing never dominates a solve.

Mesh coordinates are in nanometres with y = -z (height; the surface is y = 0), so a field file
opens the right way up in ParaView.

The gmsh model is built on rank 0 only; the mesh is distributed with ghosted shared facets, which
interior-facet (sheet) integrals need in parallel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from qhdesign.errors import InputError

from .grid import graded_nodes
from .model import CrossSection

__all__ = ["TAGS", "GateLayout", "MeshOptions", "StructuredGrid", "build_grid", "build_mesh"]

NM = 1e-9

#: Facet tags. Sheet i (top to bottom) is ``TAGS["sheet0"] + i``.
TAGS = {"gate": 1, "exposed": 2, "bottom": 3, "sides": 4, "levels": 5, "sheet0": 100}


@dataclass(frozen=True)
class GateLayout:
    """Surface gates on the cross-section.

    Attributes
    ----------
    gates_m
        x-intervals (m) covered by gate metal; +-inf extends to the domain ends.
    edges_m
        Lithographic gate edges (m), where the mesh is finest.
    """

    gates_m: tuple[tuple[float, float], ...]
    edges_m: tuple[float, ...]

    @staticmethod
    def single_edge() -> GateLayout:
        """One depletion gate over x < 0; its edge at x = 0."""
        return GateLayout(((-np.inf, 0.0),), (0.0,))

    @staticmethod
    def split(gap_m: float) -> GateLayout:
        """Split gate: metal over |x| > gap/2 (a constriction cross-section)."""
        h = 0.5 * gap_m
        return GateLayout(((-np.inf, -h), (h, np.inf)), (-h, h))

    @staticmethod
    def strip(width_m: float) -> GateLayout:
        """A single gate strip over |x| < width/2."""
        h = 0.5 * width_m
        return GateLayout(((-h, h),), (-h, h))

    def covers(self, x_m: np.ndarray) -> np.ndarray:
        """True where x (m) lies under metal (open intervals)."""
        x = np.asarray(x_m)
        out = np.zeros(x.shape, dtype=bool)
        for a, b in self.gates_m:
            out |= (x > a) & (x < b)
        return out


@dataclass(frozen=True)
class MeshOptions:
    """Mesh resolution (all sizes in m; ``refine`` divides every size and the growth rate, so
    ``refine=2`` halves every cell and gives about four times the dofs).

    The defaults are the "default resolution" of docs/performance.md.
    """

    h_edge_m: float = 1.0e-9  # x-size at the gate edges and z-size at the surface
    h_sheet_m: float = 1.0e-9  # z-size at each sheet
    growth: float = 0.1  # linear size growth away from an attractor
    h_max_x_m: float = 100e-9
    h_max_z_m: float = 50e-9
    half_width_m: float | None = None  # domain is |x| <= half width; None: automatic
    refine: float = 1.0
    x_attractors_m: tuple[float, ...] = ()  # extra x positions meshed at h_edge

    def scaled(self, factor: float) -> MeshOptions:
        """The same options with every size divided by ``factor``."""
        from dataclasses import replace

        return replace(self, refine=self.refine * factor)


@dataclass(frozen=True, eq=False)
class StructuredGrid:
    """The tensor grid before meshing (SI units)."""

    x_m: np.ndarray  # (nx,)
    z_m: np.ndarray  # (nz,) levels, 0 at the surface, increasing downward
    layer_of_interval: np.ndarray  # (nz-1,) layer index of each z-interval
    sheet_level: np.ndarray  # (S,) level index of each sheet
    layout: GateLayout

    @property
    def num_vertices(self) -> int:
        return self.x_m.size * self.z_m.size


def _default_half_width(section: CrossSection) -> float:
    deepest = max([s.z_m for s in section.sheets] + [100e-9])
    return max(3.0e-6, 30.0 * deepest)


def build_grid(section: CrossSection, layout: GateLayout, opts: MeshOptions) -> StructuredGrid:
    """Graded x-nodes and z-levels for a cross-section and a gate layout."""
    r = float(opts.refine)
    X = opts.half_width_m or _default_half_width(section)
    h_edge, h_sheet = opts.h_edge_m / r, opts.h_sheet_m / r
    edges = [float(e) for e in layout.edges_m]
    marks = [float(a) for a in opts.x_attractors_m]
    for e in edges + marks:
        if abs(e) >= X:
            raise InputError(
                f"gate edge at {e * 1e9:.1f} nm lies outside the domain (|x| < {X * 1e9:.0f} nm)",
                key="gap_m",
            )
    if len(layout.edges_m) >= 2:
        smallest = np.min(np.diff(np.sort(layout.edges_m)))
        if smallest < 8 * h_edge:
            raise InputError(
                f"gap {smallest * 1e9:.2f} nm is narrower than the mesh can resolve "
                f"(at least 8 cells of {h_edge * 1e9:.2f} nm: >= {8 * h_edge * 1e9:.1f} nm)",
                key="gap_m",
            )
    # an attractor far enough from every breakpoint becomes a node too (a centre, an edge)
    nodes_at = list(edges)
    for m in marks:
        if all(abs(m - b) > 4 * h_edge for b in [-X, *nodes_at, X]):
            nodes_at.append(m)
    growth = opts.growth / r  # a refined mesh halves every cell, not only the finest ones
    x = graded_nodes(
        [-X, *nodes_at, X],
        [(e, h_edge) for e in edges + marks],
        growth,
        opts.h_max_x_m / r,
        min_cells=2,
    )
    z_layers = np.asarray(section.layer_z_m, dtype=float)
    sheet_z = [s.z_m for s in section.sheets]
    fixed = [*z_layers.tolist(), *sheet_z, *section.extra_levels_m]
    z_attr = [(float(z_layers[0]), h_edge)] + [(zs, h_sheet) for zs in sheet_z]
    z_attr += [(float(zl), 4 * h_sheet) for zl in z_layers[1:-1]]
    z_attr += [(float(zp), h_sheet) for zp in section.extra_levels_m]
    z = graded_nodes(fixed, z_attr, growth, opts.h_max_z_m / r, min_cells=1)
    mid = 0.5 * (z[1:] + z[:-1])
    layer = np.clip(np.searchsorted(z_layers, mid) - 1, 0, z_layers.size - 2)
    sheet_level = np.array([int(np.argmin(np.abs(z - zs))) for zs in sheet_z], dtype=int)
    for k, zs in zip(sheet_level, sheet_z, strict=True):
        z[k] = zs  # exact sheet depth (graded_nodes keeps breakpoints; this only removes fp noise)
    return StructuredGrid(x, z, layer, sheet_level, layout)


def add_layer_surfaces(gmsh, node, coords, t1, t2, layer_of_row, n_layers):
    """Add the triangles of a tensor grid to a gmsh model as one discrete surface per layer.

    ``t1``/``t2`` are the two triangles of every rectangle, shape (rows, columns, 3), and
    ``layer_of_row`` the layer of each row of rectangles. The nodes (``node`` tags, ``coords``)
    go to the first surface. Each layer's surface gets tag and physical group ``layer + 1``.

    Returns
    -------
    (surface tags, next free element tag)
    """
    next_elem = 1
    tags = []
    first = True
    for li in range(n_layers):
        rows = np.nonzero(layer_of_row == li)[0]
        if rows.size == 0:
            continue
        tag = li + 1
        gmsh.model.addDiscreteEntity(2, tag)
        if first:
            gmsh.model.mesh.addNodes(2, tag, node.ravel(), coords)
            first = False
        tri = np.concatenate((t1[rows].reshape(-1, 3), t2[rows].reshape(-1, 3)))
        ne = tri.shape[0]
        gmsh.model.mesh.addElementsByType(tag, 2, np.arange(next_elem, next_elem + ne), tri.ravel())
        next_elem += ne
        tags.append(tag)
        gmsh.model.addPhysicalGroup(2, [tag], tag, name=f"layer{li}")
    return tags, next_elem


def _gmsh_model(grid: StructuredGrid, section: CrossSection, charged_levels=None):
    """Create the discrete gmsh model of the grid (rank 0). Returns the gmsh module."""
    import gmsh

    x_nm = grid.x_m / NM
    y_nm = -grid.z_m / NM
    nx, nz = x_nm.size, y_nm.size
    X, Y = np.meshgrid(x_nm, y_nm)  # (nz, nx): row = level
    coords = np.column_stack((X.ravel(), Y.ravel(), np.zeros(X.size))).ravel()
    node = np.arange(1, nx * nz + 1, dtype=np.int64).reshape(nz, nx)

    gmsh.model.add("qhdesign_cross_section")
    # Triangles per z-interval; the diagonal is mirrored at x = 0 so symmetric layouts stay
    # symmetric on the mesh.
    a = node[:-1, :-1]  # upper-left of each rectangle (level k, column i)
    b = node[:-1, 1:]
    c = node[1:, 1:]
    d = node[1:, :-1]
    xc = 0.5 * (x_nm[1:] + x_nm[:-1])
    right = np.broadcast_to(xc >= 0.0, a.shape)
    t1 = np.where(right[..., None], np.stack((a, b, c), -1), np.stack((a, b, d), -1))
    t2 = np.where(right[..., None], np.stack((a, c, d), -1), np.stack((b, c, d), -1))
    # one discrete surface per layer
    _, next_elem = add_layer_surfaces(
        gmsh, node, coords, t1, t2, grid.layer_of_interval, len(section.layer_permittivity)
    )

    curve_tag = [0]

    def add_curve(segments: np.ndarray, phys: int, name: str) -> None:
        nonlocal next_elem
        if segments.size == 0:
            return
        curve_tag[0] += 1
        gmsh.model.addDiscreteEntity(1, curve_tag[0])
        ne = segments.shape[0]
        gmsh.model.mesh.addElementsByType(
            curve_tag[0], 1, np.arange(next_elem, next_elem + ne), segments.ravel()
        )
        next_elem += ne
        gmsh.model.addPhysicalGroup(1, [curve_tag[0]], phys, name=name)

    def row_segments(k: int) -> np.ndarray:
        return np.column_stack((node[k, :-1], node[k, 1:]))

    top = row_segments(0)
    gated = grid.layout.covers(xc * NM)
    add_curve(top[gated], TAGS["gate"], "gate")
    add_curve(top[~gated], TAGS["exposed"], "exposed")
    add_curve(row_segments(nz - 1), TAGS["bottom"], "bottom")
    sides = np.concatenate(
        (
            np.column_stack((node[:-1, 0], node[1:, 0])),
            np.column_stack((node[:-1, -1], node[1:, -1])),
        )
    )
    add_curve(sides, TAGS["sides"], "sides")
    sheet_levels = set(int(k) for k in grid.sheet_level)
    inner = [k for k in range(1, nz - 1) if k not in sheet_levels]
    if charged_levels is not None:  # only levels that carry frozen charge need a tag
        keep = {int(k) for k in charged_levels}
        inner = [k for k in inner if k in keep]
    if inner:
        add_curve(np.concatenate([row_segments(k) for k in inner]), TAGS["levels"], "levels")
    for i, k in enumerate(grid.sheet_level):
        add_curve(row_segments(int(k)), TAGS["sheet0"] + i, f"sheet{i}")
    return gmsh


def build_mesh(grid: StructuredGrid, section: CrossSection, comm, charged_levels=None):
    """Mesh the grid with gmsh on rank 0 and distribute it.

    ``charged_levels`` (level indices) limits the ``levels`` facet tag to the levels that carry
    frozen charge; by default every interior level is tagged.

    Returns
    -------
    dolfinx.io.gmsh.MeshData
        ``.mesh``, ``.cell_tags`` (layer index + 1), ``.facet_tags`` (see :data:`TAGS`).
    """
    from .backend import mesh_from_gmsh

    return mesh_from_gmsh(lambda: _gmsh_model(grid, section, charged_levels), comm)
