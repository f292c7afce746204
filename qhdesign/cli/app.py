"""The typer application and command registration.

Each command group lives in its own module, which defines ``register(app)``; this module
imports them in pipeline order. Heavy imports (DOLFINx, gmsh, matplotlib) happen inside the
command functions, so ``qhdesign --help`` stays fast.
"""

from __future__ import annotations

import importlib

import typer

#: Command modules, in the order their commands appear in ``--help``.
COMMAND_MODULES = (
    "check",
    "bands",
    "edge",
    "island",
    "layout",
    "size",
    "interpret",
    "sweep",
    "report",
)


def _version_callback(value: bool) -> None:
    if value:
        from qhdesign import __version__

        typer.echo(f"qhdesign {__version__}")
        raise typer.Exit(0)


def build_app() -> typer.Typer:
    """Create the app and register every command module that is present."""
    app = typer.Typer(
        name="qhdesign",
        help="Design calculator for screened GaAs/AlGaAs heterostructures and quantum Hall "
        "interferometers. Results are model estimates: check them against calibration samples.",
        no_args_is_help=True,
        add_completion=False,
        pretty_exceptions_enable=False,
        # plain help and usage errors: rendering them with rich costs ~0.3 s of imports at
        # every start-up (measured with python -X importtime; docs/performance.md)
        rich_markup_mode=None,
    )

    @app.callback()
    def _root(
        version: bool = typer.Option(
            False,
            "--version",
            callback=_version_callback,
            is_eager=True,
            help="Print the version and exit.",
        ),
    ) -> None:
        """qhdesign command line."""

    for name in COMMAND_MODULES:
        try:
            module = importlib.import_module(f"qhdesign.cli.{name}")
        except ModuleNotFoundError as exc:  # a command group not written yet
            if exc.name == f"qhdesign.cli.{name}":
                continue
            raise
        register = getattr(module, "register", None)
        if register is not None:
            register(app)
    return app
