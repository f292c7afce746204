"""``qhdesign island`` at the operating point: JSON keys (SI, unit in the key), the field-range
CSV and plot, the labelled electronic-radius input, and bad input (exit 2, one line)."""

from __future__ import annotations

import csv
import json

import pytest
from conftest import assert_one_line_error

REQUIRED = (
    "electronic_radius_m",
    "A_I_m2",
    "A_L_m2",
    "dA_I_dV_m2_per_V",
    "K_I_J",
    "K_L_J",
    "K_IL_J",
    "K_I_edge_term_J",
    "K_IL_over_K_I",
    "charging_energy_J",
    "period_compressible_T",
    "period_incompressible_T",
    "window_T",
)
BASE = ["--gate-voltage", "-1.0", "--filling", "1/3", "--gap", "120 ueV"]


@pytest.mark.slow
def test_operating_island_json_csv_plot(cli_runner, app, screened_path, tmp_path):
    out, table, png = tmp_path / "i.json", tmp_path / "k.csv", tmp_path / "i.png"
    res = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--gate-radius",
            "1.25 um",
            *BASE,
            "--field-range",
            "12..13.5 T:3",
            "--csv",
            str(table),
            "--json",
            str(out),
            "--plot",
            str(png),
        ],
    )
    assert res.exit_code == 0, res.output
    assert "electronic radius" in res.output and "K_IL/K_I" in res.output
    data = json.loads(out.read_text())
    for key in REQUIRED:
        assert isinstance(data[key], float), key
    assert data["gate_radius_m"] == pytest.approx(1.25e-6, rel=1e-9, abs=0)  # the option, in SI
    assert data["gate_radius_input"] == "lithographic"
    assert data["electronic_radius_m"] < data["gate_radius_m"]
    assert data["K_I_J"] == pytest.approx(
        data["K_I_electrostatic_J"] + data["K_I_edge_term_J"], rel=1e-9, abs=0
    )
    assert data["K_IL_over_K_I"] == pytest.approx(data["K_IL_J"] / data["K_I_J"], rel=1e-9, abs=0)
    assert data["gap_input_kind"] == "quasiparticle"
    assert data["quasiparticle_gap_J"] == pytest.approx(120e-6 * 1.602176634e-19, rel=1e-9, abs=0)
    wells = data["screening_wells"]
    assert set(wells) == {"screen_upper", "screen_lower"}
    for w in wells.values():
        assert w["state"] in ("compressible", "near-incompressible", "emptied under the gate")
        assert 0 < w["filling"] < 5
    rows = list(csv.DictReader(table.open()))
    assert len(rows) == 3
    assert [float(r["field_T"]) for r in rows] == pytest.approx([12.0, 12.75, 13.5])
    for key in (*REQUIRED, "screening_wells.screen_upper.filling", "primary_filling"):
        assert key in rows[0], key
    assert rows[0]["screening_wells.screen_upper.state"] in (
        "compressible",
        "near-incompressible",
        "emptied under the gate",
    )
    # fillings scale as 1/B
    nu = [float(r["screening_wells.screen_lower.filling"]) for r in rows]
    assert nu[0] * 12.0 == pytest.approx(nu[2] * 13.5, rel=1e-9, abs=0)
    assert png.stat().st_size > 10_000


@pytest.mark.slow
def test_electronic_radius_input_is_labelled_and_reached(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "i.json"
    res = cli_runner.invoke(
        app,
        ["island", str(screened_path), "--electronic-radius", "1.1 um", *BASE, "--json", str(out)],
    )
    assert res.exit_code == 0, res.output
    assert "electronic radius 1100 nm" in res.output
    data = json.loads(out.read_text())
    assert data["gate_radius_input"] == "electronic radius"
    assert data["electronic_radius_input_m"] == pytest.approx(1.1e-6, rel=1e-9, abs=0)
    assert data["electronic_radius_m"] == pytest.approx(1.1e-6, abs=0.5e-9)
    assert data["gate_radius_m"] > 1.1e-6


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--gate-radius", "1.2 um", "--electronic-radius", "1 um", *BASE], "--gate-radius"),
        (["--gate-radius", "1.2", *BASE], "--gate-radius"),  # no unit
        (["--gate-radius", "1.2 um", "--filling", "1/3", "--gap", "120 ueV"], "--gate-voltage"),
        (["--gate-radius", "1.2 um", "--gate-voltage", "-1", "--filling", "1/3"], "--gap"),
        (["--gate-radius", "1.2 um", *BASE, "--gap-kind", "transport"], "--gap-kind"),
        (["--gate-radius", "1.2 um", *BASE, "--field-range", "12..13"], "--field-range"),
        (["--gate-radius", "1.2 um", *BASE, "--field-range", "13..12 T:5"], "--field-range"),
        (["--gate-radius", "1.2 um", *BASE, "--field-range", "12..13 T:1"], "--field-range"),
        (["--gate-radius", "1.2 um", *BASE, "--csv", "x.csv"], "--csv"),
        (["--gate-radius", "1.2 um", *BASE, "--bulk-charge", "rim"], "--bulk-charge"),
        (["--gate-radius", "1.2 um", *BASE, "--r-threshold", "2"], "--r-threshold"),
        (["--gate-radius", "1.2 um", *BASE, "--quantum-lifetime", "1"], "--quantum-lifetime"),
        (
            [
                "--gate-radius",
                "1.2 um",
                "--gate-voltage",
                "-1",
                "--filling",
                "2/5",
                "--gap",
                "1 ueV",
            ],
            "--filling",
        ),
    ],
)
def test_bad_input_one_line(cli_runner, app, screened_path, args, fragment):
    res = cli_runner.invoke(app, ["island", str(screened_path), *args])
    assert_one_line_error(res, fragment)
