"""Graded node distributions for the tensor-product meshes of every FEM stage.

A tensor mesh is the product of an x- (or r-) node list and a z-level list. Layers are
rectangles, so a tensor grid fits them exactly and costs almost nothing to build (meshing an
unstructured cross-section with size fields took longer than the Newton solve in early trials).

A node list is built from a local-size function h(s) = min_i(h_i + g |s - s_i|), capped at
``h_max``: the size grows linearly away from each attractor s_i, so neighbouring cells grow by a
factor of about (1 + g) and the grading is geometric near an attractor (cell k has size about
h_i (1 + g)^k). Between fixed breakpoints the nodes follow the inverse of the cumulative
integral of 1/h, which places them deterministically.

The cumulative integral is taken by the trapezoid rule on sample points: 2001 uniform points per
interval, plus (``geometric_samples=True``) points spaced geometrically around every attractor,
which keeps the integral exact for sizes down to 1e-6 of the interval (the island's 0.2 nm edge
cells in a micrometre domain). The cross-section's sizes (1 nm in a few micrometres) need only
the uniform samples.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence

import numpy as np

__all__ = ["REFINE_RANGE", "check_refine", "graded_nodes", "size_function"]

#: Allowed mesh refinement factors, one range for every FEM stage: 1 is the default resolution,
#: 2 halves every cell and the growth rate (about four times the dofs in 2D), 0.25 is the
#: coarsest that still resolves a sheet, 4 already costs ~16x the default.
REFINE_RANGE = (0.25, 4.0)


def check_refine(value, *, source: str | None = None, key: str = "refine") -> float:
    """``value`` as a refinement factor in :data:`REFINE_RANGE`, else an InputError naming
    ``source``/``key`` and the allowed range.

    >>> check_refine(2)
    2.0
    """
    from qhdesign.errors import InputError

    lo, hi = REFINE_RANGE
    try:
        ref = float(value)
    except (TypeError, ValueError):
        ref = float("nan")
    if isinstance(value, bool) or not lo <= ref <= hi:
        raise InputError(
            f"refine must lie in [{lo:g}, {hi:g}], got {value!r}", source=source, key=key
        )
    return ref


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

    Examples
    --------
    >>> size_function(np.array([0.0, 1.0, 10.0]), [(0.0, 0.1)], 0.5, 2.0).tolist()
    [0.1, 0.6, 2.0]
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
    *,
    geometric_samples: bool = False,
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
    geometric_samples
        Add sample points spaced geometrically around every attractor to the 2001 uniform ones
        (needed when the smallest size is far below 1/2000 of an interval).

    Returns
    -------
    numpy.ndarray
        Sorted node positions, shape (K,).

    Examples
    --------
    >>> x = graded_nodes([0.0, 1.0], [(0.0, 0.1)], 0.0, 1.0)
    >>> len(x), float(x[0]), float(x[-1])
    (11, 0.0, 1.0)
    """
    bps = np.unique(np.asarray(breakpoints, dtype=float))
    nodes = [bps[:1]]
    for a, b in itertools.pairwise(bps):
        s = np.linspace(a, b, 2001)
        if geometric_samples:
            L = b - a
            parts = [s]
            for s0, h0 in attractors:
                d = np.geomspace(max(h0, 1e-9 * L) * 1e-2, 2 * L + abs(s0 - a) + abs(s0 - b), 600)
                parts.append(np.concatenate((s0 - d, s0 + d)))
            s = np.unique(np.clip(np.concatenate(parts), a, b))
        inv_h = 1.0 / size_function(s, attractors, growth, h_max)
        # cumulative integral of 1/h by the trapezoid rule (the size is piecewise linear)
        cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv_h[1:] + inv_h[:-1]) * np.diff(s))))
        n = max(int(min_cells), int(np.ceil(cum[-1] - 1e-9)))
        seg = np.interp(np.linspace(0.0, cum[-1], n + 1), cum, s)
        seg[0], seg[-1] = a, b
        nodes.append(seg[1:])
    return np.concatenate(nodes)
