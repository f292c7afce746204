"""Units at the boundary: parse strings like ``"25 nm"`` or ``"2.4e11 cm^-2"`` into SI floats.

One pint registry lives here and is created lazily, so ``import qhdesign`` stays light.
Inside qhdesign every quantity is a plain float in SI units (m, m^-2, m^-3, J, V, K, T).
"""

from __future__ import annotations

import functools
import math
import re

from .errors import InputError

__all__ = ["DIMENSIONS", "QUANTITY_PATTERN", "format_quantity", "parse_number", "parse_quantity"]

#: Named dimensions accepted by :func:`parse_quantity`: (pint dimensionality, SI unit, example).
DIMENSIONS: dict[str, tuple[str, str, str]] = {
    "length": ("[length]", "m", "25 nm"),
    "sheet_density": ("1/[length]**2", "1/m**2", "2.4e11 cm^-2"),
    "volume_density": ("1/[length]**3", "1/m**3", "1e18 cm^-3"),
    "energy": ("[energy]", "J", "0.75 eV"),
    "voltage": ("[electric_potential]", "V", "-0.35 V"),
    "temperature": ("[temperature]", "K", "300 mK"),
    "field": ("[mass]/[current]/[time]**2", "T", "5 T"),
    "area": ("[length]**2", "m**2", "1 um^2"),
    "velocity": ("[length]/[time]", "m/s", "5e4 m/s"),
    "electric_field": ("[electric_potential]/[length]", "V/m", "1e6 V/m"),
    "mobility": ("[length]**2/[electric_potential]/[time]", "m**2/V/s", "1e6 cm^2/Vs"),
    "time": ("[time]", "s", "1 ps"),
}

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d{1,3})?"
_BARE_NUMBER = re.compile(rf"^\s*{_NUMBER}\s*$")
# a unit: names (letters, micro sign, Greek mu, ohm) with an optional small integer power, joined
# by "/", "*" or a space; nothing else (no numbers, brackets or operators between them)
_NAME = r"[A-Za-z\u00b5\u03bc\u03a9\u00b0]+(?:(?:\^|\*\*)[-+]?\d{1,2})?"
_UNIT = rf"{_NAME}(?:\s*(?:/|\*(?!\*)|\s)\s*{_NAME})*"
#: The only shape of a quantity string pint is shown: "number unit" (see :func:`parse_quantity`).
QUANTITY_PATTERN = re.compile(rf"^\s*(?P<number>{_NUMBER})\s*(?P<unit>{_UNIT})\s*$")
#: Longest quantity string read (a longer one is refused before any parsing).
MAX_QUANTITY_CHARS = 64


def shorten(value: object, limit: int = 40) -> str:
    """``repr``-like text of ``value`` cut to about ``limit`` characters for an error line."""
    text = value if isinstance(value, str) else repr(value)
    if len(text) > limit:
        text = f"{text[: limit - 10]}... ({len(text)} characters)"
    return text


def parse_number(value: object, *, source: str | None = None, key: str | None = None) -> float:
    """A bare decimal number (``"-0.4"``, ``"1e-3"``); refuses ``nan``, ``inf`` and expressions."""
    if isinstance(value, bool):
        raise InputError(f"expected a number, got {value!r}", source=source, key=key)
    if isinstance(value, int | float):
        out = float(value)
    else:
        text = str(value)
        if len(text) > MAX_QUANTITY_CHARS or not _BARE_NUMBER.match(text):
            raise InputError(
                f"'{shorten(text)}' is not a plain decimal number", source=source, key=key
            )
        out = float(text)
    if not math.isfinite(out):
        raise InputError(f"'{shorten(value)}' is not a finite number", source=source, key=key)
    return out


