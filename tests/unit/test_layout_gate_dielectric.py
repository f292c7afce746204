"""Per-gate dielectric keys of a layout file: read in SI, the stack's layer by default, and every
bad value refused with one line naming the file, the key and the allowed range."""

from __future__ import annotations

import pytest
from conftest import ROOT

from qhdesign.errors import InputError
from qhdesign.layout import loads_layout

BASE = ROOT / "stacks" / "layouts"
HEAD = """
[layout]
name = "t"
stack = "../ql2417_screened.toml"
domain_x = ["-2 um", "2 um"]
domain_y = ["-2 um", "2 um"]
[mesh]
gate_edge = "20 nm"
[[gates]]
name = "g"
voltage = "-0.5 V"
vertices = [["-100 nm", "-100 nm"], ["100 nm", "-100 nm"], ["100 nm", "100 nm"]]
"""


def _load(extra: str):
    return loads_layout(HEAD + extra, source="lay.toml", base=BASE)


def test_gate_dielectric_read_in_si():
    g = _load('dielectric_thickness = "12 nm"\ndielectric_permittivity = 9.5\n').gates[0]
    assert g.dielectric_thickness_m == pytest.approx(12e-9, rel=1e-12)
    assert g.dielectric_permittivity == 9.5
    d = _load('dielectric_thickness = "12 nm"\ndielectric_permittivity = 9.5\n').to_dict()
    assert d["gates"][0]["dielectric_thickness_m"] == pytest.approx(12e-9, rel=1e-12)


def test_default_is_the_stacks_and_zero_is_bare_metal():
    g = _load("").gates[0]
    assert g.dielectric_thickness_m is None and g.dielectric_permittivity is None
    g = _load('dielectric_thickness = "0 nm"\n').gates[0]
    assert g.dielectric_thickness_m == 0.0


@pytest.mark.parametrize(
    "extra, key, fragment",
    [
        ('dielectric_thickness = "20 nm"\n', "dielectric_permittivity", "from 1 to 100"),
        ("dielectric_permittivity = 9\n", "dielectric_thickness", "needs its"),
        (
            'dielectric_thickness = "11 um"\ndielectric_permittivity = 9\n',
            "dielectric_thickness",
            "allowed from 0 nm to 10 um",
        ),
        (
            'dielectric_thickness = "-2 nm"\ndielectric_permittivity = 9\n',
            "dielectric_thickness",
            "allowed from 0 nm to 10 um",
        ),
        (
            'dielectric_thickness = "20 nm"\ndielectric_permittivity = 0.5\n',
            "dielectric_permittivity",
            "from 1 to 100",
        ),
        (
            'dielectric_thickness = "20 nm"\ndielectric_permittivity = "9"\n',
            "dielectric_permittivity",
            "from 1 to 100",
        ),
        ("dielectric_thickness = 20\n", "dielectric_thickness", "unit"),
    ],
)
def test_bad_gate_dielectric_one_line(extra, key, fragment):
    with pytest.raises(InputError) as exc:
        _load(extra)
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith("lay.toml: "), msg
    assert f"key 'gates[0].{key}'" in msg, msg
    assert fragment in msg, msg
