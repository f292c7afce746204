"""Island options as the front ends write them (strings with units) -> the island's inputs.

The command line (``qhdesign island``), the sweep stage ``island`` and the island figures take
options such as ``radius = "0.8 um"`` or ``filling = "1/3"``; the island physics
(:mod:`qhdesign.tf2d.island`) takes SI dataclasses and keys its errors by its argument names.
This module parses the one into the other and names the option the user wrote in errors.
"""

from __future__ import annotations

from typing import Any

from qhdesign.errors import InputError

__all__ = ["ISLAND_KEYS", "island_inputs", "parse_filling", "spec_keys"]


def _quantity(value: Any, dimension: str, key: str, prefix: str = "options.") -> float:
    """A string with a unit, or a number already in SI units."""
    from qhdesign.units import parse_quantity

    if isinstance(value, str):
        return parse_quantity(value, dimension, key=f"{prefix}{key}")
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(f"expected a quantity with a unit, got {value!r}", key=f"{prefix}{key}")
    return float(value)


#: Island options of a sweep spec: lengths (strings with units, or SI numbers).
_ISLAND_LENGTHS = ("radius", "ring_width", "gate_offset", "split_gap", "outer_radius")
_ISLAND_OPTIONS = (
    *_ISLAND_LENGTHS,
    "screening",
    "surface",
    "far",
    "outer_well",
    "filling",
    "gap",
    "degree",
    "refine",
)
#: The island's argument names (error keys of the physics) -> the spec's option names.
ISLAND_KEYS = {
    **{f"{k}_m": k for k in _ISLAND_LENGTHS},
    "gap_energy_J": "gap",
    **{k: k for k in ("screening", "surface", "far", "outer_well", "filling", "degree")},
    "refine": "refine",
}


def parse_filling(value: Any, key: str = "options.filling") -> float | None:
    """A filling from a number or a fraction string ("1/3")."""
    from fractions import Fraction

    if value is None:
        return None
    try:
        return float(Fraction(str(value).strip()))
    except (ValueError, ZeroDivisionError):
        raise InputError(
            f"cannot read filling {shorten_value(value)}; give 1/m (1, 1/3, 1/5)", key=key
        ) from None


def shorten_value(value: Any) -> str:
    from qhdesign.units import shorten

    return repr(shorten(value)) if isinstance(value, str) else shorten(value)


def island_inputs(prefix: str = "options.", **options: Any):
    """Spec options of the island stage -> ``(IslandGeometry, IslandSettings)``.

    Lengths and the gap are strings with units (or SI numbers for lengths), ``filling`` a number
    or a fraction string; errors name ``options.<key>``.
    """
    from dataclasses import replace

    from qhdesign.tf2d.island import IslandGeometry, IslandSettings

    geo: dict[str, float] = {}
    st: dict[str, Any] = {}
    mesh: dict[str, Any] = {}
    for key, value in options.items():
        k = f"{prefix}{key}"
        if key in _ISLAND_LENGTHS:
            if value is not None:
                geo[f"{key}_m"] = _quantity(value, "length", key, prefix)
        elif key in ("screening", "surface", "far"):
            if value is not None:
                st[key] = str(value)
        elif key == "outer_well":
            text = str(value).strip().lower()
            if isinstance(value, bool) or text in ("true", "false"):
                st[key] = value if isinstance(value, bool) else text == "true"
            else:
                raise InputError(f"expected true or false, got {shorten_value(value)}", key=k)
        elif key == "filling":
            st[key] = parse_filling(value, k)
        elif key == "gap":
            if value is not None:
                # a quantity needs its unit (a bare 0.5 would be 0.5 J)
                from qhdesign.units import parse_quantity

                st["gap_energy_J"] = parse_quantity(value, "energy", key=k)
        elif key == "degree":
            if value not in (1, 2) or isinstance(value, bool):
                raise InputError(
                    f"element degree must be 1 or 2, got {shorten_value(value)}", key=k
                )
            mesh[key] = int(value)
        elif key == "refine":
            from qhdesign.limits import check_refine

            mesh[key] = check_refine(value, key=k)
        else:
            raise InputError(f"unknown island option; allowed: {', '.join(_ISLAND_OPTIONS)}", key=k)
    if "radius_m" not in geo:
        raise InputError("the island needs a radius (e.g. '0.8 um')", key=f"{prefix}radius")
    with spec_keys(ISLAND_KEYS, options, prefix):
        geometry = IslandGeometry(**geo)
        settings = IslandSettings(**st)
        if mesh:
            settings = replace(settings, mesh=replace(settings.mesh, **mesh))
    return geometry, settings


class spec_keys:
    """Context manager: an :class:`InputError` the physics keyed by an argument name in
    ``mapping`` is re-raised keyed ``options.<spec key>`` (a sweep user reads spec keys, never
    command-line options or Python argument names)."""

    def __init__(self, mapping: dict[str, str], given=(), prefix: str = "options."):
        self.mapping = mapping
        self.prefix = prefix
        self.given = set(given)  # spec keys the user wrote: named first

    def __enter__(self):
        return self

    def __exit__(self, kind, exc, tb):
        if isinstance(exc, InputError) and exc.source is None and exc.key is not None:
            names = [k for k in (exc.key, *exc.related) if k in self.mapping]
            if names:
                pick = next((n for n in names if self.mapping[n] in self.given), names[0])
                raise type(exc)(exc.message, key=f"{self.prefix}{self.mapping[pick]}") from None
        return False
