"""Shared CLI helpers: the error guard (one line, exit 2) and option parsing with units."""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from typing import Any

import typer

from qhdesign.errors import QHDesignError
from qhdesign.units import parse_quantity

__all__ = ["fail", "guarded", "option_quantity"]

EXIT_USER_ERROR = 2


def _is_lead_rank() -> bool:
    """True unless this process is a non-zero MPI rank (read from the launcher's environment,
    so that no MPI library is imported just to print an error)."""
    import os

    for var in ("PMI_RANK", "OMPI_COMM_WORLD_RANK", "MPI_LOCALRANKID"):
        if var in os.environ:
            return os.environ[var] == "0"
    return True


def fail(message: str) -> None:
    """Print one line to stderr (rank 0 only under MPI) and exit with code 2."""
    if _is_lead_rank():
        typer.echo(f"error: {' '.join(str(message).split())}", err=True)
    raise typer.Exit(EXIT_USER_ERROR)


def guarded(func: Callable[..., Any]) -> Callable[..., Any]:
    """Wrap a command: a :class:`QHDesignError` becomes one line on stderr and exit code 2.

    Any other exception is a bug in qhdesign and keeps its traceback.
    """

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return func(*args, **kwargs)
        except QHDesignError as exc:
            one = exc.one_line() if hasattr(exc, "one_line") else str(exc)
            if _is_lead_rank():  # under mpiexec every rank fails; one line is enough
                typer.echo(f"error: {' '.join(one.split())}", err=True)
            raise typer.Exit(EXIT_USER_ERROR) from None
        except KeyboardInterrupt:
            typer.echo("interrupted", err=True)
            sys.exit(130)

    return wrapper


def option_quantity(value: str | None, dimension: str, option: str) -> float | None:
    """Parse a CLI option value with a unit (``"-0.4 V"``, ``"30 nm"``); ``None`` passes through.

    Every dimensional option needs its unit, except voltages: a plain number given to a
    voltage option is read in volts (``--gate-voltage -0.4``), since negative bare numbers are
    what people type for gate biases.
    """
    if value is None:
        return None
    text = str(value).strip()
    if dimension == "voltage":
        try:
            return float(text)
        except ValueError:
            pass
    return parse_quantity(text, dimension, source=f"option {option}")
