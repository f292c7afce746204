"""Cross-section geometry and mesh: a structured, graded (x, z) grid on the engine's tensor mesh.

Layers are rectangles, so the mesh is the tensor product of a graded x-node list (fine at the gate
edges) and a graded z-level list (fine at the surface and at every sheet, with a level on every
layer boundary, sheet and probe line), built by :mod:`qhdesign.fem.grid` and meshed by
:mod:`qhdesign.fem.tensor_mesh` with physical groups (one per layer, one per sheet line, gate and
exposed parts of the surface, bottom, sides, the other horizontal levels). Mesh coordinates are
nanometres with y = -z.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from qhdesign.errors import InputError
from qhdesign.fem.grid import graded_nodes
from qhdesign.fem.tensor_mesh import TensorModel, TensorNumbering, build_tensor_mesh

from .model import CrossSection

__all__ = ["TAGS", "GateLayout", "MeshOptions", "StructuredGrid", "build_grid", "build_mesh"]

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
    x_min_m: float | None = None  # domain starts here instead of -half width (r = 0: axisymmetric)

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
    read_level: np.ndarray | None = None  # (S,) level where each sheet's law reads phi
    deep_level: np.ndarray | None = None  # (S,) deepest charge level of a moving-charge sheet

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
    lo = -X if opts.x_min_m is None else float(opts.x_min_m)
    for e in edges + marks:
        if not lo < e < X:
            raise InputError(
                f"gate edge at {e * 1e9:.1f} nm lies outside the domain "
                f"({lo * 1e9:.0f} nm < x < {X * 1e9:.0f} nm)",
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
        if all(abs(m - b) > 4 * h_edge for b in [lo, *nodes_at, X]):
            nodes_at.append(m)
    growth = opts.growth / r  # a refined mesh halves every cell, not only the finest ones
    x = graded_nodes(
        [lo, *nodes_at, X],
        [(e, h_edge) for e in edges + marks],
        growth,
        opts.h_max_x_m / r,
        min_cells=2,
    )
    z_layers = np.asarray(section.layer_z_m, dtype=float)
    sheet_z = [s.z_m for s in section.sheets]
    read_z = [
        z
        for s in section.sheets
        if getattr(s, "law", None) is not None
        for z in (getattr(s, "read_z_m", None), getattr(s, "charge_z_max_m", None))
        if z is not None
    ]
    fixed = [*z_layers.tolist(), *sheet_z, *read_z, *section.extra_levels_m]
    z_attr = [(float(z_layers[0]), h_edge)] + [(zs, h_sheet) for zs in (*sheet_z, *read_z)]
    z_attr += [(float(zl), 4 * h_sheet) for zl in z_layers[1:-1]]
    z_attr += [(float(zp), h_sheet) for zp in section.extra_levels_m]
    z = graded_nodes(fixed, z_attr, growth, opts.h_max_z_m / r, min_cells=1)
    mid = 0.5 * (z[1:] + z[:-1])
    layer = np.clip(np.searchsorted(z_layers, mid) - 1, 0, z_layers.size - 2)
    sheet_level = np.array([int(np.argmin(np.abs(z - zs))) for zs in sheet_z], dtype=int)
    for k, zs in zip(sheet_level, sheet_z, strict=True):
        z[k] = zs  # exact sheet depth (graded_nodes keeps breakpoints; this only removes fp noise)
    read_level = sheet_level.copy()
    deep_level = sheet_level.copy()
    for i, s in enumerate(section.sheets):
        if getattr(s, "law", None) is None:
            continue
        zr = getattr(s, "read_z_m", None)
        if zr is not None:
            read_level[i] = int(np.argmin(np.abs(z - zr)))
            z[read_level[i]] = zr
        zb = getattr(s, "charge_z_max_m", None)
        if zb is not None:
            deep_level[i] = int(np.argmin(np.abs(z - zb)))
            z[deep_level[i]] = zb
    return StructuredGrid(x, z, layer, sheet_level, layout, read_level, deep_level)


def _facet_groups(grid: StructuredGrid, charged_levels=None) -> list:
    """Facet groups of the cross-section (see :data:`TAGS`), in the order their curves are added."""
    nx, nz = grid.x_m.size, grid.z_m.size
    num = TensorNumbering(nx, nz)
    xc = 0.5 * (grid.x_m[1:] + grid.x_m[:-1])
    gated = grid.layout.covers(xc)
    groups = [
        (TAGS["gate"], "gate", num.row(0, gated)),
        (TAGS["exposed"], "exposed", num.row(0, ~gated)),
        (TAGS["bottom"], "bottom", num.row(nz - 1)),
        (TAGS["sides"], "sides", np.concatenate((num.column(0), num.column(nx - 1)))),
    ]
    sheet_levels = set(int(k) for k in grid.sheet_level)
    inner = [k for k in range(1, nz - 1) if k not in sheet_levels]
    if charged_levels is not None:  # only levels that carry frozen charge need a tag
        keep = {int(k) for k in charged_levels}
        inner = [k for k in inner if k in keep]
    if inner:
        groups.append((TAGS["levels"], "levels", np.concatenate([num.row(k) for k in inner])))
    for i, k in enumerate(grid.sheet_level):
        groups.append((TAGS["sheet0"] + i, f"sheet{i}", num.row(int(k))))
    return groups


def build_mesh(grid: StructuredGrid, section: CrossSection, comm, charged_levels=None):
    """Mesh the grid with gmsh on rank 0 and distribute it.

    ``charged_levels`` (level indices) limits the ``levels`` facet tag to the levels that carry
    frozen charge; by default every interior level is tagged.

    Returns
    -------
    dolfinx.io.gmsh.MeshData
        ``.mesh``, ``.cell_tags`` (layer index + 1), ``.facet_tags`` (see :data:`TAGS`).
    """
    model = None
    if comm.rank == 0:
        model = TensorModel(
            "qhdesign_cross_section",
            grid.x_m,
            grid.z_m,
            grid.layer_of_interval,
            len(section.layer_permittivity),
            _facet_groups(grid, charged_levels),
        )
    return build_tensor_mesh(model, comm)
