"""Command-line interface (typer). ``qhdesign --help`` lists the commands."""

from __future__ import annotations


def main() -> None:
    """Console-script entry point."""
    from .app import build_app

    build_app()()
