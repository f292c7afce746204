"""The stack file's schema and the small rules both the stack model and the file reader use.

Keys and their kinds, allowed choices, physical sanity ranges, display units for writing back,
and the document helpers (layers keyed by name, "did you mean"). :mod:`qhdesign.stack` (the
model) and :mod:`qhdesign.stackfile` (reading and validation) both import this module, which
imports neither of them: there is no import circle between the two.
"""

from __future__ import annotations

import copy
import difflib
import re
from typing import Any

from scipy import constants as sc

__all__ = ["DONOR_MODELS", "MATERIALS", "MAX_FILE_BYTES", "WELL_ROLES"]

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
    "kind": ("deep", "back_gate", "pinned"),
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
}
_DOPING_KEYS: dict[str, Any] = {
    "sheet": "sheet_density",
    "volume": "volume_density",
    "donor": DONOR_MODELS,
    "level": "energy",
}
_TOP_KEYS = ("wafer", "models", "surface", "layers", "doping", "substrate")

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


def _did_you_mean(word: str, options) -> str:
    close = difflib.get_close_matches(str(word), [str(o) for o in options], n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


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
