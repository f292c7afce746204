"""`qhdesign bands`, `gate`, `calibrate`: documented JSON keys, files written only on success,
bad input -> exit 2 with one line naming the option or key, never a traceback."""

from __future__ import annotations

import json
import math
import re

import pytest
from conftest import ROOT, SCREENED
from conftest import assert_one_line_error as _one_line_error

GATED = ROOT / "stacks" / "ql2409_doped_well.toml"


def test_bands_json_keys_and_plot(cli_runner, app, tmp_path):
    out, fig = tmp_path / "b.json", tmp_path / "b.png"
    res = cli_runner.invoke(
        app, ["bands", str(SCREENED), "--field", "2 T", "--json", str(out), "--plot", str(fig)]
    )
    assert res.exit_code == 0, res.output
    d = json.loads(out.read_text())
    # keys required by issue 3 (documented in docs/cli.md)
    assert d["converged"] is True
    assert isinstance(d["iterations"], int)
    assert set(d["wells"]) == {"screen_upper", "primary", "screen_lower"}
    assert d["wells"]["primary"]["role"] == "primary"
    assert d["wells"]["screen_upper"]["role"] == "screening"
    for w in d["wells"].values():
        assert w["sheet_density_m2"] >= 0
    assert all(s["well"] in d["wells"] for s in d["subbands"])
    energies = [s["energy_eV"] for s in d["subbands"]]
    assert energies == sorted(energies)
    assert "charge_balance_m2" in d
    # filling factor nu = n h / (e B) (definition) at the requested 2 T
    n = d["wells"]["primary"]["sheet_density_m2"]
    assert d["wells"]["primary"]["filling_factor"] == pytest.approx(
        n * 6.62607015e-34 / (1.602176634e-19 * 2.0), rel=1e-12
    )
    assert fig.stat().st_size > 10_000


def test_gate_outputs(cli_runner, app, tmp_path):
    csv, js, fig = tmp_path / "g.csv", tmp_path / "g.json", tmp_path / "g.png"
    args = ["gate", str(GATED), "--from", "0.1", "--to", "-0.5", "--step", "0.05"]
    res = cli_runner.invoke(app, [*args, "--csv", str(csv), "--json", str(js), "--plot", str(fig)])
    assert res.exit_code == 0, res.output
    d = json.loads(js.read_text())
    assert set(d["thresholds_V"]) == {"well"}
    assert -0.5 < d["thresholds_V"]["well"] < 0.1
    assert "window_V" in d  # no screening well above the primary here -> null
    assert d["window_V"] is None
    lines = csv.read_text().splitlines()
    assert lines[0].startswith("gate_V,well_density_cm^-2")
    assert len(lines) == 1 + 13
    assert fig.stat().st_size > 10_000


def test_forward_bias_warning(cli_runner, app):
    args = ["gate", str(GATED), "--from", "0.6", "--to", "0.5", "--step", "0.1"]
    res = cli_runner.invoke(app, [*args, "--forward-limit", "0.55"])
    assert res.exit_code == 0, res.output
    assert "warning: sweep reaches +0.600 V, above the forward-bias limit" in res.stderr


@pytest.mark.parametrize(
    ("args", "fragments"),
    [
        (["--temperature", "0 K"], ["--temperature", "above 0 K"]),
        (["--temperature", "-2 K"], ["--temperature", "above 0 K"]),
        (["--temperature", "3"], ["--temperature", "no unit"]),
        (
            ["--gate-voltage", "0.95"],
            ["surface.barrier", "past the Schottky barrier", "below +0.800 V"],
        ),
        (["--gate-voltage", "abc"], ["--gate"]),
        (["--field", "-1 T"], ["--field", "above 0 T"]),
    ],
)
def test_bands_bad_options(cli_runner, app, tmp_path, args, fragments):
    out = tmp_path / "b.json"
    res = cli_runner.invoke(app, ["bands", str(GATED), *args, "--json", str(out)])
    _one_line_error(res, fragments)
    assert not out.exists()  # nothing that looks like a result


def test_gate_past_barrier_and_zero_step(cli_runner, app, tmp_path):
    out = tmp_path / "g.csv"
    res = cli_runner.invoke(
        app, ["gate", str(GATED), "--from", "0", "--to", "1.0", "--step", "0.1", "--csv", str(out)]
    )
    _one_line_error(res, ["surface.barrier", "past the Schottky barrier"])
    res = cli_runner.invoke(app, ["gate", str(GATED), "--from", "0", "--to", "-1", "--step", "0"])
    _one_line_error(res, ["--step", "non-zero"])
    assert not out.exists()


def test_absurd_doping_is_refused(cli_runner, app, tmp_path):
    bad = tmp_path / "absurd.toml"
    text = SCREENED.read_text()
    absurd = re.sub(r'(\[doping\.delta_upper\]\nsheet = )"[^"]*"', r'\1"1e16 cm^-2"', text)
    assert absurd != text
    bad.write_text(absurd)
    res = cli_runner.invoke(app, ["bands", str(bad)])
    _one_line_error(res, ["doping.delta_upper.sheet", "out of range"])


