"""Issue 15, item 3: the physics speaks in argument names, the front ends translate.

No module under the physics packages names a command-line option; the command line names the
option the user typed, a sweep names the spec key.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from qhdesign.errors import InputError

PKG = Path(__file__).resolve().parents[2] / "qhdesign"
#: The physics: every package and module that is neither a front end (cli, sweep) nor plotting.
PHYSICS = [
    "sp1d",
    "tf2d",
    "fem",
    "section",
    "island",
    "pipeline.py",
    "sheets.py",
    "interferometer.py",
    "interpretation.py",
    "sizing.py",
    "landau.py",
    "sheetxc.py",
    "sheetlaw.py",
    "limits.py",
    "stack.py",
    "stackfile.py",
    "materials.py",
    "units.py",
]
# "--name" as a command-line option: two dashes then a letter, not inside a longer word
OPTION = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]*")


def _physics_files() -> list[Path]:
    out = []
    for name in PHYSICS:
        p = PKG / name
        if p.is_dir():
            out += sorted(p.rglob("*.py"))
        elif p.is_file():
            out.append(p)
    return out


def test_the_grep_finds_an_option_name_when_there_is_one():
    # the pattern itself: it must catch what it is meant to catch, and only that
    assert OPTION.findall('raise InputError("give --field B", key="x")') == ["--field"]
    assert OPTION.findall("x-->y, ls='--', a--b") == []


def test_no_physics_module_names_a_command_line_option():
    files = _physics_files()
    assert len(files) > 20  # the packages are there (sp1d and tf2d alone hold more)
    found = {
        f"{f.relative_to(PKG)}:{i}: {m}"
        for f in files
        for i, line in enumerate(f.read_text().splitlines(), 1)
        for m in OPTION.findall(line)
    }
    assert not found, sorted(found)


def test_cli_names_the_option_the_user_typed(cli_runner, app, screened_path):
    from conftest import assert_one_line_error

    s = str(screened_path)
    # the radius the user gave leaves no room for the (default) ring: name --radius, the one
    # typed (before: --ring-width)
    r = cli_runner.invoke(app, ["island", s, "--radius", "30 nm"])
    assert_one_line_error(r, "option --radius")
    # ... and --ring-width when that is the one typed
    r = cli_runner.invoke(app, ["island", s, "--radius", "0.5 um", "--ring-width", "0.6 um"])
    assert_one_line_error(r, "option --ring-width")
    # pinchoff has no --gate-voltage: the last voltage is --to (before: "option --gate-voltage")
    r = cli_runner.invoke(app, ["pinchoff", s, "--gate-gap", "300 nm", "--to", "-1e6"])
    assert_one_line_error(r, "option --to", "below -20 V")
    # the first voltage typed above the default last one: --from is named, not --to
    r = cli_runner.invoke(app, ["pinchoff", s, "--gate-gap", "300 nm", "--from", "-6"])
    assert_one_line_error(r, "option --from")
    # a gap wider than the 2D domain names --gate-gap (before: no option at all)
    r = cli_runner.invoke(app, ["edge", s, "--gate-voltage", "-0.5", "--gate-gap", "0.9 mm"])
    assert_one_line_error(r, "option --gate-gap")
    # one wording: "option --step", never "key '--step'"
    r = cli_runner.invoke(app, ["gate", s, "--from", "0", "--to", "-1", "--step", "0"])
    err = assert_one_line_error(r, "option --step")
    assert "key '--" not in err


def test_cli_field_rule_is_the_same_for_bands_and_edge(cli_runner, app, screened_path):
    from conftest import assert_one_line_error

    s = str(screened_path)
    # before: bands stopped at 100 T, edge had no upper bound
    assert_one_line_error(
        cli_runner.invoke(app, ["bands", s, "--field", "150 T"]), "option --field", "100 T"
    )
    assert_one_line_error(
        cli_runner.invoke(app, ["edge", s, "--gate-voltage", "-0.5", "--field", "150"]),
        "option --field",
        "100 T",
    )


def test_cli_temperature_follows_the_stack_files_rule(cli_runner, app, screened_path):
    from conftest import assert_one_line_error

    # QL-2417 freezes out at 120 K; the file refuses a solve temperature above it, and so
    # does the option now (before: accepted)
    r = cli_runner.invoke(app, ["bands", str(screened_path), "--temperature", "200 K"])
    assert_one_line_error(r, "option --temperature", "freeze-out")


@pytest.mark.parametrize(
    ("stage", "options", "fragment"),
    [
        ("edge", {"gate_voltage": "-0.5 V", "field": "150 T"}, "options.field"),
        ("edge", {"gate_voltage": "-25 V"}, "options.gate_voltage"),
        ("bands", {"temperature": "200 K"}, "options.temperature"),
        ("island", {"radius": "30 nm"}, "options.radius"),  # the key the spec wrote
        ("island", {"radius": "0.5 um", "ring_width": "0.6 um"}, "options.ring_width"),
    ],
)
def test_sweep_stages_name_spec_keys_never_options(stage, options, fragment):
    from qhdesign.stack import load_stack
    from qhdesign.sweep.stages import get_stage

    stack = load_stack(PKG.parent / "stacks" / "ql2417_screened.toml")
    with pytest.raises(InputError) as info:
        get_stage(stage)(stack, **options)
    msg = info.value.one_line()
    assert fragment in msg and "option --" not in msg


# ----------------------------------------------------------------- issue 15, item 4 (CLI half)
def test_shared_options_are_one_definition(app):
    """--json, --refine, --surface, --gate-barrier, --temperature: one definition each (help
    and default) in every command that takes them (island's --surface defaults to the stack's
    own surface model and says so: it is left out)."""
    import typer

    cmd = typer.main.get_command(app)
    seen: dict[str, set] = {}
    for name in ("check", "bands", "edge", "pinchoff", "island", "interpret"):
        for p in cmd.commands[name].params:
            for opt in ("--json", "--refine", "--surface", "--gate-barrier", "--temperature"):
                if opt in p.opts and not (
                    name == "island" and opt in ("--surface", "--temperature")
                ):
                    seen.setdefault(opt, set()).add((p.help, p.default))
    assert set(seen) >= {"--json", "--refine", "--surface", "--gate-barrier", "--temperature"}
    assert all(len(v) == 1 for v in seen.values()), seen


@pytest.mark.parametrize(
    "args",
    [
        ["edge", "--gate-voltage", "-0.5", "--refine", "0.2"],
        ["pinchoff", "--gate-gap", "300 nm", "--refine", "5"],
        ["island", "--radius", "0.8 um", "--refine", "0.2"],
    ],
)
def test_one_refine_range_everywhere(cli_runner, app, screened_path, args):
    from conftest import assert_one_line_error

    from qhdesign.limits import REFINE_RANGE, check_refine

    # before: edge/pinchoff allowed [0.1, 8], island [0.25, 4], the island sweep stage [0.1, 8]
    r = cli_runner.invoke(app, [args[0], str(screened_path), *args[1:]])
    assert_one_line_error(r, "option --refine", "[0.25, 4]")
    assert REFINE_RANGE == (0.25, 4.0)
    with pytest.raises(InputError, match=r"\[0.25, 4\]"):
        from qhdesign.island_options import island_inputs

        island_inputs(radius="0.8 um", refine=0.2)
    assert check_refine(4) == 4.0


def test_the_cli_has_no_csv_builder_of_its_own():
    # the edge and pinch-off CSVs come from the results' own table()
    src = (PKG / "cli" / "edge.py").read_text()
    assert "_csv_text" not in src and ".table()" in src
