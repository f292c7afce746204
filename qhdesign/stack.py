"""Layer stacks: load, validate, address by parameter path, write back.

A stack file is TOML of our own design (reference: ``docs/stack-format.md``). Every dimensional
value is a string with its unit; :func:`load_stack` parses it into a frozen :class:`Stack` in SI
units, or raises :class:`~qhdesign.errors.StackError` naming the file, the key and what is allowed.

A *parameter path* addresses any value: ``wafer.temperature``, ``surface.barrier``,
``layers.spacer_upper.thickness``, ``layers.barrier.x``, ``doping.delta_upper.sheet`` (also spelt
``layers.delta_upper.doping.sheet``). :meth:`Stack.get` reads it in SI, :meth:`Stack.with_value`
returns a new validated stack.
"""

from __future__ import annotations

import copy
import difflib
import math
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from scipy import constants as sc

from . import materials
from .errors import InputError, StackError
from .units import DIMENSIONS, parse_quantity

__all__ = ["Doping", "Layer", "LayerProfile", "Stack", "Substrate", "Surface", "load_stack"]

MAX_FILE_BYTES = 1_000_000
MATERIALS = ("GaAs", "AlGaAs", "AlAs")
WELL_ROLES = ("primary", "screening")
DONOR_MODELS = ("ionized", "shallow", "dx")
_NAME_RE = re.compile(r"^[A-Za-z_][A-Za-z0-9_\-]*$")

# Key schemas: key -> kind. Kinds: a units.DIMENSIONS name, "number", "text", or a tuple of choices.
_WAFER_KEYS: dict[str, Any] = {
    "name": "text",
    "notes": "text",
    "temperature": "temperature",
    "freeze_temperature": "temperature",
}
_WAFER_REQUIRED = ("name", "temperature", "freeze_temperature")
_MODEL_KEYS: dict[str, Any] = {
    "band_offset": ("vmr", "gap_fraction"),
    "gap_fraction": "number",
    "permittivity": ("alloy", "uniform"),
    "uniform_permittivity": "number",
}
_SURFACE_KEYS: dict[str, Any] = {
    "kind": ("exposed", "gate"),
    "barrier": "energy",
    "charge": ("frozen", "pinned"),
    "bias": "voltage",
    "dielectric_thickness": "length",
    "dielectric_permittivity": "number",
}
_SUBSTRATE_KEYS: dict[str, Any] = {
    "kind": ("deep", "back_gate"),
    "bias": "voltage",
    "barrier": "energy",
}
_LAYER_KEYS: dict[str, Any] = {
    "name": "text",
    "material": MATERIALS,
    "x": "number",
    "thickness": "length",
    "well": WELL_ROLES,
    "band_offset": "energy",
    "mass": "number",
    "permittivity": "number",
    "doping": "table",
}
_DOPING_KEYS: dict[str, Any] = {
    "sheet": "sheet_density",
    "volume": "volume_density",
    "donor": DONOR_MODELS,
    "level": "energy",
}
_TOP_KEYS = ("wafer", "models", "surface", "layers", "substrate")

# Display units used when a float is written back into a document.
_WRITE_UNITS = {
    "length": "nm",
    "sheet_density": "cm^-2",
    "volume_density": "cm^-3",
    "energy": "eV",
    "voltage": "V",
    "temperature": "K",
}

# Physical sanity ranges (SI); outside them the input is refused, not silently accepted.
_RANGES = {
    "layer_thickness": (0.0, 100e-6, "between 0 and 100 um (exclusive of 0)"),
    "temperature": (0.0, 400.0, "between 0 and 400 K (exclusive of 0)"),
    "sheet": (0.0, 1e17, "from 0 to 1e13 cm^-2"),
    "volume": (0.0, 1e26, "from 0 to 1e20 cm^-3"),
    "barrier": (-0.5 * sc.e, 3.0 * sc.e, "from -0.5 to 3 eV"),
    "bias": (-50.0, 50.0, "from -50 to 50 V"),
    "permittivity": (1.0, 100.0, "from 1 to 100"),
    "mass": (0.005, 5.0, "from 0.005 to 5 (m*/m0)"),
    "band_offset": (-1.0 * sc.e, 3.0 * sc.e, "from -1 to 3 eV"),
    "dielectric_thickness": (0.0, 10e-6, "from 0 to 10 um"),
    "gap_fraction": (0.3, 0.9, "from 0.3 to 0.9"),
    "level": (-1.0 * sc.e, 1.0 * sc.e, "from -1 to 1 eV"),
}


