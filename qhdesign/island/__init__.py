"""The island stage: interferometer island capacitances on the FEM engine.

:mod:`~qhdesign.island.conductor` is the split-gap conductor model (edge ring I and bulk L as
ideal conductors, axisymmetric, :mod:`qhdesign.fem.capacitance`); its public names are
re-exported here. The stage is built from a :class:`~qhdesign.sheets.SheetModel` or an
:class:`IslandColumn`; a stack goes through :func:`qhdesign.pipeline.solve_island`. This package
imports neither the stack nor the 1D stage.
"""

from __future__ import annotations

from . import conductor
from .conductor import *  # noqa: F403  (the conductor model's public names)

__all__ = list(conductor.__all__)
