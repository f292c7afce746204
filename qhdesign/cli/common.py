"""Shared CLI helpers: the error guard (one line, exit 2), the translation of the physics' error
keys into the options the user typed, output checks made before any work, and option parsing
with units."""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Annotated, Any

import typer

from qhdesign.errors import InputError, QHDesignError, one_line

__all__ = [
    "OneLineGroup",
    "check_figure_path",
    "check_output_paths",
    "fail",
    "guarded",
    "option_number",
    "option_quantity",
    "warn",
]

EXIT_USER_ERROR = 2


def _is_lead_rank() -> bool:
    """True unless this process is a non-zero MPI rank (read from the launcher's environment,
    so that no MPI library is imported just to print an error)."""
    import os

    for var in ("PMI_RANK", "OMPI_COMM_WORLD_RANK", "MPI_LOCALRANKID"):
        if var in os.environ:
            return os.environ[var] == "0"
    return True


def _echo_error(message: str) -> None:
    if _is_lead_rank():  # under mpiexec every rank fails; one line is enough
        typer.echo(f"error: {one_line(message)}", err=True)


def fail(message: str) -> None:
    """Print one line to stderr (rank 0 only under MPI) and exit with code 2."""
    _echo_error(message)
    raise typer.Exit(EXIT_USER_ERROR)


