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
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import constants as sc

from . import materials
from .errors import StackError
from .stackschema import (
    _DOPING_KEYS,
    _LAYER_KEYS,
    _MODEL_KEYS,
    _SUBSTRATE_KEYS,
    _SURFACE_KEYS,
    _WAFER_KEYS,
    _WRITE_UNITS,
    _denormalize,
    _did_you_mean,
    _format_si,
)
from .units import DIMENSIONS, parse_quantity

__all__ = [
    "Doping",
    "Layer",
    "LayerProfile",
    "Stack",
    "Substrate",
    "Surface",
]


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
    """Bottom boundary below the last layer.

    ``"deep"``: zero field. ``"back_gate"``: a conductor at ``bias`` (V) with E_c - E_F =
    ``barrier`` at zero bias. ``"pinned"``: the Fermi level is pinned at ``barrier`` below E_c
    (a semi-insulating substrate; the last layer's thickness is the distance to the pinning).
    """

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
        """Value at a parameter path: SI float for quantities, float for numbers, else str.

        >>> from qhdesign.stack import load_stack
        >>> stack = load_stack("stacks/ql2403_heterojunction.toml")  # from the repository root
        >>> [layer.name for layer in stack.layers]
        ['cap', 'doped', 'spacer', 'channel']
        >>> import math
        >>> math.isclose(stack.get("layers.spacer.thickness"), 50e-9)
        True
        >>> stack.get("layers.spacer.x")
        0.32"""
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

    def kind_of(self, path: str) -> str:
        """What the parameter at ``path`` holds: a dimension of :data:`qhdesign.units.DIMENSIONS`
        (``"length"``, ``"sheet_density"``, ...: a quantity written with its unit), ``"number"``
        (dimensionless, e.g. an Al fraction) or another kind (text choices)."""
        _, kind = _resolve_path(self, path)
        return kind if isinstance(kind, str) else "choice"

    def with_value(self, path: str, value: Any) -> Stack:
        """A new validated stack with the value at ``path`` replaced.

        ``value`` is what the file would hold (``"30 nm"``, ``0.31``, ``"dx"``) or an SI float
        for a quantity (written back in the display unit: nm, cm^-2, eV, V, K).

        >>> from qhdesign.stack import load_stack
        >>> stack = load_stack("stacks/ql2403_heterojunction.toml")
        >>> thicker = stack.with_value("layers.spacer.thickness", "60 nm")
        >>> round(thicker.get("layers.spacer.thickness") * 1e9, 9), stack is not thicker
        (60.0, True)
        """
        return self.with_values({path: value})

    def with_values(self, values: dict[str, Any]) -> Stack:
        """A new stack with every ``path -> value`` of ``values`` set, validated once at the end.

        Each value is given as in :meth:`with_value`. Paths are checked against this stack
        before anything changes; errors name the path.
        """
        doc = copy.deepcopy(self.document)
        for path, value in values.items():
            doc_path, kind = _resolve_path(self, path)
            node: Any = doc
            for part in doc_path[:-1]:
                node = node.setdefault(part, {})
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
        from .stackfile import _build  # the validation: stackfile imports this module

        return _build(_denormalize(doc), self.source)

    # ----------------------------------------------------------------- output
    def to_toml(self) -> str:
        """The stack as TOML text (same schema as the input); load(to_toml) == self."""
        from .stackfile import dump_document

        return dump_document(_denormalize(self.document))

    def to_dict(self) -> dict:
        """JSON-ready summary in SI units."""
        return {
            "name": self.name,
            "temperature_K": self.temperature,
            "freeze_temperature_K": self.freeze_temperature,
            "notes": self.notes,
            "models": {
                "band_offset": self.band_offset_model,
                "gap_fraction": self.gap_fraction,
                "permittivity": self.permittivity_model,
                "uniform_permittivity": self.uniform_permittivity,
            },
            "surface": {
                "kind": self.surface.kind,
                "barrier_eV": self.surface.barrier / sc.e,
                "charge": self.surface.charge,
                "bias_V": self.surface.bias,
                "dielectric_thickness_m": self.surface.dielectric_thickness,
                "dielectric_permittivity_rel": self.surface.dielectric_permittivity,
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
                    "donor_model": p.donor_model,
                    "donor_level_eV": p.donor_level / sc.e if p.donor_model else None,
                    "well": p.well,
                }
                for p in self.profile()
            ],
            "substrate": {
                "kind": self.substrate.kind,
                "bias_V": self.substrate.bias,
                "barrier_eV": self.substrate.barrier / sc.e,
            },
        }


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
    if lay.doping is None and key not in ("sheet", "volume"):
        raise StackError(
            f"layer '{lname}' is not doped; set doping.{lname}.sheet or .volume first",
            source=stack.source,
            key=path,
        )
    if lay.doping is not None and key in ("sheet", "volume") and lay.doping.kind != key:
        raise StackError(
            f"layer '{lname}' has {lay.doping.kind} doping, not {key}",
            source=stack.source,
            key=path,
        )
    return ["doping", lname, key], _DOPING_KEYS[key]


def _resolved_default(stack: Stack, doc_path: list[str], path: str) -> Any:
    head = doc_path[0]
    if head == "doping":
        lay = stack.layer(doc_path[1])
        key = doc_path[2]
        if lay.doping is None:
            return 0.0  # only sheet/volume reach here for an undoped layer
        if key == "level":
            return stack.resolved_donor_level(lay)
        if key == "donor":
            return lay.doping.donor
        return lay.doping.density
    if head == "layers":
        lay = stack.layer(doc_path[1])
        key = doc_path[2]
        if key == "band_offset":
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


# Loading and validation live in stackfile.py (which imports this module); its entry points are
# also reachable here, loaded on first use, so neither module imports the other at import time.
_FROM_STACKFILE = ("load_stack", "loads_stack", "dump_document")
__all__ += list(_FROM_STACKFILE)


def __getattr__(name: str):
    if name in _FROM_STACKFILE:
        from . import stackfile

        return getattr(stackfile, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
