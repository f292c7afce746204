"""Observed order of the Schrödinger discretisation: second order in the grid spacing.

Theory: the box (finite-volume) scheme with 1/m on the half grid is a second-order
discretisation of the BenDaniel–Duke operator (common practice; numerical analysis of
three-point schemes). Check values: the transcendental finite-well levels solved with scipy.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from scipy import constants as sc

from qhdesign.sp1d.grid import GridSpec
from qhdesign.sp1d.model import build_device
from qhdesign.sp1d.schrodinger import solve_subbands
from qhdesign.stack import loads_stack

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "reference"))
from test_sp1d_analytic import finite_well_levels, finite_well_stack


def level_errors(factor: float) -> tuple[float, np.ndarray]:
    # GaAs well 20 nm in barriers of 259.1 meV with the BenDaniel–Duke mass step 0.067 / 0.0919
    stack = loads_stack(finite_well_stack(20.0, 0.2591, 0.0919))
    spec = GridSpec().refined(factor)
    dev = build_device(stack, grid=spec, margin_m=70e-9).device
    q0, q1 = dev.quantum
    z = dev.z[q0 : q1 + 1]
    exact = finite_well_levels(20e-9, 0.2591 * sc.e, 0.067, 0.0919)[:3]
    en, _ = solve_subbands(z, dev.node_offset()[q0 : q1 + 1], dev.mass[q0:q1], 3)
    h = float(np.diff(z).max())
    return h, np.abs(en - exact) / exact


def test_second_order_decay():
    data = [level_errors(f) for f in (0.5, 1.0, 2.0, 4.0)]
    h = np.array([d[0] for d in data])
    err = np.array([d[1] for d in data])
    for level in range(3):
        slope = np.polyfit(np.log(h), np.log(err[:, level]), 1)[0]
        assert 1.8 < slope < 2.2, (level, slope, err[:, level])
