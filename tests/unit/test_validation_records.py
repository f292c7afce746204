"""The validation table: every reference check names its source; the renderer refuses one that
does not and keeps the hand-written part of docs/validation.md."""

from __future__ import annotations

import ast
import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
REFERENCE = sorted((ROOT / "tests" / "reference").glob("test_*.py"))
SCRIPT = ROOT / "scripts" / "render_validation.py"


def _calls(tree: ast.AST, name: str) -> list[ast.Call]:
    return [
        n
        for n in ast.walk(tree)
        if isinstance(n, ast.Call) and isinstance(n.func, ast.Name) and n.func.id == name
    ]


@pytest.mark.parametrize("path", REFERENCE, ids=[p.name for p in REFERENCE])
def test_every_reference_module_records_its_checks_with_a_source(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    calls = _calls(tree, "record_check")
    assert calls, f"{path.name}: no check recorded through record_check"
    for call in calls:
        assert len(call.args) >= 5, f"{path.name}:{call.lineno}: record_check needs 5 arguments"
        src = call.args[1]
        if isinstance(src, ast.Constant):
            assert isinstance(src.value, str) and len(src.value.strip()) >= 8, (
                f"{path.name}:{call.lineno}: a reference check without a source"
            )


def _make_record():
    # the fixture's record builder, loaded apart so that this test adds nothing to the records
    spec = importlib.util.spec_from_file_location("_conftest_copy", ROOT / "tests" / "conftest.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.make_record


def test_record_without_source_is_refused():
    make_record = _make_record()
    with pytest.raises(ValueError, match="no source"):
        make_record("t", "a check", "", 1.0, 1.0, 1e-3)
    with pytest.raises(ValueError, match="no source"):
        make_record("t", "a check", "TODO", 1.0, 1.0, 1e-3)
    # a sourced check records its deviation and whether it held
    rec = make_record("t", "a check", "analytic: 1 = 1", [1.001, 0.9995], [1.0, 1.0], 1e-2)
    assert rec["deviation"] == pytest.approx(1e-3) and rec["passed"] and rec["count"] == 2
    assert not make_record("t", "c", "analytic: x", 1.1, 1.0, 1e-2)["passed"]


def _run(args, cwd):
    return subprocess.run(
        [sys.executable, str(SCRIPT), *args], cwd=cwd, capture_output=True, text=True
    )


def _rec(**kw):
    base = {
        "test": "tests/reference/test_sp1d_x.py::test_a",
        "check": "infinite well",
        "source": "analytic n²π²ħ²/(2m*L²)",
        "value": 1.0,
        "reference": 1.0,
        "count": 3,
        "unit": "",
        "kind": "rel",
        "tolerance": 1e-4,
        "deviation": 8.2e-5,
        "passed": True,
    }
    base.update(kw)
    return base


def test_renderer_refuses_a_record_without_source(tmp_path):
    rec = tmp_path / "r.json"
    rec.write_text(json.dumps([_rec(), _rec(source="")]))
    page = tmp_path / "validation.md"
    page.write_text("# Validation\n")
    out = _run([str(rec), str(page)], tmp_path)
    assert out.returncode == 2
    assert "names no source" in out.stderr
    assert page.read_text() == "# Validation\n"  # nothing written


def test_renderer_fills_the_generated_part_and_keeps_the_rest(tmp_path):
    rec = tmp_path / "r.json"
    rec.write_text(
        json.dumps(
            [
                _rec(),
                _rec(
                    test="tests/reference/test_tf2d_island_reference.py::test_b",
                    check="disk",
                    kind="abs",
                    unit="V_g",
                    deviation=4.3e-5,
                    count=1,
                ),
            ]
        )
    )
    page = tmp_path / "validation.md"
    page.write_text("# Validation\nintro\n\n## By hand\n| a | b |\n")
    assert _run([str(rec), str(page)], tmp_path).returncode == 0
    text = page.read_text()
    assert "intro" in text and "## By hand" in text
    assert "### 1D Schrödinger–Poisson (generated)" in text
    assert "### Island capacitances (generated)" in text
    row = "| infinite well | analytic n²π²ħ²/(2m*L²) | 0.0001 rel | 8.2e-05 rel (max of 3) |"
    assert row in text
    assert "4.3e-05 V_g" in text
    # rendering again replaces the generated part instead of appending a second one
    assert _run([str(rec), str(page)], tmp_path).returncode == 0
    assert page.read_text().count("(generated)") == 2
