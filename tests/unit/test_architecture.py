"""Package boundaries: the FEM stage packages are built from the SheetModel contract alone.

``qhdesign.fem`` (the engine), ``qhdesign.section`` and ``qhdesign.island`` (the stages) must not
import the stack, the 1D stage or the pipeline that joins them; only :mod:`qhdesign.pipeline`
does. Checked statically (every import statement, also those inside functions) and at run time
(building a section and an island column from a hand-made sheet model loads no 1D module).
"""

from __future__ import annotations

import ast
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
FEM_PACKAGES = ("fem", "section", "island")
FORBIDDEN = ("qhdesign.sp1d", "qhdesign.stack", "qhdesign.stackfile", "qhdesign.pipeline")


def _imports(path: Path, package: str | None = None) -> list[str]:
    """Absolute module names imported by a file (relative imports resolved against
    ``package``, by default the file's own package)."""
    if package is None:
        package = ".".join(path.relative_to(ROOT).with_suffix("").parts[:-1])
    out = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                parts = package.split(".")
                parent = ".".join(parts[: len(parts) - node.level + 1])
                base = f"{parent}.{base}" if base else parent
            out += [base] + [f"{base}.{a.name}" for a in node.names]
    return out


@pytest.mark.parametrize("package", FEM_PACKAGES)
def test_fem_packages_import_neither_stack_nor_1d_stage(package):
    files = sorted((ROOT / "qhdesign" / package).glob("*.py"))
    assert files, package
    bad = []
    for f in files:
        for name in _imports(f):
            if any(name == m or name.startswith(m + ".") for m in FORBIDDEN):
                bad.append(f"{f.relative_to(ROOT)}: {name}")
    assert not bad, bad


def test_the_check_sees_a_forbidden_import(tmp_path):
    # the static check must be able to fail: a relative import of the 1D stage from a stage file
    fake = tmp_path / "probe.py"
    fake.write_text("def f():\n    from ..sp1d import solve_bands\n", encoding="utf-8")
    assert "qhdesign.sp1d" in _imports(fake, "qhdesign.section")


def test_stages_built_from_a_sheet_model_load_no_1d_module():
    code = textwrap.dedent(
        """
        import sys
        import numpy as np
        from qhdesign.sheets import SheetModel, WellSheet
        from qhdesign.section.model import cross_section_from_sheet_model
        from qhdesign.island import column_from_sheet_model
        well = WellSheet("p", "primary", 100e-9, 2e15, 2.8e17, 90e-9, 110e-9)
        model = SheetModel(
            sheets=(well,), temperature_K=0.1,
            fixed_charge_z_m=np.array([25e-9]), fixed_charge_C_m3=np.array([0.0]),
            surface_charge_C_m2=0.0, surface_kind="exposed", surface_barrier_J=1e-19,
            surface_bias_V=0.0, layer_z_m=np.array([0.0, 50e-9, 300e-9]),
            layer_permittivity=np.array([12.2, 12.9]), substrate_kind="deep",
        )
        cross_section_from_sheet_model(model)
        column_from_sheet_model(model)
        loaded = [m for m in sys.modules if m.startswith(("qhdesign.sp1d", "qhdesign.pipeline"))]
        print(loaded)
        assert not loaded, loaded
        """
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr + r.stdout
