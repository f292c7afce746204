"""`qhdesign check`: exit 0 on good stacks; exit 2 and ONE line naming the key on bad ones."""

from __future__ import annotations

import json
import re

import pytest
from conftest import SCREENED, STACKS
from conftest import assert_one_line_error as _assert_one_line_error

GOOD = SCREENED.read_text()


def _sub(old: str, new: str, count: int = 1) -> str:
    assert old in GOOD, old
    return GOOD.replace(old, new, count)


def _remove_layer(text: str, name: str) -> str:
    block = re.search(r'\[\[layers\]\]\nname = "' + name + r'"\n(?:[^\[\n].*\n)*', text)
    assert block, name
    return text.replace(block.group(0), "")


BAD = {
    "toml_syntax": (_sub('name = "cap"', 'name = "cap'), ["TOML syntax error", "line"]),
    "unknown_key": (
        _sub('thickness = "10 nm"', 'thicknes = "10 nm"'),
        ["layers.cap.thicknes", "did you mean 'thickness'"],
    ),
    "unknown_table": (
        GOOD + '\n[substrat]\nkind = "deep"\n',
        ["substrat", "did you mean 'substrate'"],
    ),
    "missing_key": (_sub('barrier = "0.72 eV"\n', ""), ["surface.barrier", "missing"]),
    "missing_unit": (
        _sub('thickness = "10 nm"', 'thickness = "10"'),
        ["layers.cap.thickness", "no unit"],
    ),
    "wrong_unit": (
        _sub('thickness = "10 nm"', 'thickness = "10 V"'),
        ["layers.cap.thickness", "not a length"],
    ),
    "negative_thickness": (
        _sub('thickness = "10 nm"', 'thickness = "-10 nm"'),
        ["layers.cap.thickness", "out of range"],
    ),
    "zero_thickness": (
        _sub('thickness = "10 nm"', 'thickness = "0 nm"'),
        ["layers.cap.thickness", "out of range"],
    ),
    "al_fraction": (_sub("x = 0.31", "x = 1.3"), ["layers.barrier_upper.x", "outside [0, 1]"]),
    "duplicate_name": (
        _sub('name = "spacer_lower"', 'name = "spacer_upper"'),
        ["layers.spacer_upper", "duplicate"],
    ),
    "no_primary": (_sub('well = "primary"', ""), ["key 'layers'", "no primary well"]),
    "well_not_gaas_like": (
        _sub(
            'name = "primary"\nmaterial = "GaAs"', 'name = "primary"\nmaterial = "AlGaAs"\nx = 0.31'
        ),
        ["layers.primary.well", "lower conduction-band edge"],
    ),
    "doping_unknown_layer": (
        _sub("[doping.delta_lower]", "[doping.delta_lowr]"),
        ["doping.delta_lowr", "does not exist", "did you mean 'delta_lower'"],
    ),
    "bad_choice": (
        _sub('donor = "dx"', 'donor = "deep"'),
        ["doping.delta_upper.donor", "choose one of"],
    ),
    "freeze_below_solve": (
        _sub('freeze_temperature = "120 K"', 'freeze_temperature = "100 mK"'),
        ["wafer.freeze_temperature"],
    ),
    "zero_temperature": (
        _sub('temperature = "300 mK"', 'temperature = "0 K"'),
        ["wafer.temperature", "out of range"],
    ),
    "number_for_text": (_sub('material = "GaAs"', "material = 3"), ["layers.cap.material"]),
}


@pytest.mark.parametrize("path", STACKS, ids=lambda p: p.name)
def test_good_stack_exit_0(cli_runner, app, path, tmp_path):
    res = cli_runner.invoke(app, ["check", str(path), "--plot", str(tmp_path / "l.png")])
    assert res.exit_code == 0, res.output
    assert (tmp_path / "l.png").stat().st_size > 10_000
    for lay in ("primary", "channel", "well"):
        if f'name = "{lay}"' in path.read_text():
            assert lay in res.stdout


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_stack_one_line_exit_2(cli_runner, app, tmp_path, case):
    text, fragments = BAD[case]
    f = tmp_path / f"{case}.toml"
    f.write_text(text)
    res = cli_runner.invoke(app, ["check", str(f)])
    _assert_one_line_error(res, [str(f), *fragments])


def test_empty_binary_and_huge_files(cli_runner, app, tmp_path):
    empty = tmp_path / "empty.toml"
    empty.write_text("")
    _assert_one_line_error(cli_runner.invoke(app, ["check", str(empty)]), ["empty file"])
    binary = tmp_path / "bin.toml"
    binary.write_bytes(bytes(range(256)) * 64)
    _assert_one_line_error(cli_runner.invoke(app, ["check", str(binary)]), ["binary"])
    huge = tmp_path / "huge.toml"
    huge.write_bytes((b"# " + b"x" * 97 + b"\n") * 500_000)  # 50.0 MB of TOML comments
    _assert_one_line_error(cli_runner.invoke(app, ["check", str(huge)]), ["50.0 MB", "at most"])
    _assert_one_line_error(
        cli_runner.invoke(app, ["check", str(tmp_path / "nope.toml")]), ["not found"]
    )


def test_indirect_barrier_warning_is_printed(cli_runner, app, tmp_path):
    f = tmp_path / "indirect.toml"
    f.write_text(GOOD.replace('x = 0.31\nthickness = "300 nm"', 'x = 0.6\nthickness = "300 nm"'))
    res = cli_runner.invoke(app, ["check", str(f)])
    assert res.exit_code == 0
    assert "warning:" in res.stderr and "indirect" in res.stderr


def test_version(cli_runner, app):
    from qhdesign import __version__

    res = cli_runner.invoke(app, ["--version"])
    assert res.exit_code == 0 and __version__ in res.stdout


def test_python_dash_m_runs_the_cli():
    import subprocess
    import sys

    res = subprocess.run(
        [sys.executable, "-m", "qhdesign", "check", str(SCREENED)], capture_output=True, text=True
    )
    assert res.returncode == 0, res.stderr
    assert "primary" in res.stdout


@pytest.mark.mpi
def test_error_printed_once_under_mpiexec(tmp_path):
    import subprocess
    import sys
    from pathlib import Path

    bad = tmp_path / "bad.toml"
    bad.write_text("[wafer]\n")
    bindir = Path(sys.executable).parent
    res = subprocess.run(
        [str(bindir / "mpiexec"), "-n", "2", str(bindir / "qhdesign"), "check", str(bad)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert res.returncode == 2
    lines = [ln for ln in res.stderr.splitlines() if ln.startswith("error: ")]
    assert len(lines) == 1, res.stderr
    assert "surface" in lines[0]


def test_check_json_carries_every_resolved_setting(cli_runner, app, tmp_path):
    # the validated stack in SI: boundaries, donor models and levels, model choices included
    out = tmp_path / "c.json"
    r = cli_runner.invoke(app, ["check", str(SCREENED), "--json", str(out)])
    assert r.exit_code == 0, r.output
    d = json.loads(out.read_text())
    assert d["substrate"]["kind"] == "pinned" and d["substrate"]["barrier_eV"] == pytest.approx(0.7)
    assert {"band_offset", "permittivity"} <= set(d["models"])
    assert "dielectric_thickness_m" in d["surface"]
    doped = [lay for lay in d["layers"] if lay["donor_model"]]
    assert doped and all(lay["donor_level_eV"] is not None for lay in doped)