@dataclass(frozen=True)
class Doping:
    """Donors in one layer.

    Attributes
    ----------
    kind : {"sheet", "volume"}
        A sheet density (m^-2) spread uniformly over its (thin) layer, or a volume density (m^-3).
    density : float
        m^-2 for ``"sheet"``, m^-3 for ``"volume"``.
    donor : {"ionized", "shallow", "dx"}
        Ionisation model: always ionised; a shallow hydrogenic level; a deep DX-like level.
    level : float or None
        Override of the donor level depth below the local Gamma band edge (J).
    """

    kind: str
    density: float
    donor: str = "shallow"
    level: float | None = None


@dataclass(frozen=True)
class Layer:
    """One epitaxial layer (SI units). ``x`` is the Al fraction; ``well`` the role or None."""

    name: str
    material: str
    x: float
    thickness: float
    well: str | None = None
    doping: Doping | None = None
    band_offset: float | None = None
    mass: float | None = None
    permittivity: float | None = None


@dataclass(frozen=True)
class Surface:
    """Top boundary: an exposed surface or a metal gate.

    ``barrier`` (J) is E_c at the semiconductor surface minus the Fermi level of the surface
    (exposed) or of the metal (gate) at zero bias. ``charge`` says whether an exposed surface keeps
    its charge frozen at low temperature (``"frozen"``) or stays pinned (``"pinned"``).
    """

    kind: str
    barrier: float
    charge: str = "frozen"
    bias: float = 0.0
    dielectric_thickness: float = 0.0
    dielectric_permittivity: float = 1.0


@dataclass(frozen=True)
class Substrate:
    """Bottom boundary: ``"deep"`` (zero field below the last layer) or ``"back_gate"``."""

    kind: str = "deep"
    bias: float = 0.0
    barrier: float = 0.0


@dataclass(frozen=True)
class LayerProfile:
    """A layer with every material property resolved (SI; z is depth, positive down)."""

    name: str
    z_top: float
    z_bottom: float
    x: float
    band_offset: float
    mass: float
    permittivity: float
    donor_density: float
    donor_model: str | None
    donor_level: float
    well: str | None

    @property
    def thickness(self) -> float:
        return self.z_bottom - self.z_top


