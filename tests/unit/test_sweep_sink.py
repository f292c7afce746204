"""The CSV sink and the design application: torn lines, foreign files, bulk stack edits."""

from __future__ import annotations

import pytest
from conftest import SCREENED

from qhdesign.errors import InputError
from qhdesign.stack import load_stack
from qhdesign.sweep.evaluate import apply_values, design_key
from qhdesign.sweep.sink import CsvSink, sidecar_path

HEADER = ["design", "key", "a", "status", "error", "solve_time_s"]


def test_torn_last_line_is_cut_and_complete_rows_are_kept(tmp_path):
    path = tmp_path / "s.csv"
    with CsvSink(path, HEADER, "fp") as sink:
        sink.write([0, "k0", 1.5, "ok", "", 0.1])
        sink.write([1, "k1", 2.5, "invalid", "bad, with comma", 0.0])
    with open(path, "a") as fh:
        fh.write("2,k2,3.")  # killed mid-write
    sink = CsvSink(path, HEADER, "fp").open()
    assert sink.done_keys == {"k0", "k1"}
    assert sink.torn_bytes == len("2,k2,3.")
    sink.write([2, "k2", 3.5, "ok", "", 0.2])
    sink.close()
    lines = path.read_text().splitlines()
    assert lines == [
        ",".join(HEADER),
        "0,k0,1.5,ok,,0.1",
        '1,k1,2.5,invalid,"bad, with comma",0.0',
        "2,k2,3.5,ok,,0.2",
    ]


def test_error_text_is_folded_onto_one_line(tmp_path):
    path = tmp_path / "s.csv"
    with CsvSink(path, HEADER, "fp") as sink:
        sink.write([0, "k0", 1.0, "error", "line one\nline two\r\n", 0.0])
    assert path.read_text().count("\n") == 2


def test_foreign_or_edited_files_are_refused(tmp_path):
    path = tmp_path / "s.csv"
    with CsvSink(path, HEADER, "fp") as sink:
        sink.write([0, "k0", 1.0, "ok", "", 0.0])
    with pytest.raises(InputError, match="holds rows of a different sweep"):
        CsvSink(path, HEADER, "other").open()
    sidecar_path(path).unlink()
    with pytest.raises(InputError, match="columns differ"):
        CsvSink(path, [*HEADER[:2], "b", *HEADER[3:]], "fp").open()
    with open(path, "a") as fh:
        fh.write("1,k1,2.0\n")
    with pytest.raises(InputError, match="line 3 is malformed"):
        CsvSink(path, HEADER, "fp").open()


def test_design_key_depends_on_values_not_order():
    a = design_key({"x": 1.0, "y": 2e-8})
    assert a == design_key({"y": 2e-8, "x": 1.0})
    assert a != design_key({"x": 1.0, "y": 2.0000000000000001e-8 * 1.0000001})
    assert len(a) == 16 and int(a, 16) >= 0


def test_bulk_application_equals_chained_with_value():
    stack = load_stack(SCREENED)
    values = {
        "layers.setback_upper.thickness": 3.1e-8,
        "layers.spacer_upper.x": 0.29,
        "layers.delta_upper.doping.sheet": 1.7e16,
        "surface.barrier": 0.7 * 1.602176634e-19,
    }
    bulk = apply_values(stack, values)
    chained = stack
    for k, v in values.items():
        chained = chained.with_value(k, v)
    assert bulk == chained
    for k, v in values.items():
        assert bulk.get(k) == pytest.approx(v, rel=1e-14)
    with pytest.raises(InputError, match=r"layers\.setback_upper\.thickness"):
        apply_values(stack, {"layers.setback_upper.thickness": -1e-9})


def test_a_second_writer_on_the_same_csv_is_refused(tmp_path):
    path = tmp_path / "s.csv"
    first = CsvSink(path, HEADER, "fp").open()
    try:
        with pytest.raises(InputError, match="being written by another running sweep"):
            CsvSink(path, HEADER, "fp").open()
    finally:
        first.close()
    CsvSink(path, HEADER, "fp").open().close()  # free again once the first has finished
