"""CLI of the sheets' own exchange-correlation: ``--sheet-xc`` and ``--compressibility-floor`` on
``edge``, ``pinchoff`` and the operating-point ``island``. Bad choices fail on one line naming
the option, before any solve (docs/cli.md)."""

from __future__ import annotations

from conftest import assert_one_line_error


def test_edge_refuses_an_unknown_model(cli_runner, app, screened_path):
    r = cli_runner.invoke(
        app, ["edge", str(screened_path), "--gate-voltage", "-1.0", "--sheet-xc", "lda"]
    )
    assert_one_line_error(r, "--sheet-xc", "exchange+correlation")


def test_edge_refuses_sheet_xc_on_1d_table_sheets(cli_runner, app, screened_path):
    # the 1D-table sheets (default) carry the 1D stage's own exchange-correlation: no double count
    r = cli_runner.invoke(
        app, ["edge", str(screened_path), "--gate-voltage", "-1.0", "--sheet-xc", "exchange"]
    )
    assert_one_line_error(r, "--sheet-xc", "constant-dos")


def test_pinchoff_refuses_a_floor_out_of_range(cli_runner, app, screened_path):
    r = cli_runner.invoke(
        app,
        [
            "pinchoff",
            str(screened_path),
            "--gate-gap",
            "300 nm",
            "--sheets",
            "constant-dos",
            "--sheet-xc",
            "exchange",
            "--compressibility-floor",
            "1.5",
        ],
    )
    assert_one_line_error(r, "--compressibility-floor", "(0, 1]")


def test_island_refuses_sheet_xc_on_the_legacy_island(cli_runner, app, screened_path):
    r = cli_runner.invoke(
        app,
        ["island", str(screened_path), "--radius", "0.8 um", "--sheet-xc", "exchange"],
    )
    assert_one_line_error(r, "--sheet-xc", "operating-point")


def test_island_refuses_an_unknown_model(cli_runner, app, screened_path):
    r = cli_runner.invoke(
        app,
        [
            "island",
            str(screened_path),
            "--gate-radius",
            "1 um",
            "--gate-voltage",
            "-1.0",
            "--gap",
            "120 ueV",
            "--sheet-xc",
            "hf",
        ],
    )
    assert_one_line_error(r, "--sheet-xc")
