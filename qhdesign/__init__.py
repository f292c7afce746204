"""qhdesign: design calculator for screened GaAs/AlGaAs heterostructures and quantum Hall
interferometers.

The pipeline: layer-stack file -> 1D Schrödinger–Poisson (charge split between primary and
screening wells, gate response) -> 2D Thomas–Fermi finite elements (edge depletion, rise and tail
length, lever arms) -> sweeps to CSV. Importing this package is light: DOLFINx, gmsh, MPI and
matplotlib load only inside the stages that need them.
"""

from importlib.metadata import PackageNotFoundError, version

from .errors import ConvergenceError, InputError, QHDesignError, StackError
from .stack import Stack, load_stack
from .units import parse_quantity

try:
    __version__ = version("qhdesign")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

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
