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
#: Public names of the old package -> the module that holds them now (None: its __all__).
NAMES = {
    "qhdesign.section": None,  # all of its __all__
    "qhdesign.island": ("IslandColumn", "IslandGeometry", "IslandResult", "IslandSettings"),
    "qhdesign.pipeline": ("section_from_stack", "solve_island"),
}


def _alias() -> list[str]:
    names = []
    for old, new in MOVED.items():
        mod = importlib.import_module(new)
        sys.modules[f"{__name__}.{old}"] = mod
        globals()[old] = mod
    for module, public in NAMES.items():
        mod = importlib.import_module(module)
        for name in mod.__all__ if public is None else public:
            globals()[name] = getattr(mod, name)
            names.append(name)
    return sorted(names)


__all__ = _alias()  # pyright: ignore[reportUnsupportedDunderAll]
