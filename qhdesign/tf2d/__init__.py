"""Deprecated alias of the FEM stages (kept for one release): use :mod:`qhdesign.section`,
:mod:`qhdesign.island`, :mod:`qhdesign.fem` and :mod:`qhdesign.pipeline`.

``qhdesign.tf2d`` re-exports their public names, and its old submodules are the new modules
themselves (``qhdesign.tf2d.edge`` *is* ``qhdesign.section.edge``), so code and patches written
against the old paths keep working. ``qhdesign.tf2d.solve_island`` and
``qhdesign.tf2d.section_from_stack`` accept a stack, as before (via :mod:`qhdesign.pipeline`).
"""

from __future__ import annotations

import importlib
import sys

from qhdesign.island import (
    IslandColumn,
    IslandGeometry,
    IslandResult,
    IslandSettings,
)
from qhdesign.pipeline import section_from_stack, solve_island
from qhdesign.section import (
    ConstrictionResult,
    CrossSection,
    CrossSectionSolver,
    EdgeResult,
    EdgeSettings,
    GateLayout,
    MeshOptions,
    PinchoffResult,
    SheetSpec,
    SolverOptions,
    cross_section_from_sheet_model,
    solve_constriction,
    solve_edge,
    solve_pinchoff,
)

#: Old submodule -> the module that replaces it.
MOVED = {
    "axicap": "qhdesign.fem.capacitance",
    "backend": "qhdesign.fem.backend",
    "grid": "qhdesign.fem.grid",
    "constriction": "qhdesign.section.constriction",
    "edge": "qhdesign.section.edge",
    "examples": "qhdesign.section.examples",
    "geometry": "qhdesign.section.geometry",
    "model": "qhdesign.section.model",
    "profile": "qhdesign.section.profile",
    "solver": "qhdesign.section.solver",
    "island": "qhdesign.island.conductor",
    "from_stack": "qhdesign.pipeline",
}

for _old, _new in MOVED.items():
    _mod = importlib.import_module(_new)
    sys.modules[f"{__name__}.{_old}"] = _mod
    globals()[_old] = _mod
del _old, _new, _mod

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
