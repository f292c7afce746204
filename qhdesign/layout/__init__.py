"""Gate layouts in 3D: layout files (pure) and the DOLFINx model of the stack under them.

``layoutfile`` and ``polygons`` are pure (numpy only); the 3D model loads DOLFINx, gmsh and
mpi4py inside its functions, so importing this package stays light.
"""

from __future__ import annotations

from .generators import IslandSpec
from .layoutfile import Constriction, Gate, Layout, load_layout, loads_layout

__all__ = ["Constriction", "Gate", "IslandSpec", "Layout", "load_layout", "loads_layout"]
