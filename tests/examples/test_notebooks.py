"""Every notebook (jupytext percent script) in notebooks/ runs to completion.

Each notebook ends with a "Checks: physical invariants" cell of asserts (charge neutrality, the
hand-off carrying every charge, ...), so running it checks physics, not only that it runs.
"""

import subprocess
import sys

import pytest
from conftest import ROOT

NOTEBOOKS = sorted((ROOT / "notebooks").glob("*.py"))


def test_there_are_notebooks():
    assert NOTEBOOKS


def test_every_notebook_ends_with_invariant_checks():
    for path in NOTEBOOKS:
        text = path.read_text(encoding="utf-8")
        tail = text[text.rfind("# %% [markdown]") :]
        assert "Checks: physical invariants" in tail and "assert " in tail, path.name


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
