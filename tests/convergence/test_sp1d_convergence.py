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
        assert slope > 1.8 and slope < 2.2, (level, slope, err[:, level])


def test_predictor_corrector_beats_under_relaxation():
    # Trellakis et al., J. Appl. Phys. 81, 7880 (1997): the predictor-corrector iteration needs
    # far fewer outer iterations than plain under-relaxed mixing. The
    # mixing loop here: Schrödinger at phi_k, density frozen, Poisson (linear in phi with that
    # density, classical/donor charge still solved with it), phi_{k+1} = phi_k + a (phi* - phi_k).
    from qhdesign.sp1d import freeze_out
    from qhdesign.sp1d.charge import subband_dos
    from qhdesign.sp1d.model import top_boundary
    from qhdesign.sp1d.options import BandsOptions
    from qhdesign.sp1d.poisson import newton_poisson
    from qhdesign.sp1d.selfconsistent import SolveOptions, _Problem
    from qhdesign.sp1d.solve import solve_at
    from qhdesign.stack import load_stack

    stack = load_stack(Path(__file__).resolve().parents[2] / "stacks" / "ql2409_doped_well.toml")
    fr = freeze_out(stack)
    t = stack.temperature
    pc = solve_at(stack, fr, 0.0, t, BandsOptions())
    dev = fr.layout.device.with_boundaries(top=top_boundary(stack, 0.0, pinned=True))
    prob = _Problem(dev, t, fr.donor_charge_C_m2)
    opts = SolveOptions()
    phi = fr.state.phi_V.copy()
    phi[0] = (prob.node_offset[0] - dev.top.energy_J) / sc.e
    best = None
    counts = {}
    for alpha in (0.3, 0.1, 0.03):
        x = phi.copy()
        used = 10**9  # stays so if the mixing does not converge in 200 iterations
        for it in range(1, 201):
            en, psi, m = prob.subbands(x, opts, 0)
            n_fix = prob.quantum_predictor(en, psi**2 * subband_dos(m)[:, None], x.copy())
            n_now, _ = n_fix(x)

            def frozen_density(p, n_now=n_now):
                return n_now, np.zeros_like(n_now)  # no feedback of phi on the 2DEG

            target, _ = newton_poisson(
                prob.op,
                x,
                lambda p, f=frozen_density: prob.total_charge(p, f),
                charge_scale=prob.charge_scale,
            )
            change = float(np.max(np.abs(target - x)))
            x = x + alpha * (target - x)
            if change < opts.tol_potential_V:
                used = it
                break
        counts[alpha] = used
        best = used if best is None else min(best, used)
    assert pc.iterations < best, (pc.iterations, counts)
