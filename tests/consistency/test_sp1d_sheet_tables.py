"""Sheet tables (density and centroid against the local potential) agree with direct 1D solves.

Consistency checks (no stored numbers):
- off the table's voltage grid (midway between two of its solves), a direct gated 1D solve's
  well densities equal the table read at that solve's own local potentials within 1 % of the
  zero-bias density, and the centroids within 0.3 nm (linear interpolation on a 10 mV grid);
- the local potential of every well falls monotonically with the gate (a table in phi exists);
- a well's table density vanishes at the gate voltage where the gate sweep finds its threshold
  (within one table step), and every well's electrons are the sum over its own subbands.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import SCREENED

from qhdesign.sp1d import freeze_out, gate_response
from qhdesign.sp1d.options import BandsOptions
from qhdesign.sp1d.sheet_tables import _well_charges, sheet_tables
from qhdesign.sp1d.solve import solve_at
from qhdesign.stack import load_stack

STEP = 0.01


@pytest.fixture(scope="module")
def tables():
    stack = load_stack(SCREENED)
    frozen = freeze_out(stack)
    return stack, frozen, sheet_tables(stack, 0.0, -1.5, STEP, frozen=frozen)


def test_potentials_fall_monotonically_with_the_gate(tables):
    _, _, tab = tables
    v = tab.gate_voltage_V
    assert np.all(np.diff(v) < 0)
    for w in tab.wells:
        assert np.all(np.diff(w.potential_V) > 0)
        assert w.density_m2[0] < 1e8  # the sweep ran until every well emptied


@pytest.mark.parametrize("v", [-0.105, -0.285, -0.455, -0.805, -1.105])
def test_table_reproduces_direct_solves_between_its_points(tables, v):
    stack, frozen, tab = tables
    layout = frozen.layout
    st = solve_at(stack, frozen, v, stack.temperature, BandsOptions(), gated=True)
    dens, cen = _well_charges(layout, st, layout.well_layers)
    for k, w in enumerate(tab.wells):
        phi = float(np.interp(w.reference_z_m, layout.device.z, st.phi_V))
        n0 = w.density_m2[-1]
        assert abs(w.density(phi) - dens[k]) < 0.01 * n0, w.name
        if dens[k] > 0.05 * n0:
            assert abs(w.centroid(phi) - cen[k]) < 0.3e-9, w.name


def test_table_empties_at_the_gate_sweep_threshold(tables):
    stack, frozen, tab = tables
    g = gate_response(stack, 0.0, -1.5, -0.02, frozen=frozen)
    for k, w in enumerate(tab.wells):
        th = g.thresholds_V[w.name]
        n = tab_density_vs_v(tab, k)
        filled = tab.gate_voltage_V[n > 1e-3 * n.max()]
        assert abs(filled.min() - th) <= STEP + 1e-9, w.name


def tab_density_vs_v(tab, k):
    """Density of well k in the order of ``tab.gate_voltage_V`` (the table is sorted by rising
    potential, the sweep ran toward negative voltages: the two orders are reversed)."""
    return tab.wells[k].density_m2[::-1]
