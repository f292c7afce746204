"""Stack files: read, validate and write the TOML layer-stack format (``docs/stack-format.md``).

Validation happens in one place, here, at construction: every error is a one-line
:class:`~qhdesign.errors.StackError` naming the file, the key path and what is allowed.
"""

from __future__ import annotations

import json
import math
import os
import tomllib
from pathlib import Path
from typing import Any

from scipy import constants as sc

from . import materials
from .errors import InputError, StackError
from .stack import (
    Doping,
    Layer,
    Stack,
    Substrate,
    Surface,
)
from .stackschema import (
    _DOPING_KEYS,
    _LAYER_KEYS,
    _MODEL_KEYS,
    _NAME_RE,
    _RANGES,
    _SUBSTRATE_KEYS,
    _SURFACE_KEYS,
    _TOP_KEYS,
    _WAFER_KEYS,
    _WAFER_REQUIRED,
    DONOR_MODELS,
    MATERIALS,
    MAX_FILE_BYTES,
    WELL_ROLES,
    _did_you_mean,
    _normalize,
)
from .units import parse_quantity

__all__ = ["dump_document", "load_stack", "loads_stack"]


# ============================================================================ loading
def load_stack(path: str | os.PathLike) -> Stack:
    """Read, parse and validate a stack file.

    Raises
    ------
    StackError
        One line naming the file, the key and what is allowed.
    """
    src = str(path)
    p = Path(path)
    if not p.exists():
        raise StackError("file not found", source=src)
    if p.is_dir():
        raise StackError("is a folder, expected a .toml stack file", source=src)
    size = p.stat().st_size
    if size > MAX_FILE_BYTES:
        raise StackError(
            f"file is {size / 1e6:.1f} MB; a stack file is at most {MAX_FILE_BYTES / 1e6:.0f} MB",
            source=src,
        )
    data = p.read_bytes()
    return loads_stack(data, source=src)


def loads_stack(data: bytes | str, source: str = "<string>") -> Stack:
    """Parse and validate stack text (bytes or str); ``source`` names it in errors."""
    if isinstance(data, bytes):
        if len(data) > MAX_FILE_BYTES:
            raise StackError(
                f"file is {len(data) / 1e6:.1f} MB; a stack file is at most "
                f"{MAX_FILE_BYTES / 1e6:.0f} MB",
                source=source,
            )
        if b"\x00" in data:
            raise StackError("binary file (NUL bytes); expected TOML text", source=source)
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            raise StackError("not UTF-8 text; expected a TOML stack file", source=source) from None
    else:
        text = data
    if not text.strip():
        raise StackError("empty file; expected [wafer], [surface] and [[layers]]", source=source)
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StackError(f"TOML syntax error: {exc}", source=source) from None
    return _build(raw, source)


# ============================================================================ validation
def _check_keys(table: Any, allowed: dict, required: tuple, where: str, src: str) -> dict:
    if not isinstance(table, dict):
        raise StackError(f"expected a table, got {type(table).__name__}", source=src, key=where)
    for k in table:
        if k not in allowed:
            raise StackError(
                f"unknown key '{k}'{_did_you_mean(k, allowed)}; allowed: {', '.join(allowed)}",
                source=src,
                key=f"{where}.{k}" if where else k,
            )
    for k in required:
        if k not in table:
            raise StackError("missing required key", source=src, key=f"{where}.{k}")
    return table


def _read(table: dict, k: str, kind: Any, where: str, src: str, default: Any = None) -> Any:
    key = f"{where}.{k}"
    if k not in table:
        return default
    v = table[k]
    if isinstance(kind, tuple):
        if not isinstance(v, str) or v not in kind:
            raise StackError(
                f"'{v}' is not allowed; choose one of: {', '.join(kind)}"
                f"{_did_you_mean(v, kind) if isinstance(v, str) else ''}",
                source=src,
                key=key,
            )
        return v
    if kind == "text":
        if not isinstance(v, str):
            raise StackError(f"expected text, got {v!r}", source=src, key=key)
        return v
    if kind == "number":
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise StackError(f"expected a plain number, got {v!r}", source=src, key=key)
        return float(v)
    if kind == "table":
        return v
    try:
        return parse_quantity(v, kind, source=src, key=key)
    except InputError as exc:
        raise StackError(exc.message, source=src, key=key) from None


# unit in which an out-of-range value is shown (the unit its allowed range is written in)
_RANGE_UNITS = {
    "layer_thickness": ("nm", 1e-9),
    "dielectric_thickness": ("nm", 1e-9),
    "temperature": ("K", 1.0),
    "sheet": ("cm^-2", 1e4),
    "volume": ("cm^-3", 1e6),
    "barrier": ("eV", 1.602176634e-19),
    "band_offset": ("eV", 1.602176634e-19),
    "level": ("eV", 1.602176634e-19),
    "bias": ("V", 1.0),
}