class OneLineGroup(typer.core.TyperGroup):
    """The command group whose usage errors (a missing or unknown option, a bad integer) are one
    line on stderr and exit code 2, like every other input error, instead of a framework box."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        from typer._click.exceptions import ClickException, NoArgsIsHelpError
        from typer.exceptions import Abort

        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode, **extra)
        try:
            rv = super().main(args, prog_name, complete_var, False, **extra)
        except NoArgsIsHelpError as exc:  # bare "qhdesign": the help text, as before
            exc.show()
            sys.exit(exc.exit_code)
        except ClickException as exc:
            ctx = getattr(exc, "ctx", None)
            where = f"{ctx.command_path}: " if ctx is not None else ""
            _echo_error(f"{where}{exc.format_message()}")
            sys.exit(EXIT_USER_ERROR)
        except Abort:
            _exit_interrupted()
        sys.exit(rv if isinstance(rv, int) else 0)


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

    suffix = Path(path).suffix.lower()
    if suffix not in FIGURE_SUFFIXES:
        raise InputError(
            f"unsupported figure format '{suffix or '(none)'}'; allowed: "
            f"{', '.join(FIGURE_SUFFIXES)}",
            source=f"option {option}",
        )


def check_output_paths(kwargs: dict[str, Any]) -> None:
    """Every output file must be writable before any work starts: a name, not a folder, in an
    existing writable folder (a typo must not create folders), and an existing target a regular
    file, a device or a FIFO; ``--plot`` must name a figure format."""
    from pathlib import Path

    from qhdesign.io import check_writable

    for name, option in OUTPUT_OPTIONS.items():
        value = kwargs.get(name)
        if not isinstance(value, Path):
            continue
        try:
            check_writable(value, source=str(value))
        except InputError as exc:
            raise InputError(f"{value}: {exc.message}", source=f"option {option}") from None
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
        raise InputError(f"{old} is the old name of {new}; give only {new}", source=f"option {old}")
    warn(f"{old} is deprecated and will be removed in the next release; use {new}")
    return old_value


def _given_options() -> set[str]:
    """Options the user typed (not defaults) of the running command."""
    try:
        from typer._click.core import ParameterSource
        from typer._click.globals import get_current_context

        ctx = get_current_context(silent=True)
    except ImportError:  # pragma: no cover - another typer layout
        return set()
    if ctx is None:
        return set()
    out = set()
    for p in ctx.command.params:
        if ctx.get_parameter_source(p.name) in (
            ParameterSource.COMMANDLINE,
            ParameterSource.ENVIRONMENT,
        ):
            out.update(p.opts)
    return out


def translate(exc: InputError, options: Mapping[str, str], given: set[str]) -> InputError:
    """Name the option the user gave for an error the physics keyed by its argument name.

    ``options`` maps argument names (``gate_voltage_V``) to option names (``--gate-voltage``).
    Of the error's key and its related keys, the first one whose option the user typed is named;
    if none was typed, the first that is an option of this command.
    """
    if exc.source is not None or exc.key is None:
        return exc
    candidates = [k for k in (exc.key, *exc.related) if k in options]
    if not candidates:
        return exc
    pick = next((k for k in candidates if options[k] in given), candidates[0])
    return type(exc)(exc.message, source=f"option {options[pick]}")


def _exit_interrupted() -> None:
    """Print ``interrupted`` and exit 130. Objects the interrupt left half built (a DOLFINx
    NonlinearProblem stopped inside its constructor) may raise in ``__del__`` at shutdown; their
    "Exception ignored" tracebacks are silenced, since the user asked to stop."""
    sys.unraisablehook = lambda _unraisable: None
    typer.echo("interrupted", err=True)
    sys.exit(130)


def guarded(
    func: Callable[..., Any] | None = None, *, options: Mapping[str, str] | None = None
) -> Callable[..., Any]:
    """Wrap a command: a :class:`QHDesignError` or an ``OSError`` becomes one line on stderr and
    exit code 2; Ctrl-C prints ``interrupted`` and exits 130.

    ``options`` maps the argument names the physics uses as error keys to this command's option
    names (see :func:`translate`). Any other exception is a bug in qhdesign and keeps its
    traceback.
    """
    if func is None:
        return functools.partial(guarded, options=options)
    mapping = dict(options or {})

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        restore = _watch_interrupts()
        _WARNED.clear()  # one command, one set of warnings
        try:
            check_output_paths(kwargs)
            return func(*args, **kwargs)
        except Exception as exc:
            if _INTERRUPTED["flag"]:
                # Ctrl-C inside a PETSc callback (the 2D Newton residual) comes back as a
                # petsc4py error, not as KeyboardInterrupt: it is still an interruption
                _exit_interrupted()
            return _fail_cleanly(exc, mapping)
        except KeyboardInterrupt:
            _exit_interrupted()
        finally:
            restore()

    return wrapper


#: Set when SIGINT arrives during a guarded command.
_INTERRUPTED = {"flag": False}


def _watch_interrupts() -> Callable[[], None]:
    """Record Ctrl-C (then raise KeyboardInterrupt as Python does); returns the restorer."""
    import signal
    import threading

    _INTERRUPTED["flag"] = False
    if threading.current_thread() is not threading.main_thread():
        return lambda: None
    previous = signal.getsignal(signal.SIGINT)
    if previous is not signal.default_int_handler:
        return lambda: None  # SIGINT ignored or handled by someone else: leave it

    def handler(signum, frame):
        _INTERRUPTED["flag"] = True
        raise KeyboardInterrupt

    signal.signal(signal.SIGINT, handler)
    return lambda: signal.signal(signal.SIGINT, previous)


def _fail_cleanly(exc: Exception, mapping: Mapping[str, str]) -> Any:
    """One line and exit 2 for a user error or an OS error; re-raise anything else (a bug,
    which keeps its traceback, or a ``typer.Exit``)."""
    if isinstance(exc, QHDesignError):
        if isinstance(exc, InputError):
            exc = translate(exc, mapping, _given_options())
        one = exc.one_line() if hasattr(exc, "one_line") else str(exc)
        _echo_error(one)
        raise typer.Exit(EXIT_USER_ERROR) from None
    if isinstance(exc, OSError):
        # reading or writing a file the checks could not foresee (disk full, a file removed
        # meanwhile): the environment, not a bug
        name = exc.filename or "output"
        _echo_error(f"{name}: {exc.strerror or type(exc).__name__}")
        raise typer.Exit(EXIT_USER_ERROR) from None
    raise exc


def option_number(value: str | float | None, option: str) -> float | None:
    """A plain decimal option value (``"0.5"``); ``nan``, ``inf`` and expressions are refused."""
    if value is None:
        return None
    from qhdesign.units import parse_number

    return parse_number(str(value).strip(), source=f"option {option}")


def option_quantity(value: str | None, dimension: str, option: str) -> float | None:
    """Parse a CLI option value with a unit (``"-0.4 V"``, ``"30 nm"``); ``None`` passes through.

    Every dimensional option needs its unit, except voltages: a plain number given to a voltage
    option is read in volts (``--gate-voltage -0.4``), since negative
    bare numbers are what people type for gate biases. A plain number must be finite and
    decimal (no ``nan``, no ``inf``).
    """
    if value is None:
        return None
    from qhdesign.units import _BARE_NUMBER

    text = str(value).strip()
    if dimension == "voltage" and _BARE_NUMBER.match(text):
        return option_number(text, option)
    from qhdesign.units import parse_quantity

    return parse_quantity(text, dimension, source=f"option {option}")


# ------------------------------------------------------------------ shared options
# One definition per option that several commands take (name, type, help), used as
#   def cmd(stack_file: StackFile, json_out: JsonOut = None, refine: Refine = 1.0): ...
StackFile = Annotated[Path, typer.Argument(help="Layer-stack TOML file.")]
JsonOut = Annotated[Path | None, typer.Option("--json", help="Write results as JSON (SI).")]
CsvOut = Annotated[Path | None, typer.Option("--csv", help="Write the table as CSV.")]
PlotOut = Annotated[
    Path | None, typer.Option("--plot", help="Write the figure (PNG/SVG/PDF by suffix).")
]
Refine = Annotated[
    float,
    typer.Option("--refine", help="Mesh refinement factor, 0.25 to 4 (1 = default mesh)."),
]
Temperature = Annotated[
    str | None,
    typer.Option("--temperature", help='Solve temperature with unit, e.g. "300 mK".'),
]
Surface = Annotated[
    str | None,
    typer.Option("--surface", help="Exposed surface: frozen (charge) or pinned (Fermi level)."),
]
Sheets = Annotated[
    str,
    typer.Option(
        "--sheets",
        help="Sheet model of the wells: 1d-tables (density and tails follow the gate, from "
        "gated 1D solves; default) or constant-dos (closed-form sheets, tails frozen).",
    ),
]
SheetXC = Annotated[
    str,
    typer.Option(
        "--sheet-xc",
        help="With --sheets constant-dos: the sheets' own in-plane exchange-correlation: none, "
        "exchange (2D Hartree-Fock), exchange+correlation (plus the Attaccalite et al. 2002 fit).",
    ),
]
CompressibilityFloor = Annotated[
    float | None,
    typer.Option(
        "--compressibility-floor",
        help="With --sheet-xc: floor on each sheet's dmu/dn as a fraction of pi hbar^2/m* "
        "(0 < f <= 1, default 0.1), where exchange makes it negative.",
    ),
]
GateBarrier = Annotated[
    str | None,
    typer.Option(
        "--gate-barrier", help="Schottky barrier of the gate metal (default: the stack's)."
    ),
]
