"""Issue 14, minor items: each test fails without its fix (the old behaviour is stated)."""

from __future__ import annotations

import csv
import math
import os
from pathlib import Path

import pytest

from qhdesign.errors import InputError, StackError

ROOT = Path(__file__).resolve().parents[2]
STACK = ROOT / "stacks" / "ql2417_screened.toml"
TEST_STAGE = "qhdesign.sweep.testing:flaky_stage"
SETBACK = "layers.setback_upper.thickness"


# ----------------------------------------------------------------- input files
def test_a_fifo_or_device_stack_is_refused_without_reading(tmp_path):
    from qhdesign.stack import load_stack

    fifo = tmp_path / "stack.toml"
    os.mkfifo(fifo)  # no writer: reading it would block for ever (before the fix)
    with pytest.raises(StackError, match="not a regular file"):
        load_stack(fifo)
    if os.path.exists("/dev/zero"):  # endless zeros: read forever before the fix
        with pytest.raises(StackError, match="not a regular file"):
            load_stack("/dev/zero")


def test_a_spec_whose_stack_is_a_fifo_names_the_spec_and_sweep_stack(tmp_path):
    from qhdesign.sweep.spec import build_plan

    fifo = tmp_path / "s.toml"
    os.mkfifo(fifo)
    raw = {
        "sweep": {"stack": str(fifo), "stage": "capacitor"},
        "space": {"kind": "grid", "parameters": {SETBACK: ["30 nm"]}},
    }
    with pytest.raises(InputError) as info:
        build_plan(raw, source="my_spec.toml")
    msg = info.value.one_line()
    assert msg.startswith("my_spec.toml: key 'sweep.stack': ") and "not a regular file" in msg


def test_reading_stops_at_the_size_limit_plus_one_byte(tmp_path, monkeypatch):
    from qhdesign import io

    p = tmp_path / "big.toml"
    p.write_bytes(b"#" * 2000)
    # a file that grows after its size was taken: only limit + 1 bytes are read
    real_stat = os.stat
    monkeypatch.setattr(os, "stat", lambda q, *a, **k: _shrunk(real_stat(q, *a, **k)))
    with pytest.raises(InputError, match="larger than"):
        io.read_input_bytes(p, 1000, "stack file")


def _shrunk(st):
    return os.stat_result((st.st_mode, *st[1:6], 10, *st[7:]))


def test_a_utf8_byte_order_mark_is_accepted(tmp_path):
    from qhdesign.stack import load_stack
    from qhdesign.sweep.spec import load_spec

    bom = tmp_path / "bom.toml"
    bom.write_bytes(b"\xef\xbb\xbf" + STACK.read_bytes())
    # before: "TOML syntax error: Invalid statement (at line 1, column 1)"
    assert load_stack(bom).name == load_stack(STACK).name
    spec = tmp_path / "spec.toml"
    spec.write_bytes(
        b"\xef\xbb\xbf"
        + f'[sweep]\nstack = "{STACK}"\nstage = "capacitor"\n[space]\nkind = "grid"\n'
        f'[space.parameters]\n"{SETBACK}" = ["30 nm"]\n'.encode()
    )
    assert len(load_spec(spec)) == 1


# ----------------------------------------------------------------- plug-in stage failures
def _plan(options: dict, values: list[str]):
    from qhdesign.sweep.spec import build_plan

    raw = {
        "sweep": {"stack": str(STACK), "stage": TEST_STAGE},
        "options": options,
        "space": {"kind": "grid", "parameters": {SETBACK: values}},
    }
    return build_plan(raw, source="t.toml")


def _rows(path: Path) -> list[dict]:
    with open(path, newline="") as fh:
        return list(csv.DictReader(fh))


