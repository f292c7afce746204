"""``qhdesign island``: the stack path end to end (JSON keys, plot) and bad input (exit 2, one line
naming the option)."""

from __future__ import annotations

import json

import pytest
from conftest import assert_one_line_error


def test_island_json_and_plot(cli_runner, app, screened_path, tmp_path):
    out, png = tmp_path / "island.json", tmp_path / "island.png"
    res = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--radius",
            "0.6 um",
            "--filling",
            "1/3",
            "--gap",
            "50 ueV",
            "--json",
            str(out),
            "--plot",
            str(png),
        ],
    )
    assert res.exit_code == 0, res.output
    assert "K_IL/K_I" in res.output
    data = json.loads(out.read_text())
    assert data["geometry"]["radius_m"] == pytest.approx(0.6e-6)  # the option, in SI
    assert data["geometry"]["gate_radius_m"] == pytest.approx(0.7e-6)  # default offset 100 nm
    for key in ("C_II", "C_LL", "C_IL", "C_total"):
        assert key in data["capacitance_F"]
    for key in ("K_I", "K_L", "K_IL", "K_tilde"):
        assert key in data["elastance_J"]
    qh = data["quantum_hall"]
    assert qh["filling"] == pytest.approx(1 / 3)
    assert qh["gap_energy_J"] == pytest.approx(50e-6 * 1.602176634e-19)  # 50 ueV in J
    assert qh["fixed_filling_window_T"] > qh["compressible_period_T"] > 0
    assert data["solver"]["dofs"] > 0
    assert png.stat().st_size > 10_000


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--radius", "-0.8 um"], "--radius"),  # negative radius
        (["--radius", "0.8"], "--radius"),  # missing unit
        (["--radius", "0.1 um", "--ring-width", "150 nm"], "--ring-width"),  # ring > island
        (["--radius", "0.8 um", "--gate-offset", "-50 nm"], "--gate-offset"),  # R_gate < R
        (["--radius", "0.8 um", "--filling", "2/5"], "--filling"),  # not a Laughlin 1/m
        (["--radius", "0.8 um", "--gap", "50 ueV"], "--gap"),  # gap without filling
        (["--radius", "0.8 um", "--screening", "metal"], "--screening"),
    ],
)
def test_bad_input_one_line(cli_runner, app, screened_path, args, fragment):
    res = cli_runner.invoke(app, ["island", str(screened_path), *args])
    assert_one_line_error(res, fragment)
