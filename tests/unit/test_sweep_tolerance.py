"""Growth-tolerance Monte Carlo: the correlation structure of the growth-error model.

Expected values are analytic consequences of the model in qhdesign/sweep/tolerance.py (a
per-run error e_Ga, e_Al per source, an independent per-layer jitter j, one error per dopant
cell); statistical tolerances are a few standard errors of the estimator, stated beside each.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import electron_volt

from qhdesign.errors import InputError
from qhdesign.stack import load_stack
from qhdesign.sweep.tolerance import GrowthMonteCarlo, TolerancePlan, sensitivity

N = 4000


@pytest.fixture(scope="module")
def mc_data():
    from pathlib import Path

    stack = load_stack(Path(__file__).resolve().parents[2] / "stacks" / "ql2417_screened.toml")
    plan = TolerancePlan()  # common-practice defaults
    mc = GrowthMonteCarlo.from_stack(stack, plan, N, seed=11)
    rows = [mc.overrides(errs) for errs in mc]
    keys = rows[0].keys()
    data = {k: np.array([r[k] for r in rows]) for k in keys}
    return stack, plan, mc, data


def _rel(stack, data, layer):
    t0 = stack.layer(layer).thickness
    return data[f"layers.{layer}.thickness"] / t0 - 1.0


def _corr_tol(rho: float, n: int) -> float:
    # 5 standard errors of a sample correlation: (1 - rho^2)/sqrt(n) (Fisher's large-n result)
    return 5 * max(1 - rho**2, 0.02) / math.sqrt(n)


def test_rate_sigmas_follow_from_the_quoted_tolerances():
    p = TolerancePlan()
    # analytic: sigma_Ga^2 + sigma_j^2 = sigma_t^2
    assert math.isclose(p.sigma_ga**2 + p.layer_jitter**2, 0.015**2, rel_tol=1e-12)
    # analytic: sigma_x = x (1 - x) sqrt(sigma_Al^2 + sigma_Ga^2) at x_ref = 0.3
    assert math.isclose(0.21 * math.hypot(p.sigma_al, p.sigma_ga), 0.007, rel_tol=1e-12)


def test_gaas_layers_correlate_through_the_ga_rate(mc_data):
    stack, plan, _, data = mc_data
    a, b = _rel(stack, data, "cap"), _rel(stack, data, "primary")
    sg2, sj2 = plan.sigma_ga**2, plan.layer_jitter**2
    # analytic: corr = sigma_Ga^2 / (sigma_Ga^2 + sigma_j^2) = 0.8889 for 1.5 % and 0.5 %
    rho = sg2 / (sg2 + sj2)
    assert math.isclose(rho, 1 - (0.5 / 1.5) ** 2, rel_tol=1e-12)
    assert abs(np.corrcoef(a, b)[0, 1] - rho) < _corr_tol(rho, N)
    # 1-sigma of a GaAs layer is the quoted 1.5 %; sample std within 5 SE (SE = s/sqrt(2n))
    assert abs(a.std() - 0.015) < 5 * 0.015 / math.sqrt(2 * N)


def test_algaas_and_gaas_layers_share_the_ga_part(mc_data):
    stack, plan, _, data = mc_data
    x = 0.31
    a, b = _rel(stack, data, "spacer_upper"), _rel(stack, data, "cap")
    sg2, sa2, sj2 = plan.sigma_ga**2, plan.sigma_al**2, plan.layer_jitter**2
    # analytic (first order): g = 1 + (1-x) e_Ga + x e_Al for AlGaAs, 1 + e_Ga for GaAs
    var_a = (1 - x) ** 2 * sg2 + x**2 * sa2 + sj2
    rho = (1 - x) * sg2 / math.sqrt(var_a * (sg2 + sj2))
    assert abs(np.corrcoef(a, b)[0, 1] - rho) < _corr_tol(rho, N)


def test_al_fraction_spread_and_all_algaas_layers_move_together(mc_data):
    _, plan, _, data = mc_data
    xa = data["layers.spacer_upper.x"]
    xb = data["layers.barrier_lower.x"]
    # same nominal x, same run: identical Al fraction in every AlGaAs layer of the run
    np.testing.assert_array_equal(xa, xb)
    # analytic first order: sigma_x = x(1-x) sqrt(sigma_Al^2 + sigma_Ga^2) at x = 0.31
    expect = 0.31 * 0.69 * math.hypot(plan.sigma_al, plan.sigma_ga)
    assert abs(xa.std() - expect) < 5 * expect / math.sqrt(2 * N) + 2e-5
    assert abs(xa.mean() - 0.31) < 5 * expect / math.sqrt(N)


def test_doping_cells_and_surface_barrier(mc_data):
    stack, _, mc, data = mc_data
    up = data["layers.delta_upper.doping.sheet"] / stack.layer("delta_upper").doping.density
    lo = data["layers.delta_lower.doping.sheet"] / stack.layer("delta_lower").doping.density
    # both delta layers come from the one Si cell: identical relative error (sheet = flux x time)
    np.testing.assert_allclose(up, lo, rtol=1e-13)
    assert mc.cells == ("si",)
    assert abs((up - 1).std() - 0.07) < 5 * 0.07 / math.sqrt(2 * N)
    b = data["surface.barrier"] / electron_volt
    assert abs(b.std() - 0.1) < 5 * 0.1 / math.sqrt(2 * N)
    assert abs(b.mean() - 0.72) < 5 * 0.1 / math.sqrt(N)


def test_volume_doping_scales_with_cell_over_growth_rate(mc_data):
    base = mc_data[0]
    stack = base.with_value("layers.barrier_lower.doping.volume", "1e17 cm^-3")
    mc = GrowthMonteCarlo.from_stack(
        stack, TolerancePlan(), 3, seed=5, doping_cells={"barrier_lower": "si2"}
    )
    assert mc.cells == ("si", "si2")
    errs = next(iter(mc))
    out = mc.overrides(errs)
    g = 1 + 0.69 * errs["tol.ga_rate"] + 0.31 * errs["tol.al_rate"]
    # analytic: volume density = flux / growth rate, from its own cell
    expect = 1e23 * (1 + errs["tol.doping.si2"]) / g
    assert math.isclose(out["layers.barrier_lower.doping.volume"], expect, rel_tol=1e-14)
    # the sheet-doped delta layers keep the default cell: flux x time, no growth-rate factor
    up = out["layers.delta_upper.doping.sheet"] / stack.layer("delta_upper").doping.density
    assert math.isclose(up, 1 + errs["tol.doping.si"], rel_tol=1e-14)
    with pytest.raises(InputError, match=r"tolerance\.doping_cells\.cap"):
        GrowthMonteCarlo.from_stack(stack, TolerancePlan(), 3, 5, doping_cells={"cap": "x"})


def test_each_sample_is_reproducible_alone(mc_data):
    stack, plan, mc, _ = mc_data
    other = GrowthMonteCarlo.from_stack(stack, plan, 10, seed=11)
    np.testing.assert_array_equal(other.draw(7), mc.draw(7))
    assert not np.array_equal(mc.draw(7), mc.draw(8))


def test_inconsistent_tolerances_name_the_key():
    with pytest.raises(InputError, match=r"tolerance\.layer_jitter"):
        TolerancePlan(thickness=0.01, layer_jitter=0.02)
    with pytest.raises(InputError, match=r"tolerance\.al_fraction"):
        TolerancePlan(al_fraction=0.001)


def test_sensitivity_recovers_standardized_coefficients():
    rng = np.random.default_rng(0)
    n = 20000
    x = rng.standard_normal((n, 3)) * [1.0, 2.0, 0.5]
    y = 3.0 * x[:, 0] + 0.5 * x[:, 1] + 0.0 * x[:, 2] + 0.1 * rng.standard_normal(n)
    ranked = dict(sensitivity(x, y, ["a", "b", "c"]))
    sy = math.sqrt(9 * 1 + 0.25 * 4 + 0.01)
    # analytic: SRC_j = beta_j sigma_j / sigma_y (Saltelli et al. 2008, sec. 1.2.5)
    assert abs(ranked["a"] - 3.0 / sy) < 0.01
    assert abs(ranked["b"] - 1.0 / sy) < 0.01
    assert abs(ranked["c"]) < 0.01
    assert [k for k, _ in sensitivity(x, y, ["a", "b", "c"])][:2] == ["a", "b"]
