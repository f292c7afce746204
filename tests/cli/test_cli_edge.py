"""CLI of the 2D stage: ``qhdesign edge`` and ``qhdesign pinchoff``.

Checks: documented JSON keys in SI (docs/cli.md), files written, bad input -> one line on
stderr and exit code 2 (issue 4), and the pinch-off definition (the centre density crosses 1 %
of the bulk density between the sweep points around the reported voltage; docs/models.md).
"""

from __future__ import annotations

import json
import re

import pytest
from conftest import ROOT
from conftest import assert_one_line_error as _one_line_error


def test_edge_writes_documented_outputs(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "edge.json"
    r = cli_runner.invoke(
        app,
        [
            "edge",
            str(screened_path),
            "--gate-voltage",
            "-1.0",
            "--field",
            "2 T",
            "--filling",
            "1",
            "--perimeter",
            "4 um",
            "--json",
            str(out),
            "--csv",
            str(tmp_path / "edge.csv"),
            "--plot",
            str(tmp_path / "edge.png"),
            "--fields",
            str(tmp_path / "edge.xdmf"),
        ],
    )
    assert r.exit_code == 0, r.output
    data = json.loads(out.read_text())
    assert set(data["wells"]) == {"screen_upper", "primary", "screen_lower"}
    for w in data["wells"].values():
        for key in ("depletion_width_m", "healing_length_m", "cut_under_gate", "bulk_density_m2"):
            assert key in w
    prim = data["wells"]["primary"]
    assert prim["cut_under_gate"] is True
    assert 0 < prim["depletion_width_m"] < 1e-6  # SI: metres
    for key in ("edge_field_V_per_m", "edge_velocity_m_per_s", "edge_shift_m_per_V"):
        assert isinstance(data[key], float)
    # v = E/B (definition, issue 4)
    assert data["edge_velocity_m_per_s"] == pytest.approx(data["edge_field_V_per_m"] / 2.0)
    # dA/dV = -P dx/dV (definition)
    assert data["area_change_m2_per_V"] == pytest.approx(-4e-6 * data["edge_shift_m_per_V"])
    header = (tmp_path / "edge.csv").read_text().splitlines()[0]
    assert header.startswith("x_nm,") and "primary_filling" in header
    assert (tmp_path / "edge.png").stat().st_size > 10_000
    assert (tmp_path / "edge.xdmf").exists() and (tmp_path / "edge.h5").exists()


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--gate-voltage", "-5", "--gate-gap", "200 nm"], "no electrons anywhere"),
        (["--gate-voltage", "-0.5", "--gate-gap", "5 nm"], "narrower than the mesh"),
        (["--gate-voltage", "-0.5", "--field", "0", "--filling", "1"], "--field"),
        (["--gate-voltage", "-25"], "allowed -20 V"),
    ],
)
def test_edge_bad_input_is_one_line_exit_2(cli_runner, app, screened_path, tmp_path, args, needle):
    out = tmp_path / "never.json"
    r = cli_runner.invoke(app, ["edge", str(screened_path), *args, "--json", str(out)])
    assert needle in _one_line_error(r)
    assert not out.exists()


