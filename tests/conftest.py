"""Shared fixtures. Figures use the Agg backend; paths are relative to the repository root."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("MPLBACKEND", "Agg")

ROOT = Path(__file__).resolve().parents[1]
STACKS = sorted((ROOT / "stacks").glob("*.toml"))
SCREENED = ROOT / "stacks" / "ql2417_screened.toml"


@pytest.fixture
def root() -> Path:
    return ROOT


@pytest.fixture
def screened_path() -> Path:
    return SCREENED


@pytest.fixture
def cli_runner():
    from typer.testing import CliRunner

    return CliRunner()


@pytest.fixture
def app():
    from qhdesign.cli.app import build_app

    return build_app()
