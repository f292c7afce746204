"""Edit one value of a stack file in place, keeping its comments, layout and units.

``calibrate`` writes the fitted stack this way: the grower's file comes back as they wrote it,
with one number changed, in the unit the file already used for it, to a sensible number of
significant digits. Style-preserving TOML editing by tomlkit (PyPI).
"""

from __future__ import annotations

import re
from typing import Any

from .errors import InputError
from .units import DIMENSIONS, registry

__all__ = ["DISPLAY_UNITS", "edit_value", "format_in_unit", "unit_in_file"]

#: Unit for a quantity the file does not write yet (the stack format's usual units).
DISPLAY_UNITS = {
    "length": "nm",
    "sheet_density": "cm^-2",
    "volume_density": "cm^-3",
    "energy": "eV",
    "voltage": "V",
    "temperature": "K",
    "field": "T",
}
_NUMBER = re.compile(r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*(?P<unit>.*?)\s*$")


def format_in_unit(value_si: float, unit: str, digits: int = 4) -> str:
    """``value_si`` written in ``unit`` with ``digits`` significant digits ("5.063e11 cm^-2")."""
    ureg = registry()
    si = str(ureg.Quantity(1.0, unit.replace("^", "**")).to_base_units().units)
    mag = ureg.Quantity(value_si, si).to(unit.replace("^", "**")).magnitude
    text = re.sub(r"e([-+])0*(\d)", lambda m: "e" + m.group(1).replace("+", "") + m.group(2),
                  f"{mag:.{digits}g}")  # fmt: skip
    return f"{text} {unit}" if unit else text


def _node(doc: Any, doc_path: list, create: bool):
    """The table holding the last key of ``doc_path`` (layers are found by their name)."""
    import tomlkit

    node = doc
    i = 0
    while i < len(doc_path) - 1:
        part = doc_path[i]
        if part == "layers" and i == 0:
            name = doc_path[1]
            node = next(t for t in doc["layers"] if t.get("name") == name)
            i += 2
            continue
        if part not in node:
            if not create:
                return None
            node[part] = tomlkit.table()
        node = node[part]
        i += 1
    return node


def unit_in_file(text: str, stack, path: str) -> str:
    """The unit the stack file writes the value at ``path`` in ("" for plain numbers); the
    format's usual unit when the file does not write it."""
    import tomlkit

    from .stack import _resolve_path

    doc_path, kind = _resolve_path(stack, path)
    node = _node(tomlkit.parse(text), doc_path, create=False)
    value = None if node is None else node.get(doc_path[-1])
    if isinstance(value, str):
        m = _NUMBER.match(value)
        if m and m.group("unit"):
            return m.group("unit")
    if kind in DIMENSIONS:
        return DISPLAY_UNITS.get(kind, DIMENSIONS[kind][1])
    return ""


def edit_value(text: str, stack, path: str, value_si: float, digits: int = 4) -> tuple[str, str]:
    """The stack file ``text`` with the value at ``path`` set to ``value_si``.

    Returns ``(new_text, written)``: the edited file (comments, order and layout kept) and the
    value as written ("5.063e11 cm^-2"). The edited file is parsed back and must give the value to
    within the digits written.
    """
    import tomlkit

    from .stack import _resolve_path
    from .stackfile import loads_stack

    doc = tomlkit.parse(text)
    doc_path, kind = _resolve_path(stack, path)
    if kind not in DIMENSIONS and kind != "number":
        raise InputError(f"'{path}' is not a numeric parameter", key="--parameter")
    unit = unit_in_file(text, stack, path) if kind in DIMENSIONS else ""
    written = format_in_unit(value_si, unit, digits)
    node = _node(doc, doc_path, create=True)
    last = doc_path[-1]
    new = tomlkit.item(written if kind in DIMENSIONS else float(written))
    old = node.get(last)
    if old is not None and hasattr(old, "trivia"):  # keep the comment after the value
        new.trivia.comment_ws = old.trivia.comment_ws
        new.trivia.comment = old.trivia.comment
    node[last] = new
    out = tomlkit.dumps(doc)
    back = loads_stack(out, source=str(getattr(stack, "source", "<stack>"))).get(path)
    if abs(back - value_si) > 10.0 ** (1 - digits) * abs(value_si):
        raise InputError(f"writing {written} for '{path}' did not round-trip", key="--out")
    return out, written
