"""Island geometry in sweeps: ``options.<name>`` parameters with units, resumable CSV, the
growth-tolerance Monte Carlo through the island stage on 2 workers, and bad option paths."""

from __future__ import annotations

import csv
import math

import pytest
from conftest import SCREENED, assert_one_line_error


def _rows(path):
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


@pytest.mark.slow
def test_island_radius_sweep_is_resumable(cli_runner, app, tmp_path):
    out = tmp_path / "island.csv"
    args = [
        "sweep",
        str(SCREENED),
        "--stage",
        "island",
        "--param",
        "options.radius=0.4 um..1.2 um:3",
        "--option",
        "gap=60 ueV",
        "--workers",
        "2",
        "--csv",
        str(out),
    ]
    res = cli_runner.invoke(app, args)
    assert res.exit_code == 0, res.output
    rows = _rows(out)
    assert [float(r["options.radius_nm"]) for r in rows] == pytest.approx([400, 800, 1200])
    assert all(r["status"] == "ok" for r in rows)
    ratio = [float(r["K_IL_over_K_I"]) for r in rows]
    assert ratio[0] > ratio[1] > ratio[2] > 0  # coupling falls as the island grows
    for r in rows:
        # analytic: A_I = pi R^2 for the conductor model's electronic radius
        R = float(r["options.radius_nm"]) * 1e-9
        assert float(r["interferometer.A_I_um2"]) == pytest.approx(math.pi * R**2 * 1e12)
        assert r["interferometer.regime_index"] in ("0.0", "1.0", "2.0")  # AB, crossover, CD
    res = cli_runner.invoke(app, args)
    assert res.exit_code == 0
    assert "0 designs evaluated" in res.stdout and "3 already in the CSV" in res.stdout
    assert len(_rows(out)) == 3


@pytest.mark.slow
def test_tolerance_through_the_island_stage_on_two_workers(cli_runner, app, tmp_path):
    out = tmp_path / "tol.csv"
    res = cli_runner.invoke(
        app,
        [
            "tolerance",
            str(SCREENED),
            "--stage",
            "island",
            "--option",
            "radius=0.8 um",
            "--samples",
            "4",
            "--workers",
            "2",
            "--csv",
            str(out),
            "--require",
            "K_IL_over_K_I=..0.5",
        ],
    )
    assert res.exit_code == 0, res.output
    rows = _rows(out)
    assert len(rows) == 4 and all(r["status"] == "ok" for r in rows)
    # growth errors move the 1D density, hence K's and the field of nu = 1/3: they differ
    assert len({r["K_IL_over_K_I"] for r in rows}) == 4
    assert "K_IL_over_K_I" in res.stdout


@pytest.mark.parametrize(
    ("param", "fragment"),
    [
        ("options.diameter=0.4 um..1.2 um:3", "options.diameter"),  # not an island option
        ("options.radius=0.4..1.2:3", "options.radius"),  # bare numbers for a length
        ("options.radius=-0.4 um..1.2 um:3", "options.radius"),  # negative radius
    ],
)
def test_bad_island_parameter_is_one_line(cli_runner, app, tmp_path, param, fragment):
    res = cli_runner.invoke(
        app,
        ["sweep", str(SCREENED), "--stage", "island", "--param", param, "--check"],
    )
    assert_one_line_error(res, fragment)
