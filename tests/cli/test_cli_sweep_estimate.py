"""sweep --check prints an estimated run time from a timed design; a sweep estimated above one
hour starts only with --yes."""

from __future__ import annotations

from conftest import SCREENED, assert_one_line_error

import qhdesign.sweep.runner as runner

DENS = '{"screen_upper": "1.9e11 cm^-2", "primary": "1.0e11 cm^-2", "screen_lower": "2.0e11 cm^-2"}'


def args(tmp_path, *extra):
    return [
        "sweep", str(SCREENED), "--stage", "capacitor", "--option", f"densities={DENS}",
        "--param", "layers.setback_upper.thickness=20 nm..40 nm:5",
        "--param", "layers.setback_lower.thickness=20 nm..40 nm:4",
        "--executor", "serial", "--csv", str(tmp_path / "s.csv"), *extra,
    ]  # fmt: skip


def test_check_prints_an_estimate(cli_runner, app, tmp_path, monkeypatch):
    real = runner.probe
    calls = []

    def timed(plan):
        out, status, err, _t = real(plan)
        calls.append(plan)
        return out, status, err, 0.25  # one design takes 0.25 s

    monkeypatch.setattr(runner, "probe", timed)
    res = cli_runner.invoke(app, args(tmp_path, "--check"))
    assert res.exit_code == 0, res.output
    # 20 designs x 0.25 s on one (serial) worker = 5 s
    assert "estimated run time about 5 s: one design 0.25 s x 20 designs on 1 worker" in res.output
    assert calls and not (tmp_path / "s.csv").exists()  # timed, nothing written


def test_long_sweep_needs_yes(cli_runner, app, tmp_path, monkeypatch):
    real = runner.probe

    def slow(plan):
        out, status, err, _t = real(plan)
        return out, status, err, 400.0  # 20 x 400 s = 2.2 h on one worker

    monkeypatch.setattr(runner, "probe", slow)
    res = cli_runner.invoke(app, args(tmp_path))
    err = assert_one_line_error(res, "--yes", "above one hour")
    assert "2.2 h" in err
    assert not (tmp_path / "s.csv").exists()
    res = cli_runner.invoke(app, args(tmp_path, "--yes", "--quiet"))
    assert res.exit_code == 0, res.output
    assert (tmp_path / "s.csv").exists()
