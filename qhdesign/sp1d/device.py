"""Array description of a 1D device: the grid, the materials on its cells, and the boundaries.

This is the stack-independent core input of the solver, so analytic test cases can be built
from plain arrays. :mod:`qhdesign.sp1d.model` builds one from a :class:`~qhdesign.stack.Stack`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["Boundary", "Device"]


@dataclass(frozen=True)
class Boundary:
    """A boundary of the Poisson problem.

    Attributes
    ----------
    kind
        ``"dirichlet"``: the electron potential energy U = E_c - e phi at the boundary node is
        ``energy_J`` (relative to the Fermi level of the 2DEG). ``"neumann"``: the boundary node
        carries the fixed sheet charge ``charge_C_m2`` and no field leaves the device there.
    """

    kind: str
    energy_J: float = 0.0
    charge_C_m2: float = 0.0

    def __post_init__(self):
        if self.kind not in ("dirichlet", "neumann"):
            raise ValueError(f"boundary kind must be 'dirichlet' or 'neumann', got {self.kind!r}")


@dataclass(frozen=True)
class Device:
    """A layered 1D device on a grid.

    Attributes
    ----------
    z
        Nodes, shape (N+1,), m (depth, positive down; dielectric nodes at z < 0).
    offset_J
        Conduction-band offset of each cell relative to GaAs, shape (N,), J.
    mass
        Effective mass of each cell in units of m0, shape (N,).
    eps
        Relative permittivity of each cell, shape (N,).
    donors_m3
        Donor density of each cell, shape (N,), m^-3.
    donor_depth_J
        Depth of the donor level below the cell's conduction-band edge, shape (N,), J;
        ``inf`` for donors that are always ionised.
    semiconductor
        Whether a cell can hold electrons, shape (N,) (False in a gate dielectric).
    quantum
        (first, last) node index of the quantum region; psi = 0 on these two nodes.
    top, bottom
        Boundaries at z[0] and z[-1].
    layer_of_cell
        Index of the stack layer of each cell, shape (N,) (-1 in a gate dielectric).
    xc
        Exchange–correlation potential of the quantum electrons: ``"none"`` (Hartree only),
        ``"hedin-lundqvist"`` or ``"perdew-zunger"`` (see :mod:`qhdesign.sp1d.xc`).
    """

    z: np.ndarray
    offset_J: np.ndarray
    mass: np.ndarray
    eps: np.ndarray
    donors_m3: np.ndarray
    donor_depth_J: np.ndarray
    semiconductor: np.ndarray
    quantum: tuple[int, int]
    top: Boundary
    bottom: Boundary
    layer_of_cell: np.ndarray = field(default=None)
    xc: str = "none"

    @property
    def h(self) -> np.ndarray:
        """Cell widths, shape (N,), m."""
        return np.diff(self.z)

    @property
    def centres(self) -> np.ndarray:
        """Cell centres, shape (N,), m."""
        return 0.5 * (self.z[1:] + self.z[:-1])

    def node_offset(self) -> np.ndarray:
        """Band offset at the nodes, the control-volume average of the two cells, shape (N+1,)."""
        return self.node_average(self.offset_J)

    def node_average(self, cell_values: np.ndarray) -> np.ndarray:
        """Control-volume average at the nodes of a per-cell quantity, shape (N+1,)."""
        h = self.h
        num = np.zeros(len(self.z))
        den = np.zeros(len(self.z))
        num[:-1] += cell_values * h
        num[1:] += cell_values * h
        den[:-1] += h
        den[1:] += h
        return num / den

    def with_boundaries(self, top: Boundary | None = None, bottom: Boundary | None = None):
        """Copy with other boundaries."""
        from dataclasses import replace

        return replace(self, top=top or self.top, bottom=bottom or self.bottom)
