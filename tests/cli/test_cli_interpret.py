"""``qhdesign interpret``: an invented measurement built from the forward closed forms is read
back (the inverse inverts the forward functions), and bad input is one line with exit 2."""

from __future__ import annotations

import json
import math

import pytest
from conftest import assert_one_line_error
from scipy import constants as sc

from qhdesign import interferometer as itf

PHI0 = sc.h / sc.e


def test_interpret_reads_back_an_invented_device(cli_runner, app, tmp_path):
    # invented device: R = 0.75 um, r = 0.08, A_L = 0.9 A_I, nu = 1/3, dA/dV = 0.4 um^2/V at 5.5 T
    A = math.pi * 0.75e-6**2
    r, rho, nu = 0.08, 0.9, 1 / 3
    dc = itf.period_compressible_T(A)
    di = itf.period_incompressible_T(A, r, nu, rho * A)
    pv = itf.period_gate_ab_V(nu, 5.5, 0.4e-12)
    jump = itf.phase_jump_rad(nu, r)
    out = tmp_path / "m.json"
    res = cli_runner.invoke(
        app,
        [
            "interpret",
            "--period-compressible",
            f"{dc * 1e3!r} mT +- 0.01 mT",
            "--period-incompressible",
            f"{di * 1e3!r} +- 0.05 mT",
            "--area-ratio",
            f"{rho} +- 0.02",
            "--gate-period",
            f"{pv * 1e3!r} mV",
            "--field",
            "5.5 T",
            "--jump",
            f"{jump!r} rad +- 0.1 rad",
            "--json",
            str(out),
        ],
    )
    assert res.exit_code == 0, res.output
    d = json.loads(out.read_text())
    assert d["K_IL_over_K_I"] == pytest.approx(r, rel=1e-9)
    assert d["A_I_m2"] == pytest.approx(A, rel=1e-9)
    assert d["dA_I_dV_m2_per_V"] == pytest.approx(0.4e-12, rel=1e-9)
    # analytic: the Laughlin anyonic phase 2 pi nu (Arovas, Schrieffer, Wilczek, PRL 53, 722 (1984))
    assert d["anyonic_phase_over_2pi"] == pytest.approx(1 / 3, rel=1e-9)
    assert d["K_IL_over_K_I_uncertainty"] > 0 and d["anyonic_phase_uncertainty_rad"] > 0
    assert d["regime"] == "AB"


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--period-compressible", "2 mT", "--period-incompressible", "6"], "--period-incompr"),
        (["--period-compressible", "2 mT", "--period-incompressible", "6 nm"], "--period-incompr"),
        (
            [
                "--period-compressible",
                "2 mT",
                "--period-incompressible",
                "6 mT",
                "--filling",
                "2/5",
            ],
            "--filling",
        ),
        (
            ["--period-compressible", "2 mT", "--period-incompressible", "6 mT", "--jump", "0.3"],
            "--jump",
        ),
        (
            [
                "--period-compressible",
                "2 mT",
                "--period-incompressible",
                "6 mT",
                "--gate-period",
                "4 mV",
            ],
            "--field",
        ),
        (
            ["--period-compressible", "-2 mT", "--period-incompressible", "6 mT"],
            "--period-compressible",
        ),
    ],
)
def test_interpret_bad_input(cli_runner, app, args, fragment):
    res = cli_runner.invoke(app, ["interpret", *args])
    assert_one_line_error(res, fragment)