def _in_range(v: float, name: str, key: str, src: str, *, open_low: bool = False) -> float:
    lo, hi, text = _RANGES[name]
    bad = (v <= lo if open_low else v < lo) or v > hi
    if bad or not math.isfinite(v):
        unit, scale = _RANGE_UNITS.get(name, ("", 1.0))
        shown = f"{v / scale:.6g} {unit}".strip()
        raise StackError(f"value {shown} is out of range; allowed {text}", source=src, key=key)
    return v


def _build(raw: dict, src: str) -> Stack:
    """Validate a raw TOML document and build the Stack."""
    if not isinstance(raw, dict):
        raise StackError("expected a TOML document", source=src)
    for k in raw:
        if k not in _TOP_KEYS:
            raise StackError(
                f"unknown table '{k}'{_did_you_mean(k, _TOP_KEYS)}; "
                f"allowed: {', '.join(_TOP_KEYS)}",
                source=src,
                key=k,
            )
    for k in ("wafer", "surface", "layers"):
        if k not in raw:
            raise StackError("missing required table", source=src, key=k)

    wafer = _check_keys(raw["wafer"], _WAFER_KEYS, _WAFER_REQUIRED, "wafer", src)
    name = _read(wafer, "name", "text", "wafer", src)
    notes = _read(wafer, "notes", "text", "wafer", src, "")
    temp = _in_range(
        _read(wafer, "temperature", "temperature", "wafer", src),
        "temperature",
        "wafer.temperature",
        src,
        open_low=True,
    )
    tfreeze = _in_range(
        _read(wafer, "freeze_temperature", "temperature", "wafer", src),
        "temperature",
        "wafer.freeze_temperature",
        src,
        open_low=True,
    )
    if tfreeze < temp:
        raise StackError(
            f"freeze-out temperature {tfreeze:g} K is below the solve temperature {temp:g} K; "
            "it must be at or above it",
            source=src,
            key="wafer.freeze_temperature",
        )

    models = _check_keys(raw.get("models", {}), _MODEL_KEYS, (), "models", src)
    bo_model = _read(models, "band_offset", _MODEL_KEYS["band_offset"], "models", src, "vmr")
    gap_fraction = _read(models, "gap_fraction", "number", "models", src, 0.65)
    _in_range(gap_fraction, "gap_fraction", "models.gap_fraction", src)
    eps_model = _read(models, "permittivity", _MODEL_KEYS["permittivity"], "models", src, "alloy")
    eps_uniform = _read(models, "uniform_permittivity", "number", "models", src, 12.9)
    _in_range(eps_uniform, "permittivity", "models.uniform_permittivity", src)

    surface = _build_surface(raw["surface"], src)
    substrate = _build_substrate(raw.get("substrate", {}), src)
    layers, warns = _build_layers(raw["layers"], raw.get("doping", {}), src)

    stack = Stack(
        name=name,
        notes=notes,
        temperature=temp,
        freeze_temperature=tfreeze,
        surface=surface,
        layers=layers,
        substrate=substrate,
        band_offset_model=bo_model,
        gap_fraction=gap_fraction,
        permittivity_model=eps_model,
        uniform_permittivity=eps_uniform,
        source=src,
        document=_normalize(raw),
        warnings=tuple(warns),
    )
    _check_wells(stack, src)
    return stack


def _build_surface(tab: Any, src: str) -> Surface:
    tab = _check_keys(tab, _SURFACE_KEYS, ("kind", "barrier"), "surface", src)
    kind = _read(tab, "kind", _SURFACE_KEYS["kind"], "surface", src)
    barrier = _in_range(
        _read(tab, "barrier", "energy", "surface", src), "barrier", "surface.barrier", src
    )
    gate_only = ("bias", "dielectric_thickness", "dielectric_permittivity")
    if kind == "exposed":
        for k in gate_only:
            if k in tab:
                raise StackError(
                    'only a gate has this key; set surface.kind = "gate" or remove it',
                    source=src,
                    key=f"surface.{k}",
                )
    elif "charge" in tab:
        raise StackError(
            "only an exposed surface has this key (a gate is a metal)",
            source=src,
            key="surface.charge",
        )
    charge = _read(tab, "charge", _SURFACE_KEYS["charge"], "surface", src, "frozen")
    bias = _in_range(
        _read(tab, "bias", "voltage", "surface", src, 0.0), "bias", "surface.bias", src
    )
    dthick = _in_range(
        _read(tab, "dielectric_thickness", "length", "surface", src, 0.0),
        "dielectric_thickness",
        "surface.dielectric_thickness",
        src,
    )
    deps = _read(tab, "dielectric_permittivity", "number", "surface", src, 1.0)
    _in_range(deps, "permittivity", "surface.dielectric_permittivity", src)
    if dthick > 0 and "dielectric_permittivity" not in tab:
        raise StackError(
            "a gate dielectric needs its relative permittivity",
            source=src,
            key="surface.dielectric_permittivity",
        )
    return Surface(kind, barrier, charge, bias, dthick, deps)


