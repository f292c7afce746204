"""Grid construction: layer boundaries are nodes, spacing targets and grading are honoured."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from qhdesign.sp1d.grid import GridSpec, graded_layer_nodes
from qhdesign.sp1d.model import build_device
from qhdesign.stack import load_stack

STACKS = sorted((Path(__file__).resolve().parents[2] / "stacks").glob("*.toml"))


def test_graded_layer_nodes_limits():
    z = graded_layer_nodes(0.0, 100e-9, 0.05e-9, 0.2e-9, 5e-9, 1.06)
    h = np.diff(z)
    assert z[0] == 0.0 and z[-1] == 100e-9
    assert h.max() <= 5e-9 * (1 + 1e-9)
    assert h[0] <= 0.05e-9 * 1.06 and h[-1] <= 0.2e-9 * 1.06
    # smooth grading: neighbouring cells differ by at most the grading ratio (plus the
    # discretisation of the stretched coordinate)
    assert np.max(h[1:] / h[:-1]) < 1.06 * 1.02
    assert np.max(h[:-1] / h[1:]) < 1.06 * 1.02


@pytest.mark.parametrize("path", STACKS, ids=lambda p: p.stem)
def test_device_grid_follows_the_stack(path):
    stack = load_stack(path)
    spec = GridSpec()
    layout = build_device(stack)
    dev = layout.device
    # every layer boundary is a node, so no cell straddles an interface
    for zb in stack.boundaries():
        assert np.min(np.abs(dev.z - zb)) < 1e-15
    h = dev.h
    for i, p in enumerate(stack.profile()):
        cells = h[dev.layer_of_cell == i]
        if p.well is not None and p.thickness <= 60e-9:
            # wells: at least GridSpec.well_points cells across, at most well_spacing_m
            assert len(cells) >= spec.well_points
            assert cells.max() <= spec.well_spacing_m * (1 + 1e-9)
        if p.donor_density > 0:
            assert cells.max() <= spec.doping_spacing_m * (1 + 1e-9)
    # the quantum region contains every well (for a thick channel: its top part)
    q0, q1 = dev.quantum
    for w in stack.wells():
        prof = next(p for p in stack.profile() if p.name == w.name)
        assert dev.z[q0] < prof.z_top < dev.z[q1]