def test_pinchoff_json_and_definition(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "pinch.json"
    r = cli_runner.invoke(
        app,
        [
            "pinchoff",
            str(screened_path),
            "--gate-gap",
            "300 nm",
            "--from",
            "0",
            "--to",
            "-2",
            "--step",
            "0.25",
            "--refine",
            "0.5",
            "--json",
            str(out),
            "--csv",
            str(tmp_path / "pinch.csv"),
            "--plot",
            str(tmp_path / "pinch.png"),
        ],
    )
    assert r.exit_code == 0, r.output
    data = json.loads(out.read_text())
    volts = data["sweep"]["gate_voltage_V"]
    csv_lines = (tmp_path / "pinch.csv").read_text().splitlines()
    assert csv_lines[0].startswith("gate_voltage_V,") and len(csv_lines) == len(volts) + 1
    assert (tmp_path / "pinch.png").stat().st_size > 10_000
    assert set(data["pinchoff_V"]) == {"screen_upper", "primary", "screen_lower"}
    found = 0
    for well, vp in data["pinchoff_V"].items():
        if vp is None:
            continue
        found += 1
        thr = data["pinchoff_fraction_of_bulk"] * data["bulk_density_m2"][well]
        dens = data["sweep"]["centre_density_m2"][well]
        above = max(i for i, v in enumerate(volts) if v >= vp)
        assert dens[above] >= thr and dens[above + 1] < thr
    assert found >= 1


def test_pinchoff_bad_gap_exit_2(cli_runner, app, screened_path):
    r = cli_runner.invoke(app, ["pinchoff", str(screened_path), "--gate-gap", "-3 nm"])
    assert "--gate-gap" in _one_line_error(r)


def test_edge_split_gate_reports_constriction(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "gap.json"
    r = cli_runner.invoke(
        app,
        [
            "edge",
            str(screened_path),
            "--gate-voltage",
            "-0.8",
            "--gate-gap",
            "250 nm",
            "--refine",
            "0.5",
            "--json",
            str(out),
        ],
    )
    assert r.exit_code == 0, r.output
    data = json.loads(out.read_text())
    assert data["gap_m"] == pytest.approx(250e-9)
    for w in data["wells"].values():
        # definition (docs/cli.md): pinched <=> centre density below 1 % of the bulk
        assert w["pinched"] == (w["centre_density_m2"] < 0.01 * w["bulk_density_m2"])
        if w["channel_width_m"] is not None:
            assert 0 < w["channel_width_m"] < 1e-6


def test_pinchoff_tells_closed_at_start_from_never_pinched(
    cli_runner, app, screened_path, tmp_path
):
    # starting at -1.2 V the upper screening well is already closed at the constriction centre,
    # the lower one stays open down to -1.5 V: the two must not read the same
    out = tmp_path / "p.json"
    args = [
        "pinchoff",
        str(screened_path),
        "--gate-gap",
        "300 nm",
        "--from",
        "-1.2",
        "--to",
        "-1.5",
    ]
    r = cli_runner.invoke(app, [*args, "--step", "0.1", "--refine", "0.5", "--json", str(out)])
    assert r.exit_code == 0, r.output
    status = json.loads(out.read_text())["pinchoff_status"]
    assert status["screen_upper"] == "closed at start"
    assert status["screen_lower"] == "open"
    assert "already pinched off" in r.output and "not pinched in the sweep" in r.output


def test_pinchoff_without_electrons_exit_2(cli_runner, app, tmp_path):
    # an undoped stack has nothing to pinch off: same one-line refusal as `edge`
    text = (ROOT / "stacks" / "ql2409_doped_well.toml").read_text()
    undoped = tmp_path / "undoped.toml"
    undoped.write_text(re.sub(r'sheet = "[^"]*"', 'sheet = "1e6 cm^-2"', text))
    r = cli_runner.invoke(app, ["pinchoff", str(undoped), "--gate-gap", "300 nm"])
    assert "no electrons" in _one_line_error(r)


def test_edge_flags_strips_narrower_than_the_magnetic_length(
    cli_runner, app, screened_path, tmp_path
):
    # at 10 T, l_B = sqrt(hbar/eB) = 8.11 nm (analytic); a 0.1 meV nu = 1/3 gap gives a CSG strip
    # of a few nm on the demo edge: the flag must appear in the text, the JSON and the plot
    out = tmp_path / "edge.json"
    args = ["edge", str(screened_path), "--gate-voltage", "-1.0", "--field", "10 T"]
    args += ["--filling", "1/3", "--gap-energy", "0.1 meV", "--spin-gap", "enhanced"]
    args += ["--json", str(out), "--plot", str(tmp_path / "edge.png")]
    r = cli_runner.invoke(app, args)
    assert r.exit_code == 0, r.output
    data = json.loads(out.read_text())
    l_b = (1.054571817e-34 / (1.602176634e-19 * 10.0)) ** 0.5
    strips = {round(s["filling"], 6): s for s in data["strips"]}
    s13 = strips[round(1 / 3, 6)]
    assert s13["magnetic_length_m"] == pytest.approx(l_b, rel=1e-9)
    assert s13["narrower_than_lB"] == (s13["width_m"] < l_b)
    assert s13["narrower_than_lB"]
    assert data["strips_narrower_than_lB"] == [
        s["filling"] for s in data["strips"] if s["narrower_than_lB"]
    ]
    assert data["strip_model"]["odd_gap_kind"].startswith("exchange-enhanced")
    assert data["strip_model"]["min_width_magnetic_lengths"] == 1.0
    assert "narrower than 1 l_B" in r.output
    assert (tmp_path / "edge.png").stat().st_size > 10_000


@pytest.mark.parametrize(
    ("args", "needle"),
    [
        (["--spin-gap", "huge"], "--spin-gap"),
        (["--spin-gap", "-1 meV"], "--spin-gap"),
        (["--g-effective", "0"], "--g-effective"),
        (["--strip-min-lb", "0"], "--strip-min-lb"),
    ],
)
def test_edge_bad_strip_options_exit_2(cli_runner, app, screened_path, args, needle):
    r = cli_runner.invoke(app, ["edge", str(screened_path), "--gate-voltage", "-1", *args])
    assert needle in _one_line_error(r)
