"""Non-uniform 1D grid for the Schrödinger–Poisson solve.

Nodes carry the potential and the wavefunctions; cells (between two nodes) carry the material
(band offset, mass, permittivity, donors). Every layer boundary is a node, so no cell straddles an
interface. Inside a layer the spacing follows a target function that is fine at the layer edges
and grows geometrically (ratio ``grading``) towards the layer centre up to the layer's maximum
spacing; the nodes are the equidistant points of the stretched coordinate s(z) = int dz/h(z), which
gives a smoothly graded grid (the finite-volume scheme then keeps second-order accuracy).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["GridSpec", "graded_layer_nodes", "layered_grid"]


@dataclass(frozen=True)
class GridSpec:
    """Grid spacing targets (m).

    Attributes
    ----------
    well_points
        A quantum well gets at least this many cells across its width.
    well_spacing_m
        Upper bound of the spacing inside a well.
    quantum_barrier_spacing_m
        Maximum spacing in barriers inside the quantum region.
    barrier_spacing_m
        Maximum spacing in barriers outside the quantum region (thick layers, substrate).
    doping_spacing_m
        Maximum spacing in doped layers.
    interface_spacing_m
        Spacing at a layer edge outside the quantum region.
    quantum_interface_spacing_m
        Spacing at the interfaces of a well (both sides).
    quantum_interface_flat_m
        Barriers next to a well keep ``quantum_interface_spacing_m`` over this distance before
        the spacing grows: the levels' discretisation error comes mostly from the first
        decay lengths (~1 nm) of the wavefunction in the barrier.
    grading
        Ratio between neighbouring cells where the spacing grows (> 1).
    """

    well_points: int = 300
    well_spacing_m: float = 0.1e-9
    quantum_barrier_spacing_m: float = 0.5e-9
    barrier_spacing_m: float = 5e-9
    doping_spacing_m: float = 0.5e-9
    interface_spacing_m: float = 0.2e-9
    quantum_interface_spacing_m: float = 0.05e-9
    quantum_interface_flat_m: float = 3e-9
    grading: float = 1.06

    def refined(self, factor: float) -> GridSpec:
        """All spacings divided by ``factor`` (for grid studies)."""
        return GridSpec(
            well_points=round(self.well_points * factor),
            well_spacing_m=self.well_spacing_m / factor,
            quantum_barrier_spacing_m=self.quantum_barrier_spacing_m / factor,
            barrier_spacing_m=self.barrier_spacing_m / factor,
            doping_spacing_m=self.doping_spacing_m / factor,
            interface_spacing_m=self.interface_spacing_m / factor,
            quantum_interface_spacing_m=self.quantum_interface_spacing_m / factor,
            quantum_interface_flat_m=self.quantum_interface_flat_m,
            grading=1.0 + (self.grading - 1.0) / factor,
        )


def graded_layer_nodes(
    a: float,
    b: float,
    h_top: float,
    h_bottom: float,
    h_max: float,
    grading: float,
    flat_m: float = 0.0,
) -> np.ndarray:
    """Nodes on [a, b], both ends included, graded from the edge spacings up to ``h_max``.

    Parameters
    ----------
    a, b
        Layer extent (m), b > a.
    h_top, h_bottom
        Target spacing at z = a and z = b (m).
    h_max
        Largest spacing inside the layer (m).
    grading
        Growth ratio of neighbouring cells.
    flat_m
        The edge spacing is kept over this distance from each edge before growing (m).

    Returns
    -------
    numpy.ndarray
        Increasing node positions, shape (n+1,), first ``a`` and last ``b``.
    """
    length = b - a
    h_top = min(h_top, h_max)
    h_bottom = min(h_bottom, h_max)
    if (h_top >= h_max and h_bottom >= h_max) or length <= h_max:
        n = max(1, int(np.ceil(length / min(h_max, max(h_top, h_bottom)) - 1e-9)))
        return np.linspace(a, b, n + 1)
    # h(z) = min(h_max, h_edge + (grading - 1) * distance) from each edge
    m = 4000
    s = np.linspace(0.0, length, m + 1)
    g = grading - 1.0
    h = np.minimum.reduce(
        [
            np.full_like(s, h_max),
            h_top + g * np.maximum(s - flat_m, 0.0),
            h_bottom + g * np.maximum(length - s - flat_m, 0.0),
        ]
    )
    inv = 1.0 / h
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(s))))
    n = max(1, int(np.ceil(cum[-1] - 1e-9)))
    targets = np.linspace(0.0, cum[-1], n + 1)
    nodes = a + np.interp(targets, cum, s)
    nodes[0], nodes[-1] = a, b
    return nodes


def layered_grid(
    boundaries: np.ndarray,
    edge_spacing: np.ndarray,
    max_spacing: np.ndarray,
    grading: float,
    flat: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Graded grid through a sequence of layers.

    Parameters
    ----------
    boundaries
        Layer boundaries, shape (L+1,), increasing (m).
    edge_spacing
        Target spacing at each boundary, shape (L+1,) (m).
    max_spacing
        Maximum spacing inside each layer, shape (L,) (m).
    grading
        Growth ratio.
    flat
        Distance over which each layer keeps its edge spacing, shape (L,) (m); default 0.

    Returns
    -------
    z : numpy.ndarray
        Nodes, shape (N+1,).
    layer_of_cell : numpy.ndarray
        Index of the layer each cell belongs to, shape (N,).
    """
    parts = []
    owner = []
    for k in range(len(boundaries) - 1):
        nodes = graded_layer_nodes(
            boundaries[k],
            boundaries[k + 1],
            edge_spacing[k],
            edge_spacing[k + 1],
            max_spacing[k],
            grading,
            0.0 if flat is None else float(flat[k]),
        )
        parts.append(nodes if k == 0 else nodes[1:])
        owner.append(np.full(len(nodes) - 1, k, dtype=int))
    return np.concatenate(parts), np.concatenate(owner)
