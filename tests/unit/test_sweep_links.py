"""Linked parameters: one value sets several paths (symmetric setbacks), in specs and on the CLI."""

from __future__ import annotations

import pytest
from conftest import SCREENED, assert_one_line_error

from qhdesign.errors import InputError
from qhdesign.sweep.runner import run_sweep
from qhdesign.sweep.spec import build_plan
from qhdesign.sweep.table import read_sweep_csv

UP, LO = "layers.setback_upper.thickness", "layers.setback_lower.thickness"
DENS = {"screen_upper": "1.9e11 cm^-2", "primary": "1.0e11 cm^-2", "screen_lower": "2.0e11 cm^-2"}


def raw(params, kind="grid"):
    return {
        "sweep": {"stack": str(SCREENED), "stage": "capacitor"},
        "options": {"densities": DENS},
        "space": {"kind": kind, "parameters": params},
    }


def test_linked_key_sets_both_setbacks(tmp_path):
    plan = build_plan(
        raw({f"{UP}+{LO}": {"from": "24 nm", "to": "40 nm", "steps": 5}}), source="t.toml"
    )
    designs = list(plan.space)
    assert len(plan) == 5 and plan.parameters == (UP, LO)
    assert all(d[UP] == d[LO] for d in designs)
    assert [round(d[UP] * 1e9, 9) for d in designs] == [24, 28, 32, 36, 40]
    out = tmp_path / "linked.csv"
    run_sweep(plan, out, executor="serial")
    t = read_sweep_csv(out)
    up, lo = t.column(UP), t.column(LO)
    assert list(up) == list(lo) == [24, 28, 32, 36, 40]  # nm columns, both written
    # a linked grid with a second, independent parameter: 5 x 2 designs
    plan2 = build_plan(
        raw(
            {
                f"{UP}+{LO}": ["24 nm", "30 nm", "36 nm", "40 nm", "44 nm"],
                "layers.spacer_upper.thickness": ["20 nm", "24 nm"],
            }
        ),
        source="t.toml",
    )
    assert len(plan2) == 10 and all(d[UP] == d[LO] for d in plan2.space)


def test_linked_paths_must_take_the_same_values():
    # a length cannot set an Al fraction: the error names the follower
    with pytest.raises(InputError, match="rejected") as exc:
        build_plan(raw({f"{UP}+layers.barrier_upper.x": ["24 nm", "30 nm"]}), source="t.toml")
    assert "layers.barrier_upper.x" in str(exc.value)
    with pytest.raises(InputError, match="appears twice"):
        build_plan(raw({f"{UP}+{LO}": ["24 nm", "30 nm"], LO: ["20 nm", "22 nm"]}), source="t.toml")
    with pytest.raises(InputError, match="distinct paths"):
        build_plan(raw({f"{UP}+{UP}": ["24 nm", "30 nm"]}), source="t.toml")


def test_linked_parameter_on_the_command_line(cli_runner, app, tmp_path):
    out = tmp_path / "cli.csv"
    res = cli_runner.invoke(
        app,
        [
            "sweep", str(SCREENED), "--stage", "capacitor",
            "--option", "densities=" + __import__("json").dumps(DENS),
            "--param", f"{UP}+{LO}=24 nm..36 nm:4", "--csv", str(out),
        ],
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    t = read_sweep_csv(out)
    assert list(t.column(UP)) == list(t.column(LO)) == [24, 28, 32, 36]
    bad = cli_runner.invoke(
        app,
        [
            "sweep", str(SCREENED), "--stage", "capacitor", "--param",
            f"{UP}+layers.nope.thickness=24 nm..36 nm:4", "--csv", str(tmp_path / "x.csv"),
        ],
    )  # fmt: skip
    assert_one_line_error(bad, "nope")
