"""Warnings: each printed once per command, and the bare-surface gate note readable in one go."""

from __future__ import annotations

from conftest import SCREENED


def _warnings(result) -> list[str]:
    return [ln for ln in (result.stderr or "").splitlines() if ln.startswith("warning: ")]


def test_gate_note_once_and_plain(cli_runner, app):
    res = cli_runner.invoke(
        app, ["gate", str(SCREENED), "--from", "0.1", "--to", "-0.6", "--step", "0.1"]
    )
    assert res.exit_code == 0, res.output
    notes = [w for w in _warnings(res) if "bare surface" in w]
    assert len(notes) == 1, _warnings(res)
    # what a grower needs from it: metal on the top layer, which barrier, what to do otherwise
    for part in ("metal laid directly on the top layer", "Schottky barrier", "dielectric"):
        assert part in notes[0]


def test_bands_with_a_gate_prints_the_note_once(cli_runner, app):
    res = cli_runner.invoke(app, ["bands", str(SCREENED), "--gate-voltage", "-0.2"])
    assert res.exit_code == 0, res.output
    assert sum("bare surface" in w for w in _warnings(res)) == 1
    res = cli_runner.invoke(app, ["bands", str(SCREENED)])  # no gate: no note
    assert not any("bare surface" in w for w in _warnings(res))


def test_stack_warnings_not_repeated(cli_runner, app, tmp_path):
    # an indirect-gap barrier: the stack's warning used to be printed at load and again with the
    # result; every warning line must appear once
    head = 'name = "barrier_upper"\nmaterial = "AlGaAs"\n'
    text = SCREENED.read_text().replace(head + "x = 0.31", head + "x = 0.5")
    assert "x = 0.5" in text
    path = tmp_path / "indirect.toml"
    path.write_text(text)
    res = cli_runner.invoke(app, ["bands", str(path)])
    assert res.exit_code == 0, res.output
    lines = _warnings(res)
    assert any("indirect" in w for w in lines), lines
    assert len(lines) == len(set(lines)), lines
