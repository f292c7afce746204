"""``qhdesign size`` on the demo stack: the feasible range's end points, fed back to ``island``,
meet the targets; an infeasible set is a one-line verdict with exit 0; malformed targets exit 2."""

from __future__ import annotations

import json

import pytest
from conftest import assert_one_line_error


@pytest.mark.slow
def test_size_range_ends_meet_the_targets_in_island(cli_runner, app, screened_path, tmp_path):
    out, png = tmp_path / "size.json", tmp_path / "size.png"
    targets = ["K_IL/K_I < 0.1", "E_C > 10 ueV", "window > 50 mT", "visibility > 0.3"]
    args = ["size", str(screened_path), "--gap", "60 ueV", "--radius-range", "0.5 um..1.2 um"]
    for t in targets:
        args += ["--target", t]
    res = cli_runner.invoke(app, [*args, "--json", str(out), "--plot", str(png)])
    assert res.exit_code == 0, res.output
    d = json.loads(out.read_text())
    assert d["feasible"] is True and d["binding_target"] is None
    lo, hi = d["radius_range_m"]
    assert 0.5e-6 < lo < hi < 1.2e-6
    assert len(d["targets"]) == 4
    assert png.stat().st_size > 10_000
    # feed both ends back to `island` (same model, same defaults): every target holds
    for R in (lo, hi):
        isl = tmp_path / f"island_{R:.3e}.json"
        r = cli_runner.invoke(
            app,
            [
                "island",
                str(screened_path),
                "--radius",
                f"{R!r} m",
                "--filling",
                "1/3",
                "--gap",
                "60 ueV",
                "--json",
                str(isl),
            ],
        )
        assert r.exit_code == 0, r.output
        f = json.loads(isl.read_text())["interferometer"]
        assert f["K_IL_over_K_I"] <= 0.1
        assert f["charging_energy_J"] >= 10e-6 * 1.602176634e-19
        assert f["window_T"] >= 0.05
        assert f["visibility"] >= 0.3
        # and the values equal the ones size reported for that end (deterministic solve)
        key = "value_at_low_end" if R == lo else "value_at_high_end"
        by = {t["key"]: t[key] for t in d["targets"]}
        assert f["K_IL_over_K_I"] == pytest.approx(by["K_IL_over_K_I"], rel=1e-9)


@pytest.mark.slow
def test_size_infeasible_is_a_finding(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "size.json"
    res = cli_runner.invoke(
        app,
        [
            "size",
            str(screened_path),
            "--target",
            "K_IL/K_I < 0.01",
            "--target",
            "E_C > 5 ueV",
            "--radius-range",
            "0.6 um..1 um",
            "--points",
            "3",
            "--json",
            str(out),
        ],
    )
    assert res.exit_code == 0, res.output
    first = res.stdout.splitlines()[0]
    assert first.startswith("infeasible:") and "'K_IL/K_I < 0.01' fails first" in first
    d = json.loads(out.read_text())
    assert d["feasible"] is False and d["radius_range_m"] is None
    assert d["binding_target"] == "K_IL/K_I < 0.01"
    t = d["targets"][0]
    assert t["value_at_low_end"] > t["value_at_high_end"] > 0.01  # r falls with R, never enough


@pytest.mark.parametrize(
    ("targets", "fragment"),
    [
        (["E_C > 10"], "--target"),  # no unit
        (["Q > 3"], "unknown quantity"),
        (["E_C > 10 ueV", "E_C < 5 ueV"], "contradictory"),
        (["window > 50 mT"], "--gap"),  # a window needs the gap
    ],
)
def test_size_malformed_targets_exit_2(cli_runner, app, screened_path, targets, fragment):
    args = ["size", str(screened_path)]
    for t in targets:
        args += ["--target", t]
    assert_one_line_error(cli_runner.invoke(app, args), fragment)