def _build_substrate(tab: Any, src: str) -> Substrate:
    tab = _check_keys(tab, _SUBSTRATE_KEYS, (), "substrate", src)
    kind = _read(tab, "kind", _SUBSTRATE_KEYS["kind"], "substrate", src, "deep")
    allowed = {"deep": (), "back_gate": ("bias", "barrier"), "pinned": ("barrier",)}[kind]
    for k in ("bias", "barrier"):
        if k in tab and k not in allowed:
            raise StackError(
                f'a substrate of kind "{kind}" has no {k}; allowed for it: '
                f"{', '.join(('kind', *allowed))}",
                source=src,
                key=f"substrate.{k}",
            )
    if kind == "pinned" and "barrier" not in tab:
        raise StackError(
            'a pinned substrate needs its barrier (E_c - E_F at the bottom, e.g. "0.7 eV")',
            source=src,
            key="substrate.barrier",
        )
    bias = _in_range(
        _read(tab, "bias", "voltage", "substrate", src, 0.0), "bias", "substrate.bias", src
    )
    barrier = _in_range(
        _read(tab, "barrier", "energy", "substrate", src, 0.0), "barrier", "substrate.barrier", src
    )
    return Substrate(kind, bias, barrier)


def _build_layers(arr: Any, dopings: Any, src: str) -> tuple[tuple[Layer, ...], list[str]]:
    if not isinstance(arr, list) or not arr or not all(isinstance(t, dict) for t in arr):
        raise StackError(
            "expected one or more [[layers]] tables, from the surface down",
            source=src,
            key="layers",
        )
    if not isinstance(dopings, dict) or not all(isinstance(v, dict) for v in dopings.values()):
        raise StackError("expected [doping.<layer name>] tables", source=src, key="doping")
    names = [t.get("name") for t in arr]
    for lname in dopings:
        if lname not in names:
            raise StackError(
                f"doping for a layer that does not exist: no layer named '{lname}'"
                f"{_did_you_mean(lname, [n for n in names if isinstance(n, str)])}",
                source=src,
                key=f"doping.{lname}",
            )
    layers: list[Layer] = []
    warns: list[str] = []
    seen: set[str] = set()
    for i, tab in enumerate(arr):
        nm = tab.get("name")
        where = f"layers.{nm}" if isinstance(nm, str) and nm else f"layers[{i}]"
        _check_keys(tab, _LAYER_KEYS, ("name", "material", "thickness"), where, src)
        name = _read(tab, "name", "text", where, src)
        if not _NAME_RE.match(name):
            raise StackError(
                f"layer name '{name}' must start with a letter or _ and use only letters, "
                "digits, _ or -",
                source=src,
                key=f"layers[{i}].name",
            )
        if name in seen:
            raise StackError(
                "duplicate layer name; every layer needs a unique name", source=src, key=where
            )
        seen.add(name)
        material = _read(tab, "material", MATERIALS, where, src)
        thickness = _in_range(
            _read(tab, "thickness", "length", where, src),
            "layer_thickness",
            f"{where}.thickness",
            src,
            open_low=True,
        )
        if material == "AlGaAs":
            if "x" not in tab:
                raise StackError(
                    "AlGaAs needs its Al fraction x (0 to 1)", source=src, key=f"{where}.x"
                )
            x = _read(tab, "x", "number", where, src)
            if not 0.0 <= x <= 1.0:
                raise StackError(
                    f"Al fraction {x:g} is outside [0, 1]", source=src, key=f"{where}.x"
                )
            if x > materials.DIRECT_GAP_LIMIT_X:
                warns.append(
                    f"{src}: key '{where}.x': x = {x:g} > {materials.DIRECT_GAP_LIMIT_X}: "
                    "the barrier is indirect (X valley lowest); the model uses the Gamma band edge"
                )
        else:
            fixed = 0.0 if material == "GaAs" else 1.0
            x = _read(tab, "x", "number", where, src, fixed)
            if x != fixed:
                raise StackError(
                    f'{material} has x = {fixed:g}; use material = "AlGaAs" for an alloy',
                    source=src,
                    key=f"{where}.x",
                )
        well = _read(tab, "well", WELL_ROLES, where, src)
        band_offset = _read(tab, "band_offset", "energy", where, src)
        if band_offset is not None:
            _in_range(band_offset, "band_offset", f"{where}.band_offset", src)
        mass = _read(tab, "mass", "number", where, src)
        if mass is not None:
            _in_range(mass, "mass", f"{where}.mass", src)
        eps = _read(tab, "permittivity", "number", where, src)
        if eps is not None:
            _in_range(eps, "permittivity", f"{where}.permittivity", src)
        doping = None
        if name in dopings:
            doping = _build_doping(dopings[name], f"doping.{name}", src)
        layers.append(Layer(name, material, x, thickness, well, doping, band_offset, mass, eps))
    return tuple(layers), warns


