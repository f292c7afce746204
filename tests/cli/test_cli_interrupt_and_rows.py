"""Issue 13, item 6 (what a new user hit): Ctrl-C during a 2D Newton solve prints
`interrupted` and exits 130, never a PETSc traceback; the sweep summary prints the row count and
the CSV writes integer columns (converged, iterations) as integers."""

from __future__ import annotations

import csv
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import SCREENED


def test_an_interrupt_inside_a_solver_callback_is_interrupted_exit_130(
    cli_runner, app, monkeypatch
):
    import qhdesign.section as section

    def solve_edge(*args, **kwargs):
        # what petsc4py does with Ctrl-C inside the Python residual of SNES: the
        # KeyboardInterrupt becomes a PETSc error ("error code 101") raised from SNESSolve
        try:
            signal.raise_signal(signal.SIGINT)
        except KeyboardInterrupt:
            raise RuntimeError("error code 101 [0] SNESSolve() ...") from None

    monkeypatch.setattr(section, "solve_edge", solve_edge)
    res = cli_runner.invoke(app, ["edge", str(SCREENED), "--gate-voltage", "-0.5"])
    assert res.exit_code == 130, res.output
    assert res.stderr.strip() == "interrupted"  # before: a petsc4py traceback, exit 1


@pytest.mark.slow
@pytest.mark.parametrize("command", ["edge", "pinchoff"])
def test_ctrl_c_during_a_real_2d_newton_solve(command):
    args = {
        "edge": ["--gate-voltage", "-0.5", "--refine", "3"],
        "pinchoff": ["--gate-gap", "300 nm", "--refine", "3", "--step", "0.01"],
    }[command]
    exe = Path(sys.executable).with_name("qhdesign")
    p = subprocess.Popen(
        [str(exe), command, str(SCREENED), *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        # a child of a non-interactive shell may inherit SIGINT ignored: restore Ctrl-C
        preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL),
    )
    time.sleep(12)  # imports, the 1D solve and the mesh take a few seconds; then Newton runs
    p.send_signal(signal.SIGINT)
    _, err = p.communicate(timeout=300)
    text = err.decode()
    assert p.returncode == 130, text[-2000:]
    assert "interrupted" in text
    assert "Traceback" not in text and "PETSc" not in text and "petsc4py" not in text


def test_sweep_summary_row_count_and_integer_columns(cli_runner, app, tmp_path):
    spec = tmp_path / "b.toml"
    spec.write_text(
        f'[sweep]\nstack = "{SCREENED}"\nstage = "bands"\n[space]\nkind = "grid"\n'
        '[space.parameters]\n"layers.setback_upper.thickness" = ["34 nm", "38 nm"]\n'
    )
    out = tmp_path / "b.csv"
    res = cli_runner.invoke(app, ["sweep", str(spec), "--csv", str(out), "--workers", "1"])
    assert res.exit_code == 0, res.output
    assert "2 rows in the CSV" in res.stdout  # before: no row count
    with open(out, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["converged"] for r in rows] == ["1", "1"]  # before: "1.0"
    assert all(r["iterations"].isdigit() for r in rows), [r["iterations"] for r in rows]
    # resumed: nothing new, the count is what the file holds
    res = cli_runner.invoke(app, ["sweep", str(spec), "--csv", str(out), "--workers", "1"])
    assert "0 designs evaluated" in res.stdout and "2 rows in the CSV" in res.stdout
