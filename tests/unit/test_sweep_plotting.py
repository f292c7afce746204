"""Design-window plots: the infeasible part is hatched, failed designs are marked."""

from __future__ import annotations

import matplotlib
import pytest
from conftest import SCREENED

from qhdesign.errors import InputError
from qhdesign.plotting.sweep import feasible_mask, plot_sweep_table
from qhdesign.sweep.runner import run_sweep
from qhdesign.sweep.spec import build_plan
from qhdesign.sweep.table import read_sweep_csv

matplotlib.use("Agg")


@pytest.fixture(scope="module")
def table(tmp_path_factory):
    raw = {
        "sweep": {"stack": str(SCREENED), "stage": "qhdesign.sweep.testing:flaky_stage"},
        "options": {"not_converged_above": 3.75e-8},
        "space": {
            "kind": "grid",
            "parameters": {
                "layers.setback_upper.thickness": {"from": "20 nm", "to": "40 nm", "steps": 9},
                "layers.spacer_upper.thickness": {"from": "16 nm", "to": "40 nm", "steps": 7},
            },
        },
        "criteria": {"dn_dV_primary_cm^-2/V": {"min": 2.7e10}},
    }
    out = tmp_path_factory.mktemp("plot") / "flaky.csv"
    run_sweep(build_plan(raw, source="t.toml"), out, executor="serial")
    return read_sweep_csv(out)


def _hatched(ax) -> list[str]:
    """Hatch patterns of the filled contour sets drawn on ``ax``."""
    return [h for c in ax.collections for h in (getattr(c, "hatches", None) or []) if h]


def test_feasible_mask_combines_status_and_criteria(table):
    ok = table.ok
    v = table.data["dn_dV_primary_cm^-2/V"]
    mask = feasible_mask(table, {"dn_dV_primary_cm^-2/V": (2.7e10, float("inf"))})
    assert (mask == (ok & (v >= 2.7e10))).all()
    assert mask.any() and (~mask & ok).any() and (~ok).any()


def test_map_hatches_infeasible_and_failed(table):
    fig = plot_sweep_table(
        table,
        "layers.setback_upper.thickness",
        "layers.spacer_upper.thickness",
        ["dn_dV_primary_cm^-2/V"],
        contours=[("dn_dV_primary_cm^-2/V", 3e10)],
    )
    ax = fig.axes[0]
    hatches = _hatched(ax)
    assert "////" in hatches  # criterion violated somewhere
    assert "xx" in hatches  # failed (not converged) designs
    assert ax.get_xlabel() == "setback_upper thickness (nm)"  # readable: quantity (unit)
    assert fig.axes[1].get_ylabel() == "dn/dV primary (cm\u207b\u00b2/V)"  # colour bar
    assert any(line.get_label() == "failed design" for line in ax.lines)


def test_line_and_histograms(table):
    fig = plot_sweep_table(table, "layers.setback_upper.thickness", None, ["primary_share"])
    assert fig.axes[-1].get_xlabel() == "setback_upper thickness (nm)"
    fig = plot_sweep_table(table, None, None, ["depth_primary_nm", "primary_share"])
    assert len([a for a in fig.axes if a.get_visible()]) == 2


def test_bad_plot_requests(table):
    with pytest.raises(InputError, match="--y needs --x"):
        plot_sweep_table(table, None, "layers.spacer_upper.thickness")
    with pytest.raises(InputError, match=r"no parameter 'layers\.nope'"):
        plot_sweep_table(table, "layers.nope", "layers.spacer_upper.thickness")


def test_collinear_designs_fall_back_to_points_instead_of_crashing(tmp_path):
    # a zip space along a diagonal: every design on one line in the (x, y) plane; qhull cannot
    # triangulate it, so the map shows the designs as points (no exception)
    raw = {
        "sweep": {"stack": str(SCREENED), "stage": "capacitor"},
        "options": {
            "densities": {
                "screen_upper": "2e11 cm^-2",
                "primary": "1.1e11 cm^-2",
                "screen_lower": "2e11 cm^-2",
            }
        },
        "space": {
            "kind": "zip",
            "parameters": {
                "layers.setback_upper.thickness": ["20 nm", "25 nm", "30 nm", "35 nm"],
                "layers.setback_lower.thickness": ["20 nm", "25 nm", "30 nm", "35 nm"],
            },
        },
    }
    out = tmp_path / "diag.csv"
    run_sweep(build_plan(raw, source="t.toml"), out, executor="serial")
    t = read_sweep_csv(out)
    fig = plot_sweep_table(
        t,
        x="layers.setback_upper.thickness",
        y="layers.setback_lower.thickness",
        color=[t.outputs[0]],
    )
    assert fig is not None


def _zip_table(tmp_path):
    raw = {
        "sweep": {"stack": str(SCREENED), "stage": "capacitor"},
        "options": {
            "densities": {
                "screen_upper": "1.9e11 cm^-2",
                "primary": "1.0e11 cm^-2",
                "screen_lower": "2.0e11 cm^-2",
            }
        },
        "space": {
            "kind": "zip",
            "parameters": {
                "layers.setback_upper.thickness": ["24 nm", "28 nm", "32 nm", "36 nm", "40 nm"],
                "layers.setback_lower.thickness": ["24 nm", "28 nm", "32 nm", "36 nm", "40 nm"],
            },
        },
    }
    out = tmp_path / "zip.csv"
    run_sweep(build_plan(raw, source="t.toml"), out, executor="serial")
    return read_sweep_csv(out)


def test_zip_sweep_line_plot_draws_one_curve_per_output(tmp_path):
    # the most natural grower sweep: both setbacks together. Each output gets its own panel with
    # one curve through all five designs (not five one-point "designs" and a legend on the data)
    t = _zip_table(tmp_path)
    outs = ["dn_dV_primary_cm^-2/V", "v_screening_empty_V"]
    fig = plot_sweep_table(t, x="layers.setback_upper.thickness", color=outs)
    axes = [a for a in fig.axes if a.get_visible()]
    assert len(axes) == 2
    for a, label in zip(
        axes, ["dn/dV primary (cm\u207b\u00b2/V)", "v screening empty (V)"], strict=True
    ):
        data = [ln for ln in a.lines if len(ln.get_xdata()) > 1]
        assert len(data) == 1 and len(data[0].get_xdata()) == 5
        assert a.get_ylabel() == label
        assert a.get_legend() is None  # nothing to tell apart: no legend over the data
    assert axes[-1].get_xlabel() == (
        "setback_upper thickness (nm); setback_lower thickness (nm) follow"
    )


def test_grid_line_plot_keeps_its_legend_outside_the_data(table):
    fig = plot_sweep_table(table, "layers.setback_upper.thickness", None, ["primary_share"])
    leg = fig.axes[0].get_legend()
    assert leg is not None
    fig.canvas.draw()
    box = leg.get_window_extent().transformed(fig.axes[0].transAxes.inverted())
    assert box.x0 > 1.0  # entirely right of the axes
