"""Shared CLI helpers: the error guard (one line, exit 2) and option parsing with units."""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from typing import Any

import typer

from qhdesign.errors import QHDesignError
from qhdesign.units import parse_quantity

__all__ = ["check_figure_path", "check_output_paths", "fail", "guarded", "option_quantity"]

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


#: Output options of the commands (parameter name -> option), checked before any work is done.
OUTPUT_OPTIONS = {
    "plot": "--plot",
    "json_out": "--json",
    "csv_out": "--csv",
    "fields": "--fields",
    "toml_out": "--toml",
    "html_out": "--html",
    "out": "--out",
}
#: Figure formats every figure option accepts (matplotlib backends, by file suffix).
FIGURE_SUFFIXES = (".png", ".svg", ".pdf")


def check_figure_path(path, option: str) -> None:
    """Refuse a figure file whose suffix is not PNG, SVG or PDF (before the work, not after)."""
    from pathlib import Path

    from qhdesign.errors import InputError

    suffix = Path(path).suffix.lower()
    if suffix not in FIGURE_SUFFIXES:
        raise InputError(
            f"unsupported figure format '{suffix or '(none)'}'; allowed: "
            f"{', '.join(FIGURE_SUFFIXES)}",
            source=f"option {option}",
        )


def check_output_paths(kwargs: dict[str, Any]) -> None:
    """Every output file's folder must exist (a typo must not create folders); ``--plot`` must
    name a figure format."""
    from pathlib import Path

    from qhdesign.errors import InputError

    for name, option in OUTPUT_OPTIONS.items():
        value = kwargs.get(name)
        if not isinstance(value, Path):
            continue
        parent = value.parent
        if not parent.is_dir():
            raise InputError(
                f"folder '{parent}' does not exist (create it first)", source=f"option {option}"
            )
        if name == "plot":
            check_figure_path(value, option)


#: Warnings already printed by the running command (each is printed once per command).
_WARNED: set[str] = set()


def warn(text: str) -> None:
    """Print ``warning: text`` on stderr once per command (rank 0 only under MPI).

    A stage's result repeats the stack's warnings and a sweep meets the same condition at every
    step; the user needs to read each one once.
    """
    key = " ".join(str(text).split())
    if key in _WARNED or not _is_lead_rank():
        return
    _WARNED.add(key)
    typer.echo(f"warning: {key}", err=True)


def renamed(new_value: Any, old_value: Any, new: str, old: str) -> Any:
    """The value of an option whose old spelling is kept, hidden, for one release.

    One name per concept across commands (docs/cli.md, "Option names"); the old spelling still
    works and prints a one-line deprecation warning. Giving both is an error.
    """
    if old_value is None:
        return new_value
    if new_value is not None:
        from qhdesign.errors import InputError

        raise InputError(f"{old} is the old name of {new}; give only {new}", source=f"option {old}")
    warn(f"{old} is deprecated and will be removed in the next release; use {new}")
    return old_value


def guarded(func: Callable[..., Any]) -> Callable[..., Any]:
    """Wrap a command: a :class:`QHDesignError` becomes one line on stderr and exit code 2.

    Any other exception is a bug in qhdesign and keeps its traceback.
    """

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        _WARNED.clear()  # one command, one set of warnings
        try:
            check_output_paths(kwargs)
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
    if dimension == "voltage" and "," not in text:
        try:
            return float(text)
        except ValueError:
            pass
    return parse_quantity(text, dimension, source=f"option {option}")
