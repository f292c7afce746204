"""The 2D cross-section stage: Thomas–Fermi sheets in an (x, z) cross-section on DOLFINx.

Depletion edges, healing, strips (:mod:`~qhdesign.section.edge`), split gates and pinch-off
(:mod:`~qhdesign.section.constriction`), built from a :class:`~qhdesign.sheets.SheetModel`
(:func:`~qhdesign.section.model.cross_section_from_sheet_model`) on the FEM engine
(:mod:`qhdesign.fem`). This package imports neither the stack nor the 1D stage; a stack goes
through :func:`qhdesign.pipeline.section_from_stack`. Importing it is light.
"""

from __future__ import annotations

from .constriction import ConstrictionResult, PinchoffResult, solve_constriction, solve_pinchoff
from .edge import EdgeResult, EdgeSettings, solve_edge
from .geometry import GateLayout, MeshOptions
from .model import CrossSection, SheetSpec, cross_section_from_sheet_model
from .solver import CrossSectionSolver, SolverOptions

__all__ = [
    "ConstrictionResult",
    "CrossSection",
    "CrossSectionSolver",
    "EdgeResult",
    "EdgeSettings",
    "GateLayout",
    "MeshOptions",
    "PinchoffResult",
    "SheetSpec",
    "SolverOptions",
    "cross_section_from_sheet_model",
    "solve_constriction",
    "solve_edge",
    "solve_pinchoff",
]