@pytest.mark.parametrize(
    ("option", "error"), [("none_above", "TypeError"), ("exit_above", "SystemExit")]
)
def test_a_stage_returning_none_or_exiting_is_an_error_row(tmp_path, option, error):
    from qhdesign.sweep.runner import run_sweep

    # nominal 36 nm passes; designs above 40 nm misbehave (before: traceback / exit 3, no row)
    plan = _plan({option: 40e-9}, ["30 nm", "45 nm", "50 nm", "35 nm"])
    summary = run_sweep(plan, tmp_path / "r.csv", executor="serial")
    assert summary.counts == {"ok": 2, "error": 2}
    rows = _rows(tmp_path / "r.csv")
    assert [r["status"] for r in rows] == ["ok", "error", "error", "ok"]
    assert all(error in r["error"] for r in rows if r["status"] == "error")


def test_serial_sweep_writes_each_row_before_the_next_design(tmp_path):
    from qhdesign.sweep.runner import run_sweep

    # Ctrl-C at the 7th design: the 6 finished rows are in the file (before: lost, as the
    # serial executor wrote a whole chunk at once)
    values = [f"{v} nm" for v in (20, 21, 22, 23, 24, 25, 41, 26)]
    plan = _plan({"interrupt_above": 40e-9}, values)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(plan, tmp_path / "r.csv", executor="serial")
    assert len(_rows(tmp_path / "r.csv")) == 6


# ----------------------------------------------------------------- workers after a SIGKILL
def test_a_zombie_parent_counts_as_gone():
    import subprocess
    import sys
    import time

    from qhdesign.sweep.runner import process_alive

    child = subprocess.Popen([sys.executable, "-c", "pass"])
    try:
        # wait until the child has exited; not reaped yet, it stays a zombie
        for _ in range(1000):
            with open(f"/proc/{child.pid}/stat", "rb") as fh:
                if b") Z" in fh.read():
                    break
            time.sleep(0.01)
        os.kill(child.pid, 0)  # signal 0 still succeeds on the zombie: the old check saw it alive
        assert not process_alive(child.pid)
        assert process_alive(os.getpid())
    finally:
        child.wait()


# ----------------------------------------------------------------- an empty primary well
def test_a_layer_thinner_than_one_monolayer_is_refused():
    from qhdesign.stack import dump_document, load_stack, loads_stack

    def with_primary(thickness: str) -> str:
        import tomllib

        doc = tomllib.loads(STACK.read_text())
        (lay,) = [x for x in doc["layers"] if x["name"] == "primary"]
        lay["thickness"] = thickness
        return dump_document(doc)

    bad = with_primary("1e-30 nm")
    # before: accepted; bands then gave E1 = nan with flags saying "ok"
    with pytest.raises(StackError, match="one monolayer"):
        loads_stack(bad, source="thin.toml")
    # one monolayer itself (a/2 of GaAs, Vurgaftman et al. 2001) is a layer
    ok = with_primary("0.2827 nm")
    assert loads_stack(ok).layer("primary").thickness == pytest.approx(0.2827e-9)
    assert load_stack(STACK).layer("primary").thickness == pytest.approx(24e-9)


# ----------------------------------------------------------------- error lines
def test_error_lines_cut_huge_echoed_values():
    from qhdesign.errors import one_line

    err = InputError(f"cannot read '{'x' * 900_000}' as a length", source="option --gap")
    line = err.one_line()
    assert len(line) < 700 and "900002 characters" in line  # before: a 900,000-character line
    assert one_line("a\nb   c") == "a b c"
    words = " ".join(["word"] * 400)
    assert len(one_line(words)) <= 600 + 40


def test_a_corrupt_sidecar_is_called_corrupt(tmp_path):
    from qhdesign.sweep.runner import run_sweep
    from qhdesign.sweep.sink import sidecar_path

    plan = _plan({}, ["30 nm", "32 nm"])
    out = tmp_path / "r.csv"
    run_sweep(plan, out, executor="serial")
    sidecar_path(out).write_text("{ not json")
    with pytest.raises(InputError, match="is corrupt"):  # before: "a different sweep"
        run_sweep(plan, out, executor="serial")


