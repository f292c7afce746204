"""2D Thomas–Fermi cross-sections on DOLFINx: depletion edges, rise and tail, strips, pinch-off.

The only package that imports dolfinx, gmsh, mpi4py and petsc4py; they load inside the functions
that need them, so importing this package is light. Entry points: :func:`solve_edge`,
:func:`solve_pinchoff`, :func:`solve_island`, :class:`CrossSectionSolver`.
"""

from __future__ import annotations

from .constriction import ConstrictionResult, PinchoffResult, solve_constriction, solve_pinchoff
from .edge import EdgeResult, EdgeSettings, solve_edge
from .from_stack import section_from_stack
from .geometry import GateLayout, MeshOptions
from .island import IslandColumn, IslandGeometry, IslandResult, IslandSettings, solve_island
from .model import CrossSection, SheetSpec, cross_section_from_sheet_model
from .solver import CrossSectionSolver, SolverOptions

__all__ = [
    "ConstrictionResult",
    "CrossSection",
    "CrossSectionSolver",
    "EdgeResult",
    "EdgeSettings",
    "GateLayout",
    "IslandColumn",
    "IslandGeometry",
    "IslandResult",
    "IslandSettings",
    "MeshOptions",
    "PinchoffResult",
    "SheetSpec",
    "SolverOptions",
    "cross_section_from_sheet_model",
    "section_from_stack",
    "solve_constriction",
    "solve_edge",
    "solve_island",
    "solve_pinchoff",
]
