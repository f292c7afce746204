"""Every notebook (jupytext percent script) in notebooks/ runs to completion.

Each notebook ends with a section of asserts (charge neutrality, the hand-off carrying every
charge, a closed-form check, ...), so running it checks physics, not only that it runs.
"""

import subprocess
import sys

import pytest
from conftest import ROOT

NOTEBOOKS = sorted((ROOT / "notebooks").glob("*.py"))


def test_there_are_notebooks():
    assert NOTEBOOKS


def test_every_notebook_ends_with_invariant_checks():
    # the last section of every notebook is a cell of asserts (physical invariants or a check
    # against a closed form), so a notebook that runs has also checked its physics
    for path in NOTEBOOKS:
        text = path.read_text(encoding="utf-8")
        tail = text[text.rfind("# %% [markdown]") :]
        assert "assert " in tail, path.name


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
