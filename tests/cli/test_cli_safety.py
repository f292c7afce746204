"""Safety of inputs and outputs (issue 14, majors): outputs never replace devices, FIFOs or links;
every output failure is one line and exit 2; plug-in stages run only by consent; one spelling per
swept parameter; quantity strings are "number unit", never expressions.

Each test fails without its fix (the behaviour before the fix is stated beside it).
"""

from __future__ import annotations

import os
import stat
import sys
import threading
from pathlib import Path

import pytest
from conftest import SCREENED
from conftest import assert_one_line_error as one_line_error

from qhdesign.errors import InputError

STACK = str(SCREENED)


def _char_device(path: Path) -> None:
    """A character device node like /dev/null (1, 3), made in a scratch folder (needs root; a
    FIFO stands in otherwise, which the same rule covers)."""
    try:
        os.mknod(path, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
    except PermissionError:
        os.mkfifo(path)


# ----------------------------------------------------------------- major 1: outputs
def test_json_into_a_device_node_writes_into_it_and_keeps_the_node(cli_runner, app, tmp_path):
    node = tmp_path / "null"
    try:  # a node like /dev/null (1, 3) in a scratch folder: needs root (CI runs as root)
        os.mknod(node, 0o666 | stat.S_IFCHR, os.makedev(1, 3))
    except PermissionError:
        # not root: the system's /dev/null itself, which a non-root process cannot replace
        # (before the fix the replace failed: exit != 0), so this still fails without the fix
        node = Path("/dev/null")
    res = cli_runner.invoke(app, ["check", STACK, "--json", str(node)])
    assert res.exit_code == 0, res.output
    # before the fix: mkstemp + os.replace turned the node into a regular file
    assert stat.S_ISCHR(node.stat().st_mode)
    assert [p.name for p in tmp_path.iterdir() if p.name != "null"] == []  # no temp file left


def test_json_into_a_fifo_is_streamed_to_its_reader(cli_runner, app, tmp_path):
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    got: list[bytes] = []

    def reader():
        with open(fifo, "rb") as fh:
            got.append(fh.read())

    t = threading.Thread(target=reader, daemon=True)
    t.start()
    res = cli_runner.invoke(app, ["check", STACK, "--json", str(fifo)])
    t.join(timeout=30)
    assert res.exit_code == 0, res.output
    assert stat.S_ISFIFO(fifo.stat().st_mode)  # still a FIFO, not replaced
    assert got and b'"layers"' in got[0]


def test_a_symlink_is_followed_and_kept(cli_runner, app, tmp_path):
    target = tmp_path / "real.json"
    target.write_text("old")
    link = tmp_path / "link.json"
    link.symlink_to(target)
    res = cli_runner.invoke(app, ["check", STACK, "--json", str(link)])
    assert res.exit_code == 0, res.output
    assert link.is_symlink()  # before the fix: replaced by a regular file
    assert '"layers"' in target.read_text()
    # a link to a device: written into, link and device kept
    node = tmp_path / "dev"
    _char_device(node)
    if stat.S_ISCHR(node.stat().st_mode):
        link2 = tmp_path / "link2.json"
        link2.symlink_to(node)
        assert cli_runner.invoke(app, ["check", STACK, "--json", str(link2)]).exit_code == 0
        assert link2.is_symlink() and stat.S_ISCHR(node.stat().st_mode)


def test_a_dangling_symlink_is_refused(cli_runner, app, tmp_path):
    link = tmp_path / "dangling.json"
    link.symlink_to(tmp_path / "nowhere" / "x.json")
    one_line_error(cli_runner.invoke(app, ["check", STACK, "--json", str(link)]), "dangling")


@pytest.mark.parametrize(
    ("make", "fragment"),
    [
        (lambda tmp: str(tmp), "is a folder"),  # a folder given as the file
        (lambda tmp: "", "empty file name"),
        (lambda tmp: str(tmp / "missing" / "r.json"), "does not exist"),
    ],
)
def test_bad_output_paths_fail_before_any_work(cli_runner, app, tmp_path, make, fragment):
    # before the fix: a folder or an empty name gave a traceback (exit 1) after the solve
    res = cli_runner.invoke(app, ["bands", STACK, "--json", make(tmp_path)])
    one_line_error(res, "option --json", fragment)
    assert "wells" not in res.stdout  # refused before the solve printed anything


def test_a_full_disk_is_one_line(cli_runner, app):
    assert os.path.exists("/dev/full"), "this check needs Linux's /dev/full"
    # /dev/full: every write fails with ENOSPC, as on a full disk (before: a traceback, exit 1)
    one_line_error(
        cli_runner.invoke(app, ["check", STACK, "--json", "/dev/full"]),
        "/dev/full",
        "No space left on device",
    )


def test_a_read_only_folder_is_refused_up_front(tmp_path, monkeypatch):
    # root writes anywhere, so the permission test goes through os.access itself
    from qhdesign.io import check_writable

    real = os.access
    monkeypatch.setattr(
        os, "access", lambda p, mode: False if Path(p) == tmp_path else real(p, mode)
    )
    with pytest.raises(InputError, match="is not writable"):
        check_writable(tmp_path / "r.json")


def test_sweep_csv_must_be_a_regular_file(cli_runner, app, tmp_path):
    node = tmp_path / "null.csv"
    os.mkfifo(node)
    spec = Path(__file__).resolve().parents[2] / "sweeps" / "ql2417_setback.toml"
    res = cli_runner.invoke(app, ["sweep", str(spec), "--csv", str(node), "--workers", "1"])
    one_line_error(res, "regular file")
    assert stat.S_ISFIFO(node.stat().st_mode)


# ----------------------------------------------------------------- major 2: plug-in stages
EVIL = """
from pathlib import Path
Path({marker!r}).write_text("imported")

def stage(stack, **options):
    return {{"one": 1.0}}
"""


def _plugin_spec(tmp_path: Path, module: str) -> Path:
    (tmp_path / f"{module}.py").write_text(EVIL.format(marker=str(tmp_path / "MARKER")))
    spec = tmp_path / "plug.toml"
    spec.write_text(
        f'[sweep]\nstack = "{STACK}"\nstage = "{module}:stage"\n'
        '[space]\nkind = "grid"\n[space.parameters]\n'
        '"layers.primary.thickness" = ["20 nm", "22 nm"]\n'
    )
    return spec


def test_plugin_stage_needs_consent_and_check_never_imports_it(
    cli_runner, app, tmp_path, monkeypatch
):
    module = "i14_plugin_probe"
    spec = _plugin_spec(tmp_path, module)
    monkeypatch.chdir(tmp_path)
    monkeypatch.syspath_prepend("")  # as `python -m qhdesign` does: the current folder first
    monkeypatch.delitem(sys.modules, module, raising=False)
    # before the fix: the module was imported (its top-level code ran) while the spec loaded
    res = cli_runner.invoke(app, ["sweep", str(spec), "--check"])
    one_line_error(res, "--allow-plugin", module)
    res = cli_runner.invoke(app, ["sweep", str(spec), "--check", "--allow-plugin", module])
    assert res.exit_code == 0, res.output
    assert not (tmp_path / "MARKER").exists()
    # consent given, but the current folder is not an implicit import path
    res = cli_runner.invoke(
        app, ["sweep", str(spec), "--allow-plugin", module, "--workers", "1", "-q"]
    )
    one_line_error(res, "cannot import plug-in stage", "PYTHONPATH")
    assert not (tmp_path / "MARKER").exists()
    # named explicitly on PYTHONPATH, it runs
    monkeypatch.setenv("PYTHONPATH", str(tmp_path))
    monkeypatch.syspath_prepend(str(tmp_path))
    res = cli_runner.invoke(
        app,
        ["sweep", str(spec), "--allow-plugin", module, "--workers", "1", "-q", "--csv", "p.csv"],
    )
    assert res.exit_code == 0, res.output
    assert (tmp_path / "MARKER").exists()


# ----------------------------------------------------------------- major 3: one spelling
def _grid(params: dict, kind: str = "grid", **space) -> dict:
    return {
        "sweep": {"stack": STACK, "stage": "capacitor"},
        "space": {"kind": kind, "parameters": params, **space},
    }


def test_two_spellings_of_one_parameter_are_refused():
    from qhdesign.sweep.spec import build_plan

    raw = _grid(
        {
            "doping.delta_upper.sheet": ["1.6e12 cm^-2", "1.8e12 cm^-2"],
            "layers.delta_upper.doping.sheet": ["1.7e12 cm^-2", "1.9e12 cm^-2"],
        }
    )
    # before the fix: two columns, rows computed at the second spelling's values only
    with pytest.raises(InputError, match="names the same parameter") as info:
        build_plan(raw, source="two.toml")
    assert "layers.delta_upper.doping.sheet" in str(info.value)


def test_either_spelling_gives_the_one_canonical_column():
    from qhdesign.sweep.runner import param_column
    from qhdesign.sweep.spec import build_plan

    a = build_plan(_grid({"doping.delta_upper.sheet": ["1.6e12 cm^-2"]}), source="a")
    b = build_plan(_grid({"layers.delta_upper.doping.sheet": ["1.6e12 cm^-2"]}), source="b")
    assert a.parameters == b.parameters == ("layers.delta_upper.doping.sheet",)
    assert param_column(a.parameters[0])[0] == "layers.delta_upper.doping.sheet_cm^-2"


@pytest.mark.parametrize("kind", ["grid", "lhs"])
def test_equal_range_ends_are_refused(kind):
    from qhdesign.sweep.spec import build_plan

    rng = {"from": "20 nm", "to": "20 nm"}
    if kind == "grid":
        rng["steps"] = 1
    extra = {"samples": 4, "seed": 1} if kind == "lhs" else {}
    with pytest.raises(InputError, match="range ends are equal"):
        build_plan(_grid({"layers.primary.thickness": rng}, kind, **extra), source="eq.toml")


def test_lhs_samples_that_repeat_a_design_are_refused():
    from qhdesign.sweep.spec import build_plan

    # a range one ulp wide: 50 samples cannot be told apart (analytic: only 2 floats in it)
    lo = 20e-9
    hi = float(__import__("numpy").nextafter(lo, 1.0))
    raw = _grid(
        {"layers.primary.thickness": {"from": f"{lo!r} m", "to": f"{hi!r} m"}},
        "lhs",
        samples=50,
        seed=3,
    )
    with pytest.raises(InputError, match="repeat another design"):
        build_plan(raw, source="lhs.toml")


# ----------------------------------------------------------------- major 4: strict quantities
@pytest.mark.parametrize("text", ["9**9**9 nm", "25 nm * 2", "(25) nm", "25 nm + 1 nm", "2e5e5 nm"])
def test_quantity_expressions_are_refused_everywhere(cli_runner, app, tmp_path, text):
    from qhdesign.units import parse_quantity

    # before the fix: "9**9**9 nm" ran pint's evaluator for as long as the CPU lasted, and
    # "25 nm * 2" was read as 50 nm
    with pytest.raises(InputError, match="number unit"):
        parse_quantity(text, "length")
    # on the command line
    res = cli_runner.invoke(app, ["island", STACK, "--radius", text])
    one_line_error(res, "option --radius", "number unit")
    # in a stack file
    bad = tmp_path / "s.toml"
    bad.write_text(SCREENED.read_text().replace('thickness = "24 nm"', f'thickness = "{text}"', 1))
    assert f'thickness = "{text}"' in bad.read_text()
    one_line_error(cli_runner.invoke(app, ["check", str(bad)]), "number unit")
    # in a sweep spec
    from qhdesign.sweep.spec import build_plan

    with pytest.raises(InputError, match="number unit"):
        build_plan(_grid({"layers.primary.thickness": [text]}), source="q.toml")


@pytest.mark.parametrize(
    ("text", "si"),
    [
        ("25 nm", 25e-9),  # analytic: SI prefixes
        ("2.4e11 cm^-2", 2.4e15),
        ("1e18 cm**-3", 1e24),
        ("5e4 m/s", 5e4),
        (" -0.35 V ", -0.35),
        (".5 um", 0.5e-6),
    ],
)
def test_quantity_pattern_keeps_every_ordinary_form(text, si):
    from qhdesign.units import DIMENSIONS, parse_quantity

    dims = {k: v for k, v in DIMENSIONS.items()}
    dim = next(
        d
        for d in ("length", "sheet_density", "volume_density", "velocity", "voltage")
        if _is(text, d, dims)
    )
    assert parse_quantity(text, dim) == pytest.approx(si, rel=1e-12)


def _is(text, dim, dims):
    from qhdesign.units import parse_quantity

    try:
        parse_quantity(text, dim)
    except InputError:
        return False
    return True


@pytest.mark.parametrize("value", ["nan", "inf", "-1e999", "1+1"])
def test_bare_voltages_must_be_finite_decimals(cli_runner, app, value):
    # before: float("nan") passed and "--from nan" blamed --to
    res = cli_runner.invoke(app, ["pinchoff", STACK, "--gate-gap", "300 nm", "--from", value])
    one_line_error(res, "option --from")