def test_wells_that_cannot_hold_charge_warn(cli_runner, app, tmp_path):
    text = SCREENED.read_text()
    undoped = text[: text.index("[doping.delta_upper]")] + text[text.index("[substrate]") :]
    f = tmp_path / "undoped.toml"
    f.write_text(undoped)
    out = tmp_path / "u.json"
    res = cli_runner.invoke(app, ["bands", str(f), "--json", str(out)])
    assert res.exit_code == 0, res.output
    assert "warning: no well holds charge" in res.stderr
    d = json.loads(out.read_text())
    assert all(w["sheet_density_m2"] < 1e12 for w in d["wells"].values())
    # and calibrating a density on it is an error, not a traceback
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(f), "--parameter", "surface.barrier", "--well", "primary",
            "--density", "1e11 cm^-2", "--toml", str(tmp_path / "c.toml"),
        ],
    )  # fmt: skip
    _one_line_error(res, ["--range", "not reached"])
    assert not (tmp_path / "c.toml").exists()


def test_calibrate_density_writes_stack(cli_runner, app, tmp_path):
    out = tmp_path / "cal.toml"
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(GATED), "--parameter", "surface.barrier", "--well", "well",
            "--density", "1.2e11 cm^-2", "--toml", str(out),
        ],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    from qhdesign.sp1d import solve_bands
    from qhdesign.stack import load_stack

    st = load_stack(out)
    r = solve_bands(st)
    # the calibrated stack reproduces the measurement (brentq tolerance 1e-6 relative on the
    # parameter; the density follows to well below 0.1%)
    assert r.primary.sheet_density_m2 == pytest.approx(1.2e15, rel=1e-3)
    assert not math.isclose(st.surface.barrier, load_stack(GATED).surface.barrier)


def test_calibrate_bad_options(cli_runner, app, tmp_path):
    base = ["calibrate", str(GATED), "--toml", str(tmp_path / "c.toml")]
    res = cli_runner.invoke(app, [*base, "--parameter", "surface.barier", "--well", "well",
                                  "--density", "1e11 cm^-2"])  # fmt: skip
    _one_line_error(res, ["surface.barier"])
    res = cli_runner.invoke(app, [*base, "--parameter", "surface.barrier", "--well", "cap",
                                  "--density", "1e11 cm^-2"])  # fmt: skip
    _one_line_error(res, ["--well", "not a well"])
    res = cli_runner.invoke(app, [*base, "--parameter", "surface.barrier", "--well", "well"])
    _one_line_error(res, ["exactly one of --density", "--threshold"])


def test_calibrate_threshold_round_trip(cli_runner, app, tmp_path):
    out = tmp_path / "cal.toml"
    res = cli_runner.invoke(
        app,
        [
            "calibrate", str(GATED), "--parameter", "doping.delta_upper.sheet", "--well", "well",
            "--threshold", "-0.4", "--toml", str(out),
        ],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    from qhdesign.sp1d import gate_response
    from qhdesign.stack import load_stack

    g = gate_response(load_stack(out), -0.3, -0.5, -0.01)
    # an independent route to the threshold (sweep + interpolation of E1 at E_F) agrees with
    # the measurement to a small fraction of the 10 mV step (tolerance: 1 mV)
    assert g.thresholds_V["well"] == pytest.approx(-0.4, abs=1e-3)


def test_output_piped_into_head_still_writes_the_json(tmp_path):
    # `qhdesign bands ... --json out.json | head -1`: the reader leaves after one line; the
    # command must still finish, write its file, and exit 0 (not 1 from a BrokenPipeError)
    import subprocess
    import sys

    out = tmp_path / "out.json"
    cmd = (
        f"{sys.executable} -m qhdesign bands {SCREENED} --json {out} | head -1 >/dev/null; "
        "exit ${PIPESTATUS[0]}"
    )
    proc = subprocess.run(["bash", "-c", cmd], capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    assert json.loads(out.read_text())["converged"] is True


def test_output_options_are_checked_before_the_work(cli_runner, app, tmp_path):
    # an unsupported figure format and a missing folder are refused up front (one line, exit 2),
    # and no folder is created for a mistyped path
    r = cli_runner.invoke(app, ["bands", str(SCREENED), "--plot", str(tmp_path / "b.xyz")])
    msg = _one_line_error(r)
    assert "--plot" in msg and ".png" in msg
    missing = tmp_path / "no_such_folder"
    r = cli_runner.invoke(app, ["bands", str(SCREENED), "--json", str(missing / "b.json")])
    msg = _one_line_error(r)
    assert "--json" in msg and "does not exist" in msg
    assert not missing.exists()


def test_a_stack_without_a_2deg_is_refused_clearly(cli_runner, app, tmp_path):
    # QL-2403 with a third of its doping: after freeze-out the surface states take nearly all the
    # donors' electrons (1e5 cm^-2 left); with a frozen surface over a deep substrate nothing
    # fixes the Fermi level. One line naming the file and 'doping', exit 2 (was a Newton failure)
    text = (ROOT / "stacks" / "ql2403_heterojunction.toml").read_text()
    low = tmp_path / "low.toml"
    low.write_text(text.replace('volume = "1.0e18 cm^-3"', 'volume = "3.0e17 cm^-3"'))
    r = cli_runner.invoke(app, ["bands", str(low)])
    msg = _one_line_error(r)
    assert "low.toml" in msg and "doping" in msg and "no 2DEG" in msg
