"""Units at the boundary: parse strings like ``"25 nm"`` or ``"2.4e11 cm^-2"`` into SI floats.

One pint registry lives here and is created lazily, so ``import qhdesign`` stays light.
Inside qhdesign every quantity is a plain float in SI units (m, m^-2, m^-3, J, V, K, T).
"""

from __future__ import annotations

import functools
import math
import re

from .errors import InputError

__all__ = ["DIMENSIONS", "format_quantity", "parse_quantity"]

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

_BARE_NUMBER = re.compile(r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*$")


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
    if _BARE_NUMBER.match(text):
        raise InputError(
            f"'{value}' has no unit; write a {dimension.replace('_', ' ')} with its unit, "
            f'e.g. "{example}"',
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
    ureg = registry()
    try:
        q = ureg.Quantity(re.sub(r"/\s*Vs\b", "/(V*s)", text).replace("^", "**"))
    except Exception:  # pint raises several unrelated types on garbage
        raise InputError(
            f"cannot read '{value}' as a {dimension.replace('_', ' ')}; "
            f'expected e.g. "{example}"',
            source=source,
            key=key,
        ) from None
    if not hasattr(q, "dimensionality") or q.dimensionality != _dimensionality(si_unit):
        raise InputError(
            f"'{value}' is not a {dimension.replace('_', ' ')} (expected units like \"{example}\")",
            source=source,
            key=key,
        )
    out = float(q.to(si_unit).magnitude)
    if not math.isfinite(out):
        raise InputError(f"'{value}' is not a finite number", source=source, key=key)
    return out


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
