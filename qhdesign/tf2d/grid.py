"""Graded node distributions for the structured (x, z) cross-section mesh.

The 2D mesh is a tensor product of an x-node list and a z-level list, triangulated. Layers are
rectangles, so a tensor grid fits them exactly and costs almost nothing to build (meshing an
unstructured cross-section with size fields took longer than the Newton solve in early trials).

A node list is built from a local-size function h(s) = min_i(h_i + g |s - s_i|), capped at
``h_max``: the size grows linearly away from each attractor s_i, so neighbouring cells grow by a
factor of about (1 + g). Between fixed breakpoints the nodes follow the inverse of the
cumulative integral of 1/h, which places them deterministically.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence

import numpy as np

__all__ = ["graded_nodes", "size_function"]


def size_function(
    s: np.ndarray,
    attractors: Sequence[tuple[float, float]],
    growth: float,
    h_max: float,
) -> np.ndarray:
    """Local target size at positions ``s``.

    Parameters
    ----------
    s
        Positions, shape (M,).
    attractors
        ``(position, local size)`` pairs.
    growth
        Linear growth rate g of the size with distance (dimensionless; 0.15 means cells grow by
        about 15 % each).
    h_max
        Upper cap on the size.
    """
    h = np.full(np.shape(s), float(h_max))
    for s0, h0 in attractors:
        h = np.minimum(h, h0 + growth * np.abs(s - s0))
    return h


def graded_nodes(
    breakpoints: Sequence[float],
    attractors: Sequence[tuple[float, float]],
    growth: float,
    h_max: float,
    min_cells: int = 1,
) -> np.ndarray:
    """Nodes from ``breakpoints[0]`` to ``breakpoints[-1]`` that contain every breakpoint.

    Parameters
    ----------
    breakpoints
        Sorted positions that must be nodes (layer boundaries, sheet lines, gate edges).
    attractors, growth, h_max
        See :func:`size_function`.
    min_cells
        Minimum number of cells between two consecutive breakpoints.

    Returns
    -------
    numpy.ndarray
        Sorted node positions, shape (K,).
    """
    bps = np.unique(np.asarray(breakpoints, dtype=float))
    nodes = [bps[:1]]
    for a, b in itertools.pairwise(bps):
        s = np.linspace(a, b, 2001)
        inv_h = 1.0 / size_function(s, attractors, growth, h_max)
        # cumulative integral of 1/h by the trapezoid rule (the size is piecewise linear)
        cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv_h[1:] + inv_h[:-1]) * np.diff(s))))
        n = max(int(min_cells), int(np.ceil(cum[-1] - 1e-9)))
        targets = np.linspace(0.0, cum[-1], n + 1)
        seg = np.interp(targets, cum, s)
        seg[0], seg[-1] = a, b
        nodes.append(seg[1:])
    return np.concatenate(nodes)
