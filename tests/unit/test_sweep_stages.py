"""The stage registry: built-in stages run the real 1D/2D functions, plug-ins import by name,
and bad stage options are one-line errors naming the option."""

from __future__ import annotations

import csv
import math

import pytest
from conftest import SCREENED

from qhdesign.errors import InputError
from qhdesign.stack import load_stack
from qhdesign.sweep.spec import build_plan
from qhdesign.sweep.stages import get_stage


def _plan(stage, options, params):
    raw = {
        "sweep": {"stack": str(SCREENED), "stage": stage},
        "options": options,
        "space": {"kind": "grid", "parameters": params},
    }
    return build_plan(raw, source="t.toml")


def test_bands_rows_equal_direct_1d_solves(tmp_path):
    from qhdesign.sp1d import solve_bands
    from qhdesign.sweep.runner import run_sweep

    plan = _plan(
        "bands", {"temperature": "1 K"}, {"layers.setback_upper.thickness": ["24 nm", "32 nm"]}
    )
    run_sweep(plan, tmp_path / "b.csv", executor="serial")
    with open(tmp_path / "b.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["status"] for r in rows] == ["ok", "ok"]
    base = load_stack(SCREENED)
    for r, t in zip(rows, ("24 nm", "32 nm"), strict=True):
        direct = solve_bands(
            base.with_value("layers.setback_upper.thickness", t), temperature=1.0
        ).summary()
        for col in ("primary_density_cm^-2", "screen_upper_density_cm^-2", "E2_minus_EF_meV"):
            assert float(r[col]) == pytest.approx(float(direct[col]), rel=1e-12, abs=1e-12)
        assert float(r["temperature_K"]) == 1.0


def test_gate_stage_runs_the_gate_sweep():
    from qhdesign.sp1d import gate_response

    stack = load_stack(SCREENED)
    out = get_stage("gate")(stack, v_from="-0.6 V", v_to=0.0, step="0.1 V")
    direct = gate_response(stack, -0.6, 0.0, 0.1).summary()
    assert set(out) == set(direct)
    for k, v in direct.items():
        if isinstance(v, float) and math.isnan(v):
            assert math.isnan(out[k])
        else:
            assert out[k] == pytest.approx(float(v), rel=1e-12, abs=1e-30)


@pytest.mark.parametrize(
    ("stage", "options", "fragment"),
    [
        ("bands", {"colour": 1}, "key 'options.colour': unknown option of stage 'bands'"),
        ("bands", {"temperature": "1 V"}, "key 'options.temperature'"),
        ("gate", {"v_from": "-1 V", "v_to": "0 V"}, "key 'options.step'"),
        ("capacitor", {"densities": "2e11"}, "key 'stage.options.densities'"),
    ],
)
def test_bad_stage_options_fail_on_the_nominal_design(tmp_path, stage, options, fragment):
    from qhdesign.sweep.runner import run_sweep

    plan = _plan(stage, options, {"layers.setback_upper.thickness": ["24 nm"]})
    with pytest.raises(InputError) as info:
        run_sweep(plan, tmp_path / "x.csv", executor="serial")
    assert fragment in str(info.value)
    assert "nominal design failed" in str(info.value)
    assert "\n" not in str(info.value)


def test_plugin_stage_by_module_path():
    fn = get_stage("qhdesign.sweep.testing:flaky_stage")
    stack = load_stack(SCREENED)
    out = fn(stack)
    # the probe returns the stack file's setback thickness, read independently here
    assert out["probe_value"] == pytest.approx(stack.layer("setback_upper").thickness, rel=1e-12)


@pytest.mark.fem
def test_edge_stage_runs_the_2d_cross_section(tmp_path):
    from qhdesign.sweep.runner import run_sweep

    plan = _plan("edge", {"gate_voltage": "-0.8 V"}, {"layers.setback_upper.thickness": ["28 nm"]})
    summary = run_sweep(plan, tmp_path / "e.csv", executor="serial")
    assert summary.counts == {"ok": 1}
    with open(tmp_path / "e.csv", newline="") as fh:
        (row,) = list(csv.DictReader(fh))
    assert float(row["gate_voltage_V"]) == -0.8
    # a depletion gate over x < 0 pushes the primary well's electrons out to x > 0
    assert float(row["wells.primary.edge_position_m"]) > 0
    assert float(row["wells.primary.gated_density_m2"]) < float(
        row["wells.primary.bulk_density_m2"]
    )
