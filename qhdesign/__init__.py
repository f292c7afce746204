"""qhdesign: design calculator for screened GaAs/AlGaAs heterostructures and quantum Hall
interferometers.

The pipeline: layer-stack file -> 1D Schrödinger–Poisson (charge split between primary and
screening wells, gate response) -> 2D Thomas–Fermi finite elements (edge depletion, healing
length, lever arms) -> sweeps to CSV. Importing this package is light: DOLFINx, gmsh, MPI and
matplotlib load only inside the stages that need them, and numpy/scipy only when a stage or the
stack model is first used.
"""

from .errors import ConvergenceError, InputError, QHDesignError, StackError

#: Names loaded on first access (PEP 562): the stack module pulls in numpy and scipy, which the
#: command line's start-up (``qhdesign --help``) does not need.
_LAZY = {"Stack": "stack", "load_stack": "stack", "parse_quantity": "units"}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    if name == "__version__":
        from importlib.metadata import PackageNotFoundError, version

        try:
            value = version("qhdesign")
        except PackageNotFoundError:  # pragma: no cover - a source tree without install
            value = "0.0.0+unknown"
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = [
    "ConvergenceError",
    "InputError",
    "QHDesignError",
    "Stack",
    "StackError",
    "__version__",
    "load_stack",
    "parse_quantity",
]
