"""`qhdesign sweep`, `tolerance`, `plot-sweep`: exit codes, one-line errors, files written."""

from __future__ import annotations

import csv
import json
import math

import pytest
from conftest import ROOT, SCREENED
from conftest import assert_one_line_error as _one_line_error

SETBACK_SPEC = ROOT / "sweeps" / "ql2417_setback.toml"


def _rows(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


def test_sweep_spec_then_plot(cli_runner, app, tmp_path):
    out = tmp_path / "setback.csv"
    res = cli_runner.invoke(app, ["sweep", str(SETBACK_SPEC), "--csv", str(out), "--workers", "1"])
    assert res.exit_code == 0, res.output
    assert "182 designs evaluated (ok 182" in res.stdout  # 14 x 13 grid of the spec
    assert "designs/s" in res.stdout
    rows = _rows(out)
    assert len(rows) == 14 * 13
    assert rows[0]["layers.setback_upper.thickness_nm"] == "20.0"
    assert rows[1]["layers.spacer_upper.thickness_nm"] == "18.0"  # last parameter fastest
    # second run: nothing left to do, nothing duplicated
    res = cli_runner.invoke(app, ["sweep", str(SETBACK_SPEC), "--csv", str(out), "--workers", "1"])
    assert res.exit_code == 0
    assert "0 designs evaluated" in res.stdout and "182 already in the CSV" in res.stdout
    assert len(_rows(out)) == 182
    png = tmp_path / "window.png"
    res = cli_runner.invoke(
        app,
        [
            "plot-sweep",
            str(out),
            "--x",
            "layers.setback_upper.thickness",
            "--y",
            "layers.spacer_upper.thickness",
            "--color",
            "dn_dV_primary_cm^-2/V",
            "--contour",
            "dn_dV_primary_cm^-2/V=3e10",
            "--plot",
            str(png),
        ],
    )
    assert res.exit_code == 0, res.output
    assert png.stat().st_size > 10_000
    line = tmp_path / "line.png"
    res = cli_runner.invoke(
        app,
        [
            "plot-sweep",
            str(out),
            "--x",
            "layers.setback_upper.thickness",
            "--color",
            "v_dep_primary_V",
            "--plot",
            str(line),
        ],
    )
    assert res.exit_code == 0, res.output
    # the same parameter on both axes, and an unknown figure format: one line, exit 2
    same = ["plot-sweep", str(out), "--x", "layers.setback_upper.thickness"]
    res = cli_runner.invoke(app, [*same, "--y", "layers.setback_upper.thickness"])
    assert res.exit_code == 2 and "same parameter" in res.output
    res = cli_runner.invoke(app, [*same, "--plot", str(tmp_path / "w.xyz")])
    assert res.exit_code == 2 and "unsupported figure format" in res.output


def test_sweep_shorthand_on_a_stack(cli_runner, app, tmp_path):
    out = tmp_path / "short.csv"
    dens = '{"primary": "2e11 cm^-2", "screen_upper": "6e10 cm^-2", "screen_lower": "4e10 cm^-2"}'
    res = cli_runner.invoke(
        app,
        [
            "sweep",
            str(SCREENED),
            "--stage",
            "capacitor",
            "--option",
            f"densities={dens}",
            "--param",
            "layers.setback_upper.thickness=20nm..30nm:3",
            "--param",
            "surface.barrier=0.6 eV,0.8 eV",
            "--csv",
            str(out),
            "--workers",
            "1",
            "-q",
        ],
    )
    assert res.exit_code == 0, res.output
    rows = _rows(out)
    assert [(r["layers.setback_upper.thickness_nm"], r["surface.barrier_eV"]) for r in rows] == [
        ("20.0", "0.6"),
        ("20.0", "0.8"),
        ("25.0", "0.6"),
        ("25.0", "0.8"),
        ("30.0", "0.6"),
        ("30.0", "0.8"),
    ]
    lhs = tmp_path / "lhs.csv"
    res = cli_runner.invoke(
        app,
        [
            "sweep",
            str(SCREENED),
            "--stage",
            "capacitor",
            "--lhs",
            "12",
            "--seed",
            "3",
            "--param",
            "layers.setback_upper.thickness=20nm..30nm",
            "--csv",
            str(lhs),
            "-q",
            "--workers",
            "1",
        ],
    )
    assert res.exit_code == 0, res.output
    vals = sorted(float(r["layers.setback_upper.thickness_nm"]) for r in _rows(lhs))
    # Latin hypercube: one value in each of the 12 strata of [20, 30] nm
    assert [math.floor((v - 20) / (10 / 12)) for v in vals] == list(range(12))


def test_tolerance_prints_percentiles_yield_and_sensitivity(cli_runner, app, tmp_path):
    out = tmp_path / "tol.csv"
    js = tmp_path / "tol.json"
    dens = '{"primary": "2e11 cm^-2", "screen_upper": "6e10 cm^-2", "screen_lower": "4e10 cm^-2"}'
    res = cli_runner.invoke(
        app,
        [
            "tolerance",
            str(SCREENED),
            "--samples",
            "60",
            "--seed",
            "5",
            "--stage",
            "capacitor",
            "--option",
            f"densities={dens}",
            "--require",
            "v_screening_empty_V=-0.098..",
            "--csv",
            str(out),
            "--json",
            str(js),
            "--workers",
            "1",
        ],
    )
    assert res.exit_code == 0, res.output
    assert "60 of 60 samples solved" in res.stdout
    assert "meeting all criteria" in res.stdout
    rows = _rows(out)
    assert len(rows) == 60
    assert "tol.ga_rate" in rows[0] and "tol.jitter.primary" in rows[0]
    rep = json.loads(js.read_text())
    v = [float(r["v_screening_empty_V"]) for r in rows]
    # fraction meeting the criterion, counted directly from the CSV
    assert rep["fraction_meeting_criteria"] == pytest.approx(sum(x >= -0.098 for x in v) / 60)
    p = rep["percentiles"]["depth_primary_nm"]
    assert p["P5"] < p["P50"] < p["P95"]
    # the primary-well depth is a sum of layer thicknesses: the run's rates dominate the jitter
    top = [name for name, _ in rep["sensitivity_src"]["depth_primary_nm"][:2]]
    assert set(top) == {"tol.ga_rate", "tol.al_rate"}
    png = tmp_path / "hist.png"
    res = cli_runner.invoke(app, ["plot-sweep", str(out), "--plot", str(png)])
    assert res.exit_code == 0, res.output
    assert png.exists()


@pytest.mark.parametrize(
    ("args", "fragments"),
    [
        (
            ["--param", "layers.primry.thickness=20nm..30nm:3"],
            ["key 'space.parameters.\"layers.primry.thickness\"'", "no layer named 'primry'"],
        ),
        (["--param", "layers.primary.thickness=20nm..30nm"], ["option --param", ":STEPS"]),
        (
            ["--param", "layers.primary.thickness=20nm..3000um:2"],
            ["layers.primary.thickness", "'3000um' rejected"],
        ),
        (["--param", "surface.barrier=0.7 eV", "--workers", "0"], ["option --workers", ">= 1"]),
        (["--param", "surface.barrier=0.7 eV", "--executor", "gpu"], ["option --executor"]),
        ([], ["is a stack file, not a sweep spec"]),
    ],
)
def test_sweep_bad_input_is_one_line_exit_2(cli_runner, app, tmp_path, args, fragments):
    res = cli_runner.invoke(
        app,
        ["sweep", str(SCREENED), "--stage", "capacitor", "--csv", str(tmp_path / "x.csv"), *args]
        if args
        else ["sweep", str(SCREENED), "--csv", str(tmp_path / "x.csv")],
    )
    _one_line_error(res, *fragments)


def test_bad_spec_file_and_plot_options(cli_runner, app, tmp_path):
    spec = tmp_path / "bad.toml"
    spec.write_text(
        SETBACK_SPEC.read_text()
        .replace('kind = "grid"', 'kind = "spiral"')
        .replace('"../stacks/', f'"{ROOT}/stacks/')
    )
    res = cli_runner.invoke(app, ["sweep", str(spec)])
    _one_line_error(res, "bad.toml: key 'space.kind': got 'spiral'; allowed: grid, zip, lhs")
    res = cli_runner.invoke(app, ["plot-sweep", str(tmp_path / "none.csv")])
    _one_line_error(res, "none.csv: sweep CSV not found")
    res = cli_runner.invoke(
        app,
        [
            "tolerance",
            str(SCREENED),
            "--stage",
            "capacitor",
            "--thickness",
            "1%",
            "--layer-jitter",
            "2%",
            "--samples",
            "3",
        ],
    )
    _one_line_error(res, "space.tolerance.layer_jitter", "exceeds the total thickness tolerance")


def test_monte_carlo_spec_prints_tolerance_statistics(cli_runner, app, tmp_path):
    spec = ROOT / "sweeps" / "ql2417_tolerance.toml"
    out = tmp_path / "mc.csv"
    res = cli_runner.invoke(app, ["sweep", str(spec), "--csv", str(out), "--workers", "1"])
    assert res.exit_code == 0, res.output
    assert "400 of 400 samples solved" in res.stdout
    assert "P5" in res.stdout and "P95" in res.stdout
    v = [float(r["v_screening_empty_V"]) for r in _rows(out)]
    # the spec's criterion v_screening_empty_V >= -0.33, counted from the CSV
    frac = sum(x >= -0.33 for x in v) / len(v)
    assert f"meeting all criteria (-0.33 <= v_screening_empty_V <= inf): {100 * frac:.1f} %" in (
        res.stdout
    )
    png = tmp_path / "scatter.png"
    res = cli_runner.invoke(
        app,
        [
            "plot-sweep",
            str(out),
            "--x",
            "tol.ga_rate",
            "--color",
            "depth_primary_nm",
            "--plot",
            str(png),
        ],
    )
    assert res.exit_code == 0, res.output


def test_check_validates_without_evaluating(cli_runner, app, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = cli_runner.invoke(app, ["sweep", str(SETBACK_SPEC), "--check"])
    assert res.exit_code == 0, res.output
    assert "valid; 182 designs (grid) of stage 'capacitor'" in res.stdout
    assert not list(tmp_path.iterdir())  # nothing written
