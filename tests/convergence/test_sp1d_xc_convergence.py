"""The 1D solve with an LDA exchange–correlation potential converges from 10 mK to 300 K.

Checks (analytic or consistency, no stored numbers):
- every example stack converges at 10 mK, 300 mK, 4 K, 77 K and 300 K with both
  parametrizations, and the converged v_xc is the LDA potential of the converged density (the
  fixed point of the Kohn–Sham map; W. Kohn and L. J. Sham, Phys. Rev. 140, A1133 (1965));
- charge balance holds to the solver tolerance;
- exchange–correlation is attractive: v_xc <= 0 everywhere and < 0 wherever electrons are
  (analytic sign of the LDA potential);
- a 10 mK gate sweep through every threshold of the demo stack converges.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from conftest import SCREENED, STACKS

from qhdesign.sp1d import freeze_out, gate_response, solve_bands
from qhdesign.sp1d.xc import xc_potential
from qhdesign.stack import load_stack

TEMPERATURES = (0.01, 0.3, 4.0, 77.0, 300.0)


def with_xc(stack, model, temperature):
    return dataclasses.replace(
        stack,
        exchange_correlation=model,
        temperature=temperature,
        freeze_temperature=max(temperature, stack.freeze_temperature),
    )


@pytest.mark.parametrize("model", ["hedin-lundqvist", "perdew-zunger"])
@pytest.mark.parametrize("path", STACKS, ids=lambda p: p.name)
def test_converges_from_10_mK_to_300_K(path, model):
    base = load_stack(path)
    for t in TEMPERATURES:
        res = solve_bands(with_xc(base, model, t))
        assert res.converged
        assert res.residuals_V[-1] < 1e-6
        assert abs(res.charge_balance_relative) < 1e-6
        assert res.exchange_correlation == model
        d = res.to_dict(arrays=True)
        assert d["exchange_correlation"]["model"] == model
        assert "Phys" in d["exchange_correlation"]["reference"]
        v = np.asarray(res.xc_potential_J)
        n = res.electron_density_m3
        q0 = np.searchsorted(res.z_m, res.quantum_region_m[0])
        q1 = np.searchsorted(res.z_m, res.quantum_region_m[1])
        inner = slice(q0 + 1, q1)
        assert np.all(v <= 0.0)
        assert np.all(v[inner][n[inner] > 1e21] < 0.0)


@pytest.mark.parametrize("model", ["hedin-lundqvist", "perdew-zunger"])
def test_converged_potential_is_the_lda_potential_of_the_density(model):
    stack = with_xc(load_stack(SCREENED), model, 0.3)
    frozen = freeze_out(stack)
    st = frozen.state
    dev = frozen.layout.device
    q0, q1 = dev.quantum
    sl = slice(q0 + 1, q1)  # interior quantum nodes (psi = 0 on the ends)
    expected = xc_potential(
        st.n_quantum_m3[sl], dev.node_average(dev.mass)[sl], dev.node_average(dev.eps)[sl], model
    )
    assert np.max(np.abs(st.xc_J[sl] - expected)) / 1.602176634e-19 < 2e-6  # eV
    assert st.xc_J[sl].min() < -1e-3 * 1.602176634e-19  # a few meV deep in the wells


def test_hartree_only_reports_none():
    res = solve_bands(load_stack(SCREENED))
    d = res.to_dict()
    assert d["exchange_correlation"] == {"model": "none", "reference": ""}
    assert max(abs(v) for v in d["profile"]["xc_potential_eV"]) == 0.0


@pytest.mark.slow
def test_gate_sweep_at_10_mK_converges_through_every_threshold():
    stack = with_xc(load_stack(SCREENED), "perdew-zunger", 0.01)
    g = gate_response(stack, 0.0, -1.4, -0.02)
    th = g.thresholds_V
    assert all(np.isfinite(v) for v in th.values())
    # depletion order top to bottom, as without exchange-correlation
    assert th["screen_upper"] > th["primary"] > th["screen_lower"]