def _build_doping(tab: Any, where: str, src: str) -> Doping:
    tab = _check_keys(tab, _DOPING_KEYS, (), where, src)
    has_sheet, has_volume = "sheet" in tab, "volume" in tab
    if has_sheet == has_volume:
        raise StackError(
            "give exactly one of 'sheet' (e.g. \"1e12 cm^-2\") or 'volume' (e.g. \"1e18 cm^-3\")",
            source=src,
            key=where,
        )
    if has_sheet:
        kind, dens = "sheet", _read(tab, "sheet", "sheet_density", where, src)
        _in_range(dens, "sheet", f"{where}.sheet", src)
    else:
        kind, dens = "volume", _read(tab, "volume", "volume_density", where, src)
        _in_range(dens, "volume", f"{where}.volume", src)
    donor = _read(tab, "donor", DONOR_MODELS, where, src, "shallow")
    level = _read(tab, "level", "energy", where, src)
    if level is not None:
        _in_range(level, "level", f"{where}.level", src)
    return Doping(kind, dens, donor, level)


def _check_wells(stack: Stack, src: str) -> None:
    roles = [lay.well for lay in stack.layers]
    n_primary = roles.count("primary")
    if n_primary == 0:
        raise StackError(
            'no primary well; mark one GaAs layer with well = "primary"', source=src, key="layers"
        )
    if n_primary > 1:
        names = [lay.name for lay in stack.layers if lay.well == "primary"]
        raise StackError(
            f"{n_primary} primary wells ({', '.join(names)}); exactly one is allowed",
            source=src,
            key="layers",
        )
    for i, lay in enumerate(stack.layers):
        if lay.well is None:
            continue
        where = f"layers.{lay.name}.well"
        if i == 0:
            raise StackError("a well needs a barrier layer above it", source=src, key=where)
        e = stack.resolved_band_offset(lay)
        # the last layer may be a heterojunction channel: confined by the field from below
        neighbours = (
            stack.layers[i - 1 : i + 2 : 2] if i + 1 < len(stack.layers) else (stack.layers[i - 1],)
        )
        for nb in neighbours:
            if not stack.resolved_band_offset(nb) > e:
                raise StackError(
                    f"a well must have a lower conduction-band edge than its neighbours, but "
                    f"'{nb.name}' ({stack.resolved_band_offset(nb) / sc.e * 1e3:.1f} meV) is not "
                    f"above '{lay.name}' ({e / sc.e * 1e3:.1f} meV)",
                    source=src,
                    key=where,
                )


# ============================================================================ writing
def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        # a TOML basic string: JSON's escapes (quote, backslash, newline, tab and \uXXXX for
        # every control character) are all valid TOML escapes; DEL must be escaped in TOML too
        return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + " }"
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def dump_document(raw: dict) -> str:
    """Write a stack document (the schema of ``docs/stack-format.md``) as TOML text."""
    lines: list[str] = []
    for table in ("wafer", "models", "surface"):
        if raw.get(table):
            lines.append(f"[{table}]")
            lines += [f"{k} = {_toml_value(v)}" for k, v in raw[table].items()]
            lines.append("")
    for lay in raw.get("layers", []):
        lines.append("[[layers]]")
        lines += [f"{k} = {_toml_value(v)}" for k, v in lay.items()]
        lines.append("")
    for lname, tab in raw.get("doping", {}).items():
        lines.append(f"[doping.{lname}]")
        lines += [f"{k} = {_toml_value(v)}" for k, v in tab.items()]
        lines.append("")
    if raw.get("substrate"):
        lines.append("[substrate]")
        lines += [f"{k} = {_toml_value(v)}" for k, v in raw["substrate"].items()]
        lines.append("")
    return "\n".join(lines)