# ----------------------------------------------------------------- resume onto a damaged CSV
def test_resume_refuses_a_non_utf8_csv_and_repeated_rows(tmp_path):
    from qhdesign.sweep.runner import run_sweep

    plan = _plan({}, ["30 nm", "32 nm", "34 nm"])
    out = tmp_path / "r.csv"
    run_sweep(plan, out, executor="serial")
    good = out.read_bytes()
    out.write_bytes(good.replace(b"ok", b"\xffk", 1))
    with pytest.raises(InputError, match="not UTF-8"):  # before: UnicodeDecodeError traceback
        run_sweep(plan, out, executor="serial")
    lines = good.splitlines(keepends=True)
    out.write_bytes(b"".join([*lines, lines[1]]))  # a row twice (before: accepted)
    with pytest.raises(InputError, match="repeats the design key"):
        run_sweep(plan, out, executor="serial")


# ----------------------------------------------------------------- sweep specs
def test_a_bare_number_tolerance_is_refused():
    from qhdesign.sweep.spec import parse_tolerance

    # before: thickness = 5 was the fraction 5, a 500 % tolerance
    with pytest.raises(InputError, match="percentage") as info:
        parse_tolerance({"thickness": 5}, "tol.toml")
    assert "space.tolerance.thickness" in str(info.value)
    assert parse_tolerance({"thickness": "1.5 %"}, "tol.toml").thickness == pytest.approx(0.015)


def test_grid_values_past_12_digits_get_distinct_cells(tmp_path):
    from qhdesign.sweep.runner import run_sweep

    # 30 and 30.0000000000001 nm differ in the 15th digit; at 12 digits both print 30.0
    plan = _plan({}, ["30 nm", "30.0000000000001 nm"])
    run_sweep(plan, tmp_path / "r.csv", executor="serial")
    cells = [r[f"{SETBACK}_nm"] for r in _rows(tmp_path / "r.csv")]
    assert len(set(cells)) == 2, cells
    assert float(cells[0]) == 30.0  # ordinary values keep the short form


@pytest.mark.parametrize(
    ("change", "fragment"),
    [
        ({"options": {"colour": "red"}}, "options.colour"),  # unknown stage option
        ({"criteria": {"no_such_column": {"min": 1.0}}}, "criteria.no_such_column"),
        ({"outputs": ["no_such_column"]}, "no column 'no_such_column'"),
    ],
)
def test_check_catches_unknown_options_criteria_and_outputs(
    cli_runner, app, tmp_path, change, fragment
):
    from conftest import assert_one_line_error

    lines = [f'[sweep]\nstack = "{STACK}"\nstage = "capacitor"']
    if "outputs" in change:
        lines.append(f"outputs = {change['outputs']!r}".replace("'", '"'))
    if "options" in change:
        lines.append('[options]\ncolour = "red"')
    lines.append(f'[space]\nkind = "grid"\n[space.parameters]\n"{SETBACK}" = ["30 nm"]')
    if "criteria" in change:
        lines.append('[criteria]\n"no_such_column" = { min = 1.0 }')
    spec = tmp_path / "c.toml"
    spec.write_text("\n".join(lines) + "\n")
    # before: --check said "valid"; the sweep failed only when run
    assert_one_line_error(cli_runner.invoke(app, ["sweep", str(spec), "--check"]), fragment)


def test_missing_required_option_is_one_line(cli_runner, app):
    from conftest import assert_one_line_error

    # before: a framework usage box over several lines
    res = cli_runner.invoke(app, ["pinchoff", str(STACK)])
    assert_one_line_error(res, "--gate-gap")


def test_nan_is_never_printed_with_ok():
    from qhdesign.cli.bands import _e2_text

    assert "ok" not in _e2_text(math.nan, False)
    assert _e2_text(2e-22, False).endswith("(ok)")
