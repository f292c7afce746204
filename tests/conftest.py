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


def assert_one_line_error(result, *fragments) -> str:
    """A CLI result failed cleanly: exit 2, one line on stderr starting 'error: ', no traceback,
    and every fragment (strings, or one list of strings) present. Returns the line."""
    if len(fragments) == 1 and isinstance(fragments[0], list | tuple):
        fragments = tuple(fragments[0])
    assert result.exit_code == 2, result.output
    err = (result.stderr or "").strip()
    assert err.startswith("error: "), err
    assert "\n" not in err, err
    assert "Traceback" not in result.output
    for frag in fragments:
        assert frag in err, (frag, err)
    return err
