"""The island stage: interferometer island capacitances on the FEM engine.

:mod:`~qhdesign.island.conductor` is the split-gap conductor model (edge ring I and bulk L as
ideal conductors, axisymmetric, :mod:`qhdesign.fem.capacitance`). The stage is built from a
:class:`~qhdesign.sheets.SheetModel` or an :class:`IslandColumn`; a stack goes through
:func:`qhdesign.pipeline.solve_island`. This package imports neither the stack nor the 1D stage.

The island at its operating point (the default model of ``qhdesign island``):
:mod:`~qhdesign.island.operating` (nonlinear axisymmetric Thomas–Fermi solve of every sheet on the
2D stage's solver, the compressible edge strip), :mod:`~qhdesign.island.response` (linear response:
K_I, K_L, K_IL), :mod:`~qhdesign.island.stage` (settings, field loop, results); a stack goes
through :func:`qhdesign.pipeline.solve_island_operating`. These load DOLFINx inside the solves.
"""

from __future__ import annotations

from . import conductor
from .conductor import *  # noqa: F403  (the conductor model's public names)

__all__ = list(conductor.__all__)
