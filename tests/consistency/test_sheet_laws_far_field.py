"""Sheets that follow the gate: the 2D far field under a gate against gated 1D solves.

With the default sheet model (laws tabulated from gated 1D Schrödinger–Poisson solves,
docs/models.md "Sheets that follow the gate") the 2D cross-section deep under a gate is a 1D
column of the same model, so it must reproduce the 1D stage's gated solves (donors frozen) for
every well, down to the well's threshold:

- density of every well within 2 % of the 1D gated solve's at every voltage of a 25 mV grid from
  0 V down to the well's threshold (wherever the 1D density is at least 1 % of its zero-bias
  value; below that the well is at its threshold and the threshold check takes over);
- the threshold (the gate voltage at which the well's density falls to D k_B T ln 2, a subband
  edge at the Fermi level, the 1D stage's definition) within 10 mV of the 1D gate sweep's;

on all three example stacks. The reference is the 1D stage (checked against independent solvers
elsewhere); the closed-form sheet model misses by up to 22 % on QL-2417's lower screening well at
-1.0 V (measured, docs/models.md), which this model fixes.

A second check: a law that tabulates the closed-form Thomas–Fermi sheet itself reproduces the
closed-form solve (same mesh, vertex quadrature) to round-off: the nodal law machinery adds no
discretisation of its own.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.pipeline import section_from_stack
from qhdesign.section import (
    CrossSectionSolver,
    GateLayout,
    MeshOptions,
    SolverOptions,
)
from qhdesign.sheetlaw import SheetLaw
from qhdesign.sp1d import freeze_out, gate_response
from qhdesign.stack import load_stack

ROOT = Path(__file__).resolve().parents[2]
STACKS = ("ql2417_screened", "ql2403_heterojunction", "ql2409_doped_well")
STEP = 0.025
SOURCE = "1D Schrödinger–Poisson gate sweep of the same stack (qhdesign.sp1d.gate_response)"


def _far(sol, k):
    return float(sol.density_m2[k][0])  # x = -half width: deep under the gate


@pytest.mark.parametrize("name", STACKS)
def test_far_field_under_gate_equals_gated_1d(name, record_check):
    from mpi4py import MPI

    stack = load_stack(ROOT / "stacks" / f"{name}.toml")
    section = section_from_stack(stack)
    assert all(s.law is not None for s in section.sheets)
    frozen = freeze_out(stack)
    g0 = gate_response(stack, 0.0, -2.0, -0.05, frozen=frozen)
    lowest = min(v for v in g0.thresholds_V.values() if np.isfinite(v))
    v_end = STEP * np.floor((lowest - 0.05) / STEP)
    g = gate_response(stack, 0.0, v_end, -STEP, frozen=frozen)
    solver = CrossSectionSolver(
        section, GateLayout.single_edge(), MeshOptions(refine=0.5), comm=MPI.COMM_SELF
    )
    worst = 0.0
    for m, v in enumerate(g.voltages_V):
        sol = solver.solve(float(v))
        for k, s in enumerate(section.sheets):
            n1 = float(g.density(s.name)[m])
            n0 = float(g.density(s.name)[0])
            if n1 < 0.01 * n0:
                continue
            dev = abs(_far(sol, k) / n1 - 1.0)
            worst = max(worst, dev)
            assert dev < 0.02, (name, s.name, v, _far(sol, k), n1)
    record_check(
        f"{name}: 2D far-field density under a gate vs gated 1D (every well, 0 V to threshold)",
        SOURCE,
        worst,
        0.0,
        0.02,
        kind="abs",
    )
    kT = sc.k * section.temperature_K
    for k, s in enumerate(section.sheets):
        th1 = g.thresholds_V[s.name]
        if not np.isfinite(th1):
            continue
        n_th = s.dos_J_m2 * kT * np.log(2.0)
        hi, lo = th1 + 0.03, th1 - 0.03
        assert _far(solver.solve(hi), k) > n_th > _far(solver.solve(lo), k)
        for _ in range(9):  # 60 mV / 2^9 ~ 0.1 mV
            mid = 0.5 * (hi + lo)
            if _far(solver.solve(mid), k) > n_th:
                hi = mid
            else:
                lo = mid
        th2 = 0.5 * (hi + lo)
        record_check(
            f"{name}: {s.name} threshold, 2D far field vs gated 1D",
            SOURCE,
            th2,
            th1,
            0.010,
            kind="abs",
            unit="V",
        )
        assert abs(th2 - th1) < 0.010, (name, s.name, th2, th1)


def test_tabulated_closed_form_reproduces_the_closed_form_solve(record_check):
    from mpi4py import MPI

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    section = section_from_stack(stack, sheets="constant-dos")
    kT = sc.k * 4.0  # 4 K: a softplus the knots resolve (spacing kT/20)
    section = replace(section, temperature_K=4.0)
    x = np.linspace(-0.08, 0.08, 16001)

    def law(s):
        return SheetLaw(x, s.dos_J_m2 * kT * np.logaddexp(0.0, sc.e * x / kT), label="TF table")

    tabulated = replace(section, sheets=tuple(replace(s, law=law(s)) for s in section.sheets))
    opts = SolverOptions(sheet_quadrature_degree=0)
    sols = [
        CrossSectionSolver(
            sec, GateLayout.single_edge(), MeshOptions(refine=0.5), opts, comm=MPI.COMM_SELF
        ).solve(-0.6)
        for sec in (section, tabulated)
    ]
    dphi = float(np.nanmax(np.abs(sols[0].phi_V - sols[1].phi_V)))
    dn = float(np.max(np.abs(sols[0].density_m2 - sols[1].density_m2)))
    n0 = max(s.density_m2 for s in section.sheets)
    record_check(
        "tabulated Thomas–Fermi law vs closed-form sheet (same mesh): potential",
        "the closed form n = D k_B T ln(1 + exp((e phi - E)/k_B T)) (analytic)",
        dphi,
        0.0,
        1e-6,
        kind="abs",
        unit="V",
    )
    assert dphi < 1e-6
    assert dn < 1e-5 * n0


def test_axisymmetric_law_sheets_hold_the_bulk_on_the_axis(record_check):
    """Axisymmetric vertex quadrature: the lumped radial weight gives the axis node its share
    int(hat r dr) of the sheet (the plain vertex rule gives it none, and a law sheet's density on
    the axis then came out at 50x the bulk). A ring gate far from the axis leaves the centre at
    the bulk density (analytic: a uniform sheet, no gate nearby), for a tabulated closed form
    and the closed form alike."""
    from mpi4py import MPI

    stack = load_stack(ROOT / "stacks" / "ql2417_screened.toml")
    section = replace(section_from_stack(stack, sheets="constant-dos"), temperature_K=4.0)
    kT = sc.k * 4.0
    x = np.linspace(-0.08, 0.08, 16001)
    tab = replace(
        section,
        sheets=tuple(
            replace(s, law=SheetLaw(x, s.dos_J_m2 * kT * np.logaddexp(0.0, sc.e * x / kT)))
            for s in section.sheets
        ),
    )
    layout = GateLayout(((1.25e-6, 2.25e-6),), (1.25e-6, 2.25e-6))
    mesh = MeshOptions(refine=0.5, x_min_m=0.0, half_width_m=3.25e-6)
    worst = 0.0
    for sec in (section, tab):
        sol = CrossSectionSolver(
            sec,
            layout,
            mesh,
            SolverOptions(sheet_quadrature_degree=0),
            comm=MPI.COMM_SELF,
            axisymmetric=True,
        ).solve(-1.0)
        for i, s in enumerate(sec.sheets):
            worst = max(worst, abs(sol.density_m2[i][0] / s.density_m2 - 1.0))
    record_check(
        "axisymmetric law sheet: density on the axis inside a ring gate vs bulk",
        "analytic: a uniform sheet far from any gate keeps its far-field density",
        worst,
        0.0,
        1e-3,
        kind="abs",
    )
    assert worst < 1e-3