@dataclass(frozen=True)
class Stack:
    """A validated layer stack in SI units. Build it with :func:`load_stack`.

    Attributes
    ----------
    name, notes : str
    temperature : float
        Solve temperature (K).
    freeze_temperature : float
        Donor freeze-out temperature (K): donor (and frozen-surface) charge is set in equilibrium
        here and kept fixed below it.
    surface : Surface
    layers : tuple of Layer
        From the surface down.
    substrate : Substrate
    band_offset_model : {"vmr", "gap_fraction"}
    gap_fraction : float
    permittivity_model : {"alloy", "uniform"}
    uniform_permittivity : float
    """

    name: str
    notes: str
    temperature: float
    freeze_temperature: float
    surface: Surface
    layers: tuple[Layer, ...]
    substrate: Substrate
    band_offset_model: str = "vmr"
    gap_fraction: float = 0.65
    permittivity_model: str = "alloy"
    uniform_permittivity: float = 12.9
    source: str = field(default="<memory>", compare=False)
    document: dict = field(default_factory=dict, compare=False, repr=False)
    warnings: tuple[str, ...] = field(default=(), compare=False, repr=False)

    # ----------------------------------------------------------------- queries
    def layer(self, name: str) -> Layer:
        """The layer called ``name``."""
        for lay in self.layers:
            if lay.name == name:
                return lay
        raise StackError(
            f"no layer named '{name}'{_did_you_mean(name, [la.name for la in self.layers])}",
            source=self.source,
            key=f"layers.{name}",
        )

    def wells(self) -> tuple[Layer, ...]:
        """The quantum-well layers, top to bottom."""
        return tuple(lay for lay in self.layers if lay.well is not None)

    @property
    def primary(self) -> Layer:
        """The primary well."""
        return next(lay for lay in self.layers if lay.well == "primary")

    def boundaries(self) -> np.ndarray:
        """Depths of the layer boundaries (m), shape (len(layers) + 1,), starting at 0."""
        return np.concatenate([[0.0], np.cumsum([lay.thickness for lay in self.layers])])

    @property
    def total_thickness(self) -> float:
        return float(sum(lay.thickness for lay in self.layers))

    def resolved_band_offset(self, lay: Layer) -> float:
        if lay.band_offset is not None:
            return lay.band_offset
        return float(
            materials.conduction_band_offset(lay.x, self.band_offset_model, self.gap_fraction)
        )

    def resolved_mass(self, lay: Layer) -> float:
        return lay.mass if lay.mass is not None else float(materials.effective_mass(lay.x))

    def resolved_permittivity(self, lay: Layer) -> float:
        if lay.permittivity is not None:
            return lay.permittivity
        if self.permittivity_model == "uniform":
            return self.uniform_permittivity
        return float(materials.permittivity(lay.x))

    def resolved_donor_level(self, lay: Layer) -> float:
        """Donor level depth below the local Gamma edge (J); NaN for always-ionised donors."""
        d = lay.doping
        if d is None or d.donor == "ionized":
            return math.nan
        if d.level is not None:
            return d.level
        shallow = materials.hydrogenic_binding_energy(
            self.resolved_mass(lay), self.resolved_permittivity(lay)
        )
        if d.donor == "shallow":
            return shallow
        # DX: the deep level where it lies below the band edge, else the shallow state rules
        return max(float(materials.dx_depth(lay.x)), shallow)

    def profile(self) -> tuple[LayerProfile, ...]:
        """Every layer with depths and resolved material properties."""
        z = self.boundaries()
        out = []
        for i, lay in enumerate(self.layers):
            dens = 0.0
            if lay.doping is not None:
                dens = (
                    lay.doping.density / lay.thickness
                    if lay.doping.kind == "sheet"
                    else lay.doping.density
                )
            out.append(
                LayerProfile(
                    name=lay.name,
                    z_top=float(z[i]),
                    z_bottom=float(z[i + 1]),
                    x=lay.x,
                    band_offset=self.resolved_band_offset(lay),
                    mass=self.resolved_mass(lay),
                    permittivity=self.resolved_permittivity(lay),
                    donor_density=dens,
                    donor_model=None if lay.doping is None else lay.doping.donor,
                    donor_level=self.resolved_donor_level(lay),
                    well=lay.well,
                )
            )
        return tuple(out)

    # ----------------------------------------------------------------- parameter paths
    def get(self, path: str) -> Any:
        """Value at a parameter path: SI float for quantities, float for numbers, else str."""
        doc_path, kind = _resolve_path(self, path)
        node: Any = self.document
        for part in doc_path[:-1]:
            node = node.get(part, {}) if isinstance(node, dict) else {}
        last = doc_path[-1]
        if isinstance(node, dict) and last in node:
            value = node[last]
            if isinstance(kind, str) and kind in DIMENSIONS:
                return parse_quantity(value, kind, source=self.source, key=path)
            if kind == "number":
                return float(value)
            return value
        # not written in the file: the resolved default
        return _resolved_default(self, doc_path, path)

    def with_value(self, path: str, value: Any) -> Stack:
        """A new validated stack with the value at ``path`` replaced.

        ``value`` is what the file would hold (``"30 nm"``, ``0.31``, ``"dx"``) or an SI float
        for a quantity (written back in the display unit: nm, cm^-2, eV, V, K).
        """
        doc_path, kind = _resolve_path(self, path)
        doc = copy.deepcopy(self.document)
        node: Any = doc
        for part in doc_path[:-1]:
            if isinstance(node, dict) and part not in node:
                node[part] = {}
            node = node[part]
        if isinstance(kind, str) and kind in _WRITE_UNITS and not isinstance(value, str):
            value = _format_si(float(value), kind)
        elif kind == "number" and isinstance(value, str):
            try:
                value = float(value)
            except ValueError:
                raise StackError(
                    f"expected a number, got '{value}'", source=self.source, key=path
                ) from None
        node[doc_path[-1]] = value
        return _build(_denormalize(doc), self.source)

    # ----------------------------------------------------------------- output
    def to_toml(self) -> str:
        """The stack as TOML text (same schema as the input); load(to_toml) == self."""
        return dump_document(_denormalize(self.document))

    def to_dict(self) -> dict:
        """JSON-ready summary in SI units."""
        return {
            "name": self.name,
            "temperature_K": self.temperature,
            "freeze_temperature_K": self.freeze_temperature,
            "surface": {
                "kind": self.surface.kind,
                "barrier_eV": self.surface.barrier / sc.e,
                "charge": self.surface.charge,
                "bias_V": self.surface.bias,
            },
            "layers": [
                {
                    "name": p.name,
                    "z_top_m": p.z_top,
                    "z_bottom_m": p.z_bottom,
                    "x": p.x,
                    "band_offset_eV": p.band_offset / sc.e,
                    "mass_rel": p.mass,
                    "permittivity_rel": p.permittivity,
                    "donor_density_m3": p.donor_density,
                    "well": p.well,
                }
                for p in self.profile()
            ],
            "substrate": {"kind": self.substrate.kind, "bias_V": self.substrate.bias},
        }


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
def _did_you_mean(word: str, options) -> str:
    close = difflib.get_close_matches(str(word), [str(o) for o in options], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


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


def _in_range(v: float, name: str, key: str, src: str, *, open_low: bool = False) -> float:
    lo, hi, text = _RANGES[name]
    bad = (v <= lo if open_low else v < lo) or v > hi
    if bad or not math.isfinite(v):
        raise StackError(f"value {v:.6g} (SI) is out of range; allowed {text}", source=src, key=key)
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
    layers, warns = _build_layers(raw["layers"], src)

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
    if kind == "deep":
        for k in ("bias", "barrier"):
            if k in tab:
                raise StackError(
                    'only a back gate has this key; set substrate.kind = "back_gate"',
                    source=src,
                    key=f"substrate.{k}",
                )
    bias = _in_range(
        _read(tab, "bias", "voltage", "substrate", src, 0.0), "bias", "substrate.bias", src
    )
    barrier = _in_range(
        _read(tab, "barrier", "energy", "substrate", src, 0.0), "barrier", "substrate.barrier", src
    )
    return Substrate(kind, bias, barrier)


def _build_layers(arr: Any, src: str) -> tuple[tuple[Layer, ...], list[str]]:
    if not isinstance(arr, list) or not arr or not all(isinstance(t, dict) for t in arr):
        raise StackError(
            "expected one or more [[layers]] tables, from the surface down",
            source=src,
            key="layers",
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
        if "doping" in tab:
            doping = _build_doping(tab["doping"], f"{where}.doping", src)
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


# ============================================================================ documents
def _normalize(raw: dict) -> dict:
    """Document with layers keyed by name (for paths); order kept."""
    doc = copy.deepcopy(raw)
    doc["layers"] = {t["name"]: t for t in raw["layers"]}
    return doc


def _denormalize(doc: dict) -> dict:
    raw = copy.deepcopy(doc)
    if isinstance(raw.get("layers"), dict):
        raw["layers"] = list(raw["layers"].values())
    return raw


def _format_si(value: float, kind: str) -> str:
    unit = _WRITE_UNITS[kind]
    scale = {
        "nm": 1e-9,
        "cm^-2": 1e4,
        "cm^-3": 1e6,
        "eV": sc.e,
        "V": 1.0,
        "K": 1.0,
    }[unit]
    return f"{value / scale!r} {unit}"


def _resolve_path(stack: Stack, path: str) -> tuple[list[str], Any]:
    """Map a parameter path to (document key path, value kind); raise StackError if unknown."""
    src = stack.source
    parts = path.split(".")
    schema = {
        "wafer": _WAFER_KEYS,
        "models": _MODEL_KEYS,
        "surface": _SURFACE_KEYS,
        "substrate": _SUBSTRATE_KEYS,
    }
    head = parts[0]
    if head in schema and len(parts) == 2:
        keys = schema[head]
        if parts[1] not in keys:
            raise StackError(
                f"unknown parameter{_did_you_mean(parts[1], keys)}; allowed: {', '.join(keys)}",
                source=src,
                key=path,
            )
        return parts, keys[parts[1]]
    names = [lay.name for lay in stack.layers]
    if head == "layers" and len(parts) >= 3:
        lname = parts[1]
        if lname not in names:
            raise StackError(
                f"no layer named '{lname}'{_did_you_mean(lname, names)}", source=src, key=path
            )
        if len(parts) == 3:
            key = parts[2]
            if key not in _LAYER_KEYS or key in ("doping", "name"):
                allowed = [k for k in _LAYER_KEYS if k not in ("doping", "name")]
                raise StackError(
                    f"unknown layer parameter{_did_you_mean(key, allowed)}; "
                    f"allowed: {', '.join(allowed)}",
                    source=src,
                    key=path,
                )
            return ["layers", lname, key], _LAYER_KEYS[key]
        if len(parts) == 4 and parts[2] == "doping":
            return _doping_path(stack, lname, parts[3], path)
    if head == "doping" and len(parts) == 3:
        if parts[1] not in names:
            raise StackError(
                f"no layer named '{parts[1]}'{_did_you_mean(parts[1], names)}",
                source=src,
                key=path,
            )
        return _doping_path(stack, parts[1], parts[2], path)
    raise StackError(
        "unknown parameter path; use wafer.<key>, surface.<key>, substrate.<key>, models.<key>, "
        "layers.<layer>.<key> or doping.<layer>.<key>",
        source=src,
        key=path,
    )


def _doping_path(stack: Stack, lname: str, key: str, path: str) -> tuple[list[str], Any]:
    if key not in _DOPING_KEYS:
        raise StackError(
            f"unknown doping parameter{_did_you_mean(key, _DOPING_KEYS)}; "
            f"allowed: {', '.join(_DOPING_KEYS)}",
            source=stack.source,
            key=path,
        )
    lay = stack.layer(lname)
    if lay.doping is None and key in ("sheet", "volume", "donor", "level"):
        if key not in ("sheet", "volume"):
            raise StackError(f"layer '{lname}' is not doped", source=stack.source, key=path)
    elif lay.doping is not None and key in ("sheet", "volume") and lay.doping.kind != key:
        raise StackError(
            f"layer '{lname}' has {lay.doping.kind} doping, not {key}",
            source=stack.source,
            key=path,
        )
    return ["layers", lname, "doping", key], _DOPING_KEYS[key]


def _resolved_default(stack: Stack, doc_path: list[str], path: str) -> Any:
    head = doc_path[0]
    if head == "layers":
        lay = stack.layer(doc_path[1])
        key = doc_path[2]
        if key == "doping":
            if lay.doping is None:
                if doc_path[3] in ("sheet", "volume"):
                    return 0.0
            else:
                d = lay.doping
                return {
                    "sheet": d.density,
                    "volume": d.density,
                    "donor": d.donor,
                    "level": stack.resolved_donor_level(lay),
                }[doc_path[3]]
        elif key == "band_offset":
            return stack.resolved_band_offset(lay)
        elif key == "mass":
            return stack.resolved_mass(lay)
        elif key == "permittivity":
            return stack.resolved_permittivity(lay)
        elif hasattr(lay, key):
            return getattr(lay, key)
    obj = {
        "wafer": stack,
        "surface": stack.surface,
        "substrate": stack.substrate,
    }.get(head)
    attr = doc_path[-1]
    if head == "models":
        obj = stack
        attr = {
            "band_offset": "band_offset_model",
            "permittivity": "permittivity_model",
        }.get(attr, attr)
    if obj is not None and hasattr(obj, attr):
        return getattr(obj, attr)
    raise StackError("value not set in this stack", source=stack.source, key=path)


# ============================================================================ writing
def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int | float):
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'
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
    if raw.get("substrate"):
        lines.append("[substrate]")
        lines += [f"{k} = {_toml_value(v)}" for k, v in raw["substrate"].items()]
        lines.append("")
    return "\n".join(lines)
