"""Unit parsing at the boundary: strings with units -> SI floats; bare numbers refused."""

import math

import pytest

from qhdesign.errors import InputError
from qhdesign.units import format_quantity, parse_quantity


@pytest.mark.parametrize(
    ("text", "dim", "si"),
    [
        ("25 nm", "length", 25e-9),  # SI prefix definition (BIPM SI brochure, 9th ed., Table 7)
        ("2.4e11 cm^-2", "sheet_density", 2.4e15),
        ("1e18 cm^-3", "volume_density", 1e24),
        ("300 mK", "temperature", 0.3),
        ("-0.35 V", "voltage", -0.35),
        ("0.72 eV", "energy", 0.72 * 1.602176634e-19),  # e exact in SI since 2019 (CODATA 2018)
        ("5 T", "field", 5.0),
        ("1 um^2", "area", 1e-12),
    ],
)
def test_parse_to_si(text, dim, si):
    assert math.isclose(parse_quantity(text, dim), si, rel_tol=1e-12)


@pytest.mark.parametrize(
    ("value", "dim", "fragment"),
    [
        ("25", "length", "no unit"),
        (25, "length", "string with a unit"),
        ("25 V", "length", "is not a length"),
        ("twenty nm", "length", "cannot read"),
        ("1e400 nm", "length", "not a finite"),
        # a decimal comma: pint would drop it and read 25 nm (or 72 eV, or 1.8e13 cm^-2)
        ("2,5 nm", "length", "not a comma"),
        ("0,72 eV", "energy", "not a comma"),
        ("1,8e12 cm^-2", "sheet_density", "not a comma"),
    ],
)
def test_bad_units_are_input_errors(value, dim, fragment):
    with pytest.raises(InputError, match=fragment) as info:
        parse_quantity(value, dim, source="f.toml", key="layers.cap.thickness")
    msg = str(info.value)
    assert "\n" not in msg
    assert "f.toml" in msg and "layers.cap.thickness" in msg


@pytest.mark.parametrize(
    ("si", "unit", "dim"),
    [(2.5e-8, "nm", "length"), (2.4e15, "cm^-2", "sheet_density"), (0.3, "K", "temperature")],
)
def test_format_round_trip(si, unit, dim):
    assert math.isclose(parse_quantity(format_quantity(si, unit, dim), dim), si, rel_tol=1e-15)
