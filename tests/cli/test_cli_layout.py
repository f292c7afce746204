"""``qhdesign layout``: bad layouts and options fail with one line and exit code 2 before any 3D
work (the 3D run itself is exercised, serial and under mpiexec, in
tests/consistency/test_layout3d.py)."""

from __future__ import annotations

import pytest
from conftest import ROOT, assert_one_line_error

CIRCLE = ROOT / "stacks" / "layouts" / "ql2417_fp_circle.toml"


def test_layout_in_help(cli_runner, app):
    res = cli_runner.invoke(app, ["layout", "--help"])
    assert res.exit_code == 0
    assert "--fields" in res.output and "--gate" in res.output and "--gap" in res.output


@pytest.mark.parametrize(
    "args, fragments",
    [
        (["--gate", "nope=-0.5V"], ["no gate 'nope'"]),
        (["--gate", "fp_plunger_upper=0.9V"], ["option --gate", "fp_plunger_upper", "Schottky"]),
        (["--gate", "fp_plunger_upper"], ["option --gate", "NAME=VOLTAGE"]),
        (["--refine", "9"], ["option --refine"]),
        (["--fields", "out.vtk"], ["option --fields", "XDMF"]),
        (["--field", "5 nm"], ["option --field"]),  # a length is not a field
        (["--gap", "120 ueV", "--filling", "2/5"], ["--filling", "Laughlin"]),
        (["--gap", "5 nm"], ["option --gap"]),
        (["--gap", "120 ueV", "--bulk-charge", "ring"], ["--bulk-charge", "uniform"]),
    ],
)
def test_bad_options_one_line(cli_runner, app, screened_path, args, fragments):
    res = cli_runner.invoke(app, ["layout", str(screened_path), str(CIRCLE), *args])
    assert_one_line_error(res, fragments)


def test_bad_layout_one_line(cli_runner, app, screened_path, tmp_path):
    text = CIRCLE.read_text().replace('gap = "300 nm"', 'gap = "100 nm"')
    bad = tmp_path / "narrow.toml"
    bad.write_text(text.replace('stack = "../ql2417_screened.toml"', f'stack = "{screened_path}"'))
    res = cli_runner.invoke(app, ["layout", str(screened_path), str(bad)])
    assert_one_line_error(res, [str(bad), "island.gap", "narrower than the mesh"])


def test_missing_layout_file(cli_runner, app, screened_path, tmp_path):
    res = cli_runner.invoke(app, ["layout", str(screened_path), str(tmp_path / "none.toml")])
    assert_one_line_error(res, ["none.toml", "file not found"])
