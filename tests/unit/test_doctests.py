"""The examples in the docstrings run as tests (doctest, standard library).

Modules: the stack model, the units, the public 1D functions, the SheetModel builder, the
result protocol and the engine's pure parts. Examples that read a stack file name it relative to
the repository root, so they run from there.
"""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = (
    "qhdesign.stack",
    "qhdesign.units",
    "qhdesign.sp1d.solve",
    "qhdesign.sp1d.gates",
    "qhdesign.sp1d.sheets",
    "qhdesign.sp1d.scattering",
    "qhdesign.results",
    "qhdesign.fem.grid",
    "qhdesign.fem.tensor_mesh",
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name, root, monkeypatch):
    monkeypatch.chdir(root)
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS, verbose=False)
    assert result.attempted > 0, f"{name} has no examples"
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"
