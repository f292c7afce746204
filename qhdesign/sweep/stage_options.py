"""Stage options as sweep parameters: the path ``options.<name>`` (e.g. ``options.radius``).

A stage declares which of its options may be swept and their dimension
(:data:`SWEEPABLE`). In a spec or on the command line they are swept like stack paths, with
units (``--param "options.radius=0.4 um..1.2 um:5"``); each design's value (SI float) replaces
the fixed option of the same name for that design. Validation before the sweep uses
:class:`OptionAwareStack`, which answers the spec checker's questions (``get``, ``kind_of``,
``with_value``) for option paths and passes stack paths to the real stack.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from qhdesign.errors import InputError

__all__ = ["OPTION_PREFIX", "SWEEPABLE", "OptionAwareStack", "option_name", "split_values"]

OPTION_PREFIX = "options."

_LENGTH = "length"
#: Sweepable options per stage: name -> dimension (a key of qhdesign.units.DIMENSIONS, or
#: "number" for dimensionless values such as the filling 1/3 or the mesh refinement).
SWEEPABLE: dict[str, dict[str, str]] = {
    "island": {
        "radius": _LENGTH,
        "ring_width": _LENGTH,
        "gate_offset": _LENGTH,
        "split_gap": _LENGTH,
        "outer_radius": _LENGTH,
        "gap": "energy",
        "filling": "number",
        "refine": "number",
        "temperature": "temperature",
        "edge_velocity": "velocity",
        "field": "field",
        "gate_voltage": "voltage",
    },
    "edge": {
        "gate_voltage": "voltage",
        "field": "field",
        "gap_energy": "energy",
        "perimeter": _LENGTH,
    },
}


def option_name(path: str) -> str | None:
    """``"options.radius"`` -> ``"radius"``; a stack path -> None."""
    return path[len(OPTION_PREFIX) :] if path.startswith(OPTION_PREFIX) else None


def split_values(values: Mapping[str, float]) -> tuple[dict[str, float], dict[str, float]]:
    """(stack path values, stage option values by name) of one design."""
    stack_part: dict[str, float] = {}
    opts: dict[str, float] = {}
    for k, v in values.items():
        n = option_name(k)
        if n is None:
            stack_part[k] = v
        else:
            opts[n] = v
    return stack_part, opts


def _kind(stage: str, name: str) -> str:
    table = SWEEPABLE.get(stage)
    if not table or name not in table:
        allowed = ", ".join(OPTION_PREFIX + n for n in (table or {})) or "none"
        raise InputError(
            f"stage '{stage}' has no sweepable option '{name}'; allowed: {allowed}",
            key=OPTION_PREFIX + name,
        )
    return table[name]


def parse_option_value(stage: str, name: str, value: Any) -> float:
    """SI float of a swept option value (string with unit, or an SI number); range-checked."""
    kind = _kind(stage, name)
    key = OPTION_PREFIX + name
    if isinstance(value, bool):
        raise InputError(f"expected a number or a quantity, got {value!r}", key=key)
    if kind == "number":
        try:
            v = float(Fraction(str(value).strip())) if isinstance(value, str) else float(value)
        except (ValueError, ZeroDivisionError):
            raise InputError(f"expected a number like 1/3 or 0.5, got {value!r}", key=key) from None
    elif isinstance(value, str):
        from qhdesign.units import parse_quantity

        v = parse_quantity(value, kind, key=key)
    elif isinstance(value, int | float):
        v = float(value)
    else:
        raise InputError(f"expected a quantity with a unit, got {value!r}", key=key)
    if not math.isfinite(v):
        raise InputError(f"value {value!r} is not finite", key=key)
    if kind not in ("voltage",) and not v > 0 and not (kind == "temperature" and v == 0):
        raise InputError(f"must be > 0, got {value!r}", key=key)
    return v


class OptionAwareStack:
    """A stack plus the swept stage options, for validating a space before the sweep."""

    def __init__(self, stack, stage: str, options: Mapping[str, float] | None = None):
        self.stack = stack
        self.stage = stage
        self.options = dict(options or {})

    def get(self, path: str) -> Any:
        n = option_name(path)
        if n is None:
            return self.stack.get(path)
        _kind(self.stage, n)
        return self.options.get(n, math.nan)

    def kind_of(self, path: str) -> str:
        n = option_name(path)
        return self.stack.kind_of(path) if n is None else _kind(self.stage, n)

    def canonical_path(self, path: str) -> str:
        """The one spelling of a stack path (see ``Stack.canonical_path``); option paths as
        they are."""
        n = option_name(path)
        return self.stack.canonical_path(path) if n is None else OPTION_PREFIX + n

    def with_value(self, path: str, value: Any) -> OptionAwareStack:
        n = option_name(path)
        if n is None:
            return OptionAwareStack(self.stack.with_value(path, value), self.stage, self.options)
        v = parse_option_value(self.stage, n, value)
        return OptionAwareStack(self.stack, self.stage, {**self.options, n: v})

    def with_values(self, values: Mapping[str, Any]) -> OptionAwareStack:
        stack_part, opts = split_values(values)
        out = OptionAwareStack(
            self.stack.with_values(stack_part) if stack_part else self.stack,
            self.stage,
            self.options,
        )
        for n, v in opts.items():
            out = out.with_value(OPTION_PREFIX + n, v)
        return out

    def to_toml(self) -> str:
        return self.stack.to_toml()
