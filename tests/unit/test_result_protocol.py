"""Every stage result follows one protocol: ``to_dict()``, ``summary()``, ``table()``.

Checked on real results of the cheap stages (1D bands, gate sweep) and on the FEM stage classes
by their methods (their solves are covered by the FEM tests). The Table's CSV is read back with
the standard library's csv reader (an outside parser).
"""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest

from qhdesign.island import IslandResult
from qhdesign.island.stage import IslandOperatingResult
from qhdesign.layout.stage import LayoutResult
from qhdesign.results import StageResult, Table
from qhdesign.section import ConstrictionResult, EdgeResult, PinchoffResult
from qhdesign.sp1d.calibrate import CalibrationResult
from qhdesign.sp1d.gates import GateResult
from qhdesign.sp1d.results import BandsResult

ALL = (
    BandsResult,
    GateResult,
    CalibrationResult,
    EdgeResult,
    PinchoffResult,
    ConstrictionResult,
    IslandResult,
    IslandOperatingResult,
    LayoutResult,
)


@pytest.mark.parametrize("cls", ALL, ids=lambda c: c.__name__)
def test_every_stage_result_class_has_the_three_methods(cls):
    for name in ("to_dict", "summary", "table"):
        assert callable(getattr(cls, name, None)), (cls.__name__, name)


def _check(result) -> None:
    assert isinstance(result, StageResult)
    json.dumps(result.to_dict(), allow_nan=True)  # JSON-ready
    s = result.summary()
    assert s and all(isinstance(k, str) for k in s)
    assert all(isinstance(v, float) for v in s.values()), s
    t = result.table()
    assert isinstance(t, Table) and t.rows.shape[1] == len(t.columns) and t.rows.shape[0] >= 1
    parsed = list(csv.reader(io.StringIO(t.to_csv())))
    assert parsed[0] == list(t.columns)
    back = np.array([[float(v) for v in row] for row in parsed[1:]])
    np.testing.assert_allclose(back, t.rows, rtol=1e-5, atol=0)


def test_bands_and_gate_results_follow_the_protocol(screened_path):
    from qhdesign.sp1d import gate_response, solve_bands
    from qhdesign.stack import load_stack

    stack = load_stack(screened_path)
    bands = solve_bands(stack)
    _check(bands)
    # the table is the band profile on the 1D nodes
    assert np.array_equal(bands.table().column("z_nm"), bands.z_m * 1e9)
    gate = gate_response(stack, 0.0, -0.2, 0.1)
    _check(gate)
    assert gate.to_csv() == gate.table().to_csv()


def test_table_refuses_rows_that_do_not_fit_the_columns():
    with pytest.raises(ValueError):
        Table(("a", "b"), np.zeros((3, 3)))


@pytest.mark.fem
def test_constriction_and_pinchoff_results_follow_the_protocol():
    from qhdesign.section import MeshOptions, solve_constriction, solve_pinchoff
    from qhdesign.section.examples import screened_section

    section = screened_section()
    coarse = MeshOptions(refine=0.5)
    res = solve_constriction(section, 300e-9, -0.4, coarse)
    _check(res)
    assert res.summary()["gate_voltage_V"] == -0.4
    pinch = solve_pinchoff(section, 300e-9, v_stop=-0.6, v_step=-0.3, mesh_options=coarse)
    _check(pinch)
    np.testing.assert_array_equal(pinch.table().column("gate_voltage_V"), pinch.voltages_V)
