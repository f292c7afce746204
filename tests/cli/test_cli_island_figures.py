"""``island --json`` carries the interferometer figures: regime, period_gate_V, T0_K, visibility
(each checked against its closed form computed here from the JSON's own K's and radius)."""

from __future__ import annotations

import json
import math

import pytest
from conftest import assert_one_line_error
from scipy import constants as sc


def test_island_json_carries_the_interferometer_figures(cli_runner, app, screened_path, tmp_path):
    out = tmp_path / "island.json"
    res = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--radius",
            "0.7 um",
            "--filling",
            "1/3",
            "--gap",
            "120 ueV",
            "--gap-kind",
            "activation",
            "--electron-temperature",
            "25 mK",
            "--edge-velocity",
            "3e4 m/s",
            "--json",
            str(out),
        ],
    )
    assert res.exit_code == 0, res.output
    assert "visibility factor" in res.output
    d = json.loads(out.read_text())
    f = d["interferometer"]
    r = d["K_IL_over_K_I"]
    assert f["K_IL_over_K_I"] == pytest.approx(r, rel=1e-12)
    assert d["regime"] == ("AB" if r < 0.2 else "CD" if r > 0.8 else "crossover")
    # analytic: T0 = hbar v / (pi k_B L), L = 2 pi R (docs/interferometer.md)
    T0 = sc.hbar * 3e4 / (math.pi * sc.k * 2 * math.pi * 0.7e-6)
    assert d["T0_K"] == pytest.approx(T0, rel=1e-12)
    x = 0.025 / T0
    assert d["visibility"] == pytest.approx(x / math.sinh(x), rel=1e-12)
    assert d["period_gate_V"] is None  # no gate voltage, no dA/dV in the conductor model
    # the activation gap is halved (common practice: R_xx ~ exp(-Delta_act / 2 k_B T))
    assert f["gap_qp_J"] == pytest.approx(60e-6 * sc.e, rel=1e-12)
    assert d["quantum_hall"]["gap_energy_J"] == pytest.approx(60e-6 * sc.e, rel=1e-12)
    # E_C in mK beside k_B T
    assert f["E_C_mK"] == pytest.approx(1e3 * d["charging_energy_J"] / sc.k, rel=1e-12)


@pytest.mark.slow
def test_operating_island_json_carries_the_figures(cli_runner, app, screened_path, tmp_path):
    """The default (operating-point) island: the same four top-level keys, from its own K's,
    areas, dA_I/dV and strip velocity."""
    out = tmp_path / "op.json"
    res = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--gate-radius",
            "1.25 um",
            "--gate-voltage",
            "-1.0",
            "--gap",
            "120 ueV",
            "--json",
            str(out),
        ],
    )
    assert res.exit_code == 0, res.output
    d = json.loads(out.read_text())
    f = d["interferometer"]
    r = d["K_IL_over_K_I"]
    assert d["regime"] == ("AB" if r < 0.2 else "CD" if r > 0.8 else "crossover")
    # analytic: T0 = hbar v / (pi k_B 2 pi R_edge), visibility x/sinh x at 20 mK (default)
    T0 = (
        sc.hbar
        * f["edge_velocity_m_per_s"]
        / (math.pi * sc.k * 2 * math.pi * d["electronic_radius_m"])
    )
    assert d["T0_K"] == pytest.approx(T0, rel=1e-12)
    x = 0.020 / T0
    assert d["visibility"] == pytest.approx(
        x / math.sinh(x) if x < 700 else 0.0, rel=1e-12, abs=1e-300
    )
    # the AB gate period (e/e*) Phi0 / (B |dA/dV|) with the model's own dA/dV
    if d["period_gate_V"] is not None:
        ref = (sc.h / sc.e) / ((1 / 3) * d["field_T"] * abs(d["dA_I_dV_m2_per_V"]))
        assert d["period_gate_V"] == pytest.approx(ref, rel=1e-12)


def test_island_bad_gap_kind(cli_runner, app, screened_path):
    res = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--radius",
            "0.7 um",
            "--filling",
            "1/3",
            "--gap",
            "100 ueV",
            "--gap-kind",
            "transport",
        ],
    )
    assert_one_line_error(res, "--gap-kind")
