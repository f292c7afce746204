"""An empty primary well is a failing flag (in the flags, the CSV columns and the printout)."""

from __future__ import annotations

from conftest import SCREENED

from qhdesign.sp1d import solve_bands
from qhdesign.stack import load_stack


def test_primary_emptied_by_a_gate_is_flagged(cli_runner, app):
    stack = load_stack(SCREENED)
    full = solve_bands(stack)
    assert not full.flags.primary_empty
    assert full.summary()["flag_primary_empty"] == 0.0
    # -0.8 V on a wide gate empties the upper screening well and the primary (the gate sweep
    # puts the primary's threshold near -0.52 V)
    empty = solve_bands(stack, gate_voltage=-0.8)
    assert empty.well("primary").sheet_density_m2 < 1e14
    assert empty.flags.primary_empty
    assert empty.to_dict()["flags"]["primary_empty"] is True
    assert empty.summary()["flag_primary_empty"] == 1.0
    res = cli_runner.invoke(app, ["bands", str(SCREENED), "--gate-voltage", "-0.8"])
    assert res.exit_code == 0, res.output
    assert "[EMPTY" in res.output
    assert "(primary empty)" in res.output  # not "(ok)" for its second subband