@functools.cache
def registry():
    """The one pint registry (created on first use)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return ureg


@functools.cache
def _dimensionality(si_unit: str):
    return registry().Quantity(1.0, si_unit).dimensionality


def parse_quantity(
    value: object,
    dimension: str,
    *,
    source: str | None = None,
    key: str | None = None,
) -> float:
    """Parse a quantity string with a unit and return its value in SI units.

    Parameters
    ----------
    value
        A string such as ``"25 nm"``, ``"2.4e11 cm^-2"``, ``"300 mK"``. Bare numbers are
        refused: every dimensional input must say its unit.
    dimension
        One of :data:`DIMENSIONS` (``"length"``, ``"sheet_density"``, ...).
    source, key
        Where the value came from, for the error message.

    Returns
    -------
    float
        The value in the SI unit of ``dimension`` (m, m^-2, m^-3, J, V, K, T, ...).

    Raises
    ------
    InputError
        If the string has no unit, an unknown unit, or a unit of another dimension.

    Examples
    --------
    >>> import math
    >>> math.isclose(parse_quantity("25 nm", "length"), 25e-9)
    True
    >>> parse_quantity("2.4e11 cm^-2", "sheet_density")
    2400000000000000.0
    >>> parse_quantity("300 mK", "temperature")
    0.3
    >>> from qhdesign.errors import InputError
    >>> try:
    ...     parse_quantity("25", "length")  # a bare number has no unit
    ... except InputError:
    ...     print("refused")
    refused
    """
    _, si_unit, example = DIMENSIONS[dimension]
    if isinstance(value, bool) or not isinstance(value, str):
        raise InputError(
            f"expected a {dimension.replace('_', ' ')} as a string with a unit "
            f'(e.g. "{example}"), got {value!r}',
            source=source,
            key=key,
        )
    text = value.strip()
    what = dimension.replace("_", " ")
    if len(text) > MAX_QUANTITY_CHARS:
        raise InputError(
            f"'{shorten(value)}' is too long for a {what} (at most {MAX_QUANTITY_CHARS} "
            f'characters, e.g. "{example}")',
            source=source,
            key=key,
        )
    if _BARE_NUMBER.match(text):
        raise InputError(
            f"'{value}' has no unit; write a {what} with its unit, e.g. \"{example}\"",
            source=source,
            key=key,
        )
    if "," in text:
        # pint would drop the comma: "2,5 nm" would become 25 nm
        raise InputError(
            f"'{value}': write decimals with a point, not a comma (e.g. \"{example}\")",
            source=source,
            key=key,
        )
    match = QUANTITY_PATTERN.match(text)
    if match is None:
        # never hand an expression to pint: "9**9**9 nm" would run for ever, "25 nm * 2" is 50 nm
        raise InputError(
            f"cannot read '{shorten(value)}' as {_article(what)} {what}: expected \"number unit\" "
            f"(e.g. \"{example}\"; a unit is names with powers and '/', no arithmetic)",
            source=source,
            key=key,
        )
    number = float(match["number"])
    if not math.isfinite(number):
        raise InputError(f"'{shorten(value)}' is not a finite number", source=source, key=key)
    ureg = registry()
    try:
        # "cm^2/Vs" is how mobilities are written: V times s in the denominator
        unit = re.sub(r"/\s*Vs\b", "/(V*s)", match["unit"]).replace("^", "**")
        q = ureg.Quantity(number, unit)
    except Exception:  # pint raises several unrelated types on garbage
        raise InputError(
            f"cannot read '{value}' as a {dimension.replace('_', ' ')}; "
            f'expected e.g. "{example}"',
            source=source,
            key=key,
        ) from None
    if not hasattr(q, "dimensionality") or q.dimensionality != _dimensionality(si_unit):
        raise InputError(
            f"'{value}' is not {_article(what)} {what} (expected units like \"{example}\")",
            source=source,
            key=key,
        )
    out = float(q.to(si_unit).magnitude)
    if not math.isfinite(out):
        raise InputError(f"'{value}' is not a finite number", source=source, key=key)
    return out


def _article(word: str) -> str:
    return "an" if word[:1] in "aeiou" else "a"


def format_quantity(value_si: float, unit: str, dimension: str | None = None) -> str:
    """Format an SI float back into a string in ``unit`` (``format_quantity(2.5e-8, "nm")``).

    Uses ``repr`` of the converted number so that parse(format(x)) round-trips to the last bit
    whenever the conversion factor is exact in binary, and to ~1 ulp otherwise.

    >>> import math
    >>> math.isclose(parse_quantity(format_quantity(2.5e-8, "nm"), "length"), 2.5e-8)
    True
    """
    ureg = registry()
    if dimension is not None:
        si_unit = DIMENSIONS[dimension][1]
    else:
        si_unit = str(ureg.Quantity(1.0, unit.replace("^", "**")).to_base_units().units)
    mag = ureg.Quantity(value_si, si_unit).to(unit.replace("^", "**")).magnitude
    return f"{float(mag)!r} {unit}"
