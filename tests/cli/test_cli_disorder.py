"""`qhdesign bands` disorder estimate and `calibrate --mobility`: documented JSON keys, the
low-mobility flag, one-line errors (exit 2) for bad disorder options."""

from __future__ import annotations

import json

import pytest
from conftest import SCREENED
from conftest import assert_one_line_error as _one_line_error
from scipy import constants as sc


def _bands(cli_runner, app, *extra):
    return cli_runner.invoke(app, ["bands", str(SCREENED), *extra])


def test_bands_json_carries_the_estimate(cli_runner, app, tmp_path):
    out = tmp_path / "b.json"
    res = _bands(cli_runner, app, "--json", str(out))
    assert res.exit_code == 0, res.output
    assert "disorder estimate" in res.stdout
    assert "primary mobility" in res.stdout
    d = json.loads(out.read_text())
    for name, w in d["wells"].items():
        assert w["mobility_m2_per_Vs"] > 0, name
        assert w["quantum_lifetime_s"] > 0
        # Gamma = hbar / (2 tau_q) (definition; Ando, Fowler, Stern, RMP 54, 437 (1982))
        assert w["level_broadening_J"] == pytest.approx(
            sc.hbar / (2 * w["quantum_lifetime_s"]), rel=1e-12
        )
        src = w["scattering_sources"]
        assert {"delta_upper", "delta_lower", "background", "surface"} <= set(src)
        # Matthiessen's rule: the shares of the rates add up to 1 (definition)
        assert sum(s["transport_share"] for s in src.values()) == pytest.approx(1.0, rel=1e-12)
        assert sum(s["quantum_share"] for s in src.values()) == pytest.approx(1.0, rel=1e-12)
        # mu = e tau_t / m* with tau_t = 1 / sum(rates) (definition)
        rate = sum(s["transport_rate_s-1"] for s in src.values())
        mass = d["subbands"][w["subbands"][0]]["mass_m0"] * sc.m_e
        assert w["mobility_m2_per_Vs"] == pytest.approx(sc.e / (mass * rate), rel=1e-12)
    assert d["disorder"]["background_m3"] == pytest.approx(1e20)
    assert isinstance(d["flags"]["low_mobility"], bool)


def test_low_mobility_flag_follows_the_threshold(cli_runner, app, tmp_path):
    out = tmp_path / "b.json"
    res = _bands(cli_runner, app, "--min-mobility", "1e9 cm^2/Vs", "--json", str(out))
    assert res.exit_code == 0, res.output
    assert "[LOW]" in res.stdout
    assert "below the threshold" in res.stderr
    assert json.loads(out.read_text())["flags"]["low_mobility"] is True
    res = _bands(cli_runner, app, "--min-mobility", "1e3 cm^2/Vs", "--json", str(out))
    assert res.exit_code == 0, res.output
    assert json.loads(out.read_text())["flags"]["low_mobility"] is False


@pytest.mark.parametrize(
    ("args", "fragments"),
    [
        (["--background", "-1e14 cm^-3"], ["option --background", "allowed 0 to 1e18 cm^-3"]),
        (["--background", "1e14"], ["option --background", "no unit"]),
        (
            ["--roughness-height", "0.3 nm", "--roughness-length", "0 nm"],
            ["option --roughness-length", "allowed above 0 nm"],
        ),
        (["--roughness-length", "0 nm"], ["option --roughness-length", "allowed above 0 nm"]),
        (["--roughness-height", "0.3 nm"], ["option --roughness-length", "correlation length"]),
        (["--min-mobility", "0 cm^2/Vs"], ["option --min-mobility", "above 0"]),
        (["--min-mobility", "1e6 cm^2"], ["option --min-mobility", "not a mobility"]),
    ],
)
def test_bad_disorder_options_are_one_line_errors(cli_runner, app, tmp_path, args, fragments):
    out = tmp_path / "b.json"
    res = _bands(cli_runner, app, *args, "--json", str(out))
    _one_line_error(res, fragments)
    assert not out.exists()


def test_calibrate_mobility_fits_the_background(cli_runner, app, tmp_path):
    out = tmp_path / "fit.json"
    res = cli_runner.invoke(
        app,
        ["calibrate", str(SCREENED), "--well", "primary", "--mobility", "4e5 cm^2/Vs",
         "--json", str(out)],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    fit = json.loads(out.read_text())
    nb = fit["fitted_value_m3"]
    assert nb > 0
    # independent route: bands with the fitted --background gives the measured mobility
    # (the background rate is linear in its density; passed on with 6 digits -> 1e-5)
    b = tmp_path / "b.json"
    res = _bands(cli_runner, app, "--background", f"{nb * 1e-6:.6g} cm^-3", "--json", str(b))
    assert res.exit_code == 0, res.output
    mu = json.loads(b.read_text())["wells"]["primary"]["mobility_m2_per_Vs"]
    assert mu == pytest.approx(4e5 * 1e-4, rel=1e-5)


def test_calibrate_mobility_errors(cli_runner, app, tmp_path):
    base = ["calibrate", str(SCREENED), "--well", "primary"]
    res = cli_runner.invoke(app, [*base, "--mobility", "1e9 cm^2/Vs"])
    _one_line_error(res, ["option --mobility", "above what the other sources allow"])
    res = cli_runner.invoke(app, [*base, "--mobility", "1e6 cm^2/Vs", "--parameter", "x.y"])
    _one_line_error(res, ["option --parameter", "allowed: background"])
    res = cli_runner.invoke(
        app, [*base, "--mobility", "1e6 cm^2/Vs", "--toml", str(tmp_path / "c.toml")]
    )
    _one_line_error(res, ["option --toml", "not a stack parameter"])
    res = cli_runner.invoke(app, [*base, "--mobility", "1e6 cm^2/Vs", "--density", "1e11 cm^-2"])
    _one_line_error(res, ["exactly one of"])
    res = cli_runner.invoke(app, [*base, "--density", "1e11 cm^-2"])
    _one_line_error(res, ["option --parameter", "required"])
