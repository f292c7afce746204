"""The island stage: interferometer island capacitances on the FEM engine.

:mod:`~qhdesign.island.conductor` is the split-gap conductor model (edge ring I and bulk L as
ideal conductors, axisymmetric, :mod:`qhdesign.fem.capacitance`). The stage is built from a
:class:`~qhdesign.sheets.SheetModel` or an :class:`IslandColumn`; a stack goes through
:func:`qhdesign.pipeline.solve_island`. This package imports neither the stack nor the 1D stage.
"""

from __future__ import annotations

from .conductor import (
    IslandColumn,
    IslandGeometry,
    IslandResult,
    IslandSettings,
    WellLine,
    column_from_sheet_model,
    solve_island,
)

__all__ = [
    "IslandColumn",
    "IslandGeometry",
    "IslandResult",
    "IslandSettings",
    "WellLine",
    "column_from_sheet_model",
    "solve_island",
]
