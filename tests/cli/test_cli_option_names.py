"""One option name per concept across commands; old spellings hidden, working, deprecated."""

from __future__ import annotations

import pytest
from conftest import SCREENED

# concept -> (command, new name, old name kept hidden for one release)
RENAMED = [
    ("bands", "--gate-voltage", "--gate"),  # gate bias: as in edge and report
    ("edge", "--gate-gap", "--gap"),  # opening of a split gate (a length)
    ("pinchoff", "--gate-gap", "--gap"),
    ("sweep", "--csv", "--out"),  # a table: --csv everywhere
    ("tolerance", "--csv", "--out"),
    ("plot-sweep", "--plot", "--out"),  # a figure: --plot everywhere
    ("calibrate", "--toml", "--out"),  # a stack file
]


@pytest.mark.parametrize(("command", "new", "old"), RENAMED)
def test_help_shows_only_the_new_name(cli_runner, app, command, new, old):
    res = cli_runner.invoke(app, [command, "--help"], env={"COLUMNS": "200"})
    assert res.exit_code == 0
    assert new in res.output
    assert f"{old} " not in res.output.replace(new, "")  # the old spelling is hidden


def test_old_spelling_works_with_a_deprecation_line(cli_runner, app):
    res = cli_runner.invoke(app, ["bands", str(SCREENED), "--gate", "-0.2"])
    assert res.exit_code == 0, res.output
    assert "warning: --gate is deprecated and will be removed in the next release; use " \
        "--gate-voltage" in res.stderr  # fmt: skip
    new = cli_runner.invoke(app, ["bands", str(SCREENED), "--gate-voltage", "-0.2"])
    assert "deprecated" not in new.stderr
    # the numbers are the same under either name
    assert res.stdout == new.stdout


def test_old_and_new_together_are_refused(cli_runner, app):
    res = cli_runner.invoke(
        app, ["bands", str(SCREENED), "--gate", "-0.2", "--gate-voltage", "-0.3"]
    )
    assert res.exit_code == 2
    assert "--gate is the old name of --gate-voltage" in res.stderr


def test_figure_help_lists_every_accepted_format(cli_runner, app):
    for command in ("edge", "pinchoff", "plot-sweep", "check"):
        res = cli_runner.invoke(app, [command, "--help"], env={"COLUMNS": "200"})
        assert "PDF" in res.output, command
