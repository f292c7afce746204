"""Charge models, occupation at millikelvin, and the failure path of the 1D solver."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import SCREENED
from scipy import constants as sc
from scipy.integrate import quad

from qhdesign.errors import ConvergenceError
from qhdesign.sp1d import BandsOptions, SolveOptions, solve_bands
from qhdesign.sp1d.charge import (
    classical_density,
    donor_ionized_fraction,
    fermi_half,
    subband_dos,
    subband_sheet_density,
)
from qhdesign.stack import load_stack

MEV = 1e-3 * sc.e


def test_subband_density_check_values():
    # analytic (docs/derivations.md §1): E_F - E_i = 1 meV, m* = 0.067: 2.7988e10 cm^-2 at
    # 10 mK, 2.8504e10 at 4 K
    d = subband_dos(0.067)
    n_mk = subband_sheet_density(-1 * MEV, d, sc.k * 0.01)
    n_4k = subband_sheet_density(-1 * MEV, d, sc.k * 4.0)
    assert n_mk / 1e4 == pytest.approx(2.7988e10, rel=1e-4)
    assert n_4k / 1e4 == pytest.approx(2.8504e10, rel=1e-4)
    # millikelvin-safe far from E_F: no overflow, exact limits D*max(-E, 0)
    kt = sc.k * 1e-3
    assert subband_sheet_density(1.0 * MEV, d, kt) == 0.0
    assert subband_sheet_density(-50 * MEV, d, kt) == pytest.approx(d * 50 * MEV, rel=1e-14)


@pytest.mark.parametrize("eta", [-30.0, -5.0, -1.0, 0.0, 1.0, 3.0, 10.0, 40.0, 300.0])
def test_fermi_half_against_quadrature(eta):
    # F_1/2 by scipy.integrate.quad of its definition; the Bednarczyk approximation is
    # quoted to about 0.4% (from memory), asserted here to 0.5%
    exact = (2 / np.sqrt(np.pi)) * quad(
        lambda x: np.sqrt(x) * np.exp(-np.logaddexp(0.0, x - eta)), 0, max(eta, 0) + 80, limit=400
    )[0]
    f, df = fermi_half(np.array([eta]))
    assert f[0] == pytest.approx(exact, rel=5e-3)
    # derivative: F'_1/2 = F_-1/2 against a central difference of the same approximation
    h = 1e-5 * max(1.0, abs(eta))
    fd = (fermi_half(np.array([eta + h]))[0] - fermi_half(np.array([eta - h]))[0]) / (2 * h)
    assert df[0] == pytest.approx(fd[0], rel=1e-6)


def test_classical_density_degenerate_limit():
    # T -> 0: n = (1/(3 pi^2)) (2 m (E_F - U) / hbar^2)^(3/2) (free-electron gas, analytic)
    u = -20 * MEV
    n, dn = classical_density(np.array([u]), 0.067, sc.k * 0.01)
    k = np.sqrt(2 * 0.067 * sc.m_e * 20 * MEV) / sc.hbar
    assert n[0] == pytest.approx(k**3 / (3 * np.pi**2), rel=1e-6)
    assert dn[0] < 0
    # far above E_F at mK: exactly zero, no overflow
    n, _ = classical_density(np.array([0.2 * sc.e]), 0.067, sc.k * 0.01)
    assert n[0] == 0.0


def test_donor_ionisation():
    # N+/N = 1/(1 + g exp((E_F - E_D)/kT)), g = 2 (common practice): E_D = E_F -> 1/3
    f, _ = donor_ionized_fraction(np.array([0.0]), sc.k * 100)
    assert f[0] == pytest.approx(1 / 3, rel=1e-12)
    f, _ = donor_ionized_fraction(np.array([0.3 * sc.e, -0.3 * sc.e]), sc.k * 0.01)
    assert f[0] == 1.0 and f[1] == 0.0


def test_non_convergence_raises_with_history(tmp_path):
    stack = load_stack(SCREENED)
    opts = BandsOptions(solve=SolveOptions(max_iterations=2))
    with pytest.raises(ConvergenceError) as info:
        solve_bands(stack, options=opts)
    err = info.value
    assert err.iterations == 2
    assert len(err.residuals) >= 1 and all(r > 0 for r in err.residuals)
    assert "residual history" in str(err)


def test_cli_non_convergence_writes_nothing(cli_runner, app, tmp_path, monkeypatch):
    import qhdesign.sp1d as sp1d

    real = sp1d.solve_bands

    def starved(stack, **kw):
        kw["options"] = BandsOptions(solve=SolveOptions(max_iterations=1))
        return real(stack, **kw)

    monkeypatch.setattr(sp1d, "solve_bands", starved)
    out, fig = tmp_path / "b.json", tmp_path / "b.png"
    res = cli_runner.invoke(app, ["bands", str(SCREENED), "--json", str(out), "--plot", str(fig)])
    assert res.exit_code == 2
    err = res.stderr.strip()
    assert err.count("\n") == 0 and err.startswith("error: ")
    assert "did not converge" in err and "residual history" in err
    assert not out.exists() and not fig.exists()
