"""Every notebook (jupytext percent script) in notebooks/ runs to completion."""

import subprocess
import sys

import pytest
from conftest import ROOT

NOTEBOOKS = sorted((ROOT / "notebooks").glob("*.py"))


def test_there_are_notebooks():
    assert NOTEBOOKS


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_runs(path):
    res = subprocess.run(
        [sys.executable, str(path)],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=900,
        env={"MPLBACKEND": "Agg", **__import__("os").environ},
    )
    assert res.returncode == 0, res.stderr[-3000:]
