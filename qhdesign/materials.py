"""Material parameters of GaAs, AlAs and Al_xGa_{1-x}As at low temperature.

All numbers come from ``qhdesign/data/materials.toml``, where every entry carries its unit,
temperature and source. Functions return SI values (energies in J) or dimensionless ratios.

Conduction-band offset models
-----------------------------
``"vmr"``
    Gamma conduction-band edge from the VMR alloy rule
    ``E_g(x) = (1-x) E_g,GaAs + x E_g,AlAs - x(1-x) C(x)`` with ``C = -0.127 + 1.310x`` eV and the
    valence-band offsets ``VBO(x) = (1-x)(-0.80) + x(-1.33)`` eV, so
    ``dE_c(x) = E_g(x) - E_g,GaAs + VBO(x) - VBO_GaAs``.
``"gap_fraction"``
    The trade's rule of thumb ``dE_c = f dE_g(Gamma)`` with ``f`` = 0.65 by default.

References
----------
I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89, 5815 (2001).
S. Adachi, J. Appl. Phys. 58, R1 (1985).
"""

from __future__ import annotations

import functools
import tomllib
from dataclasses import dataclass
from importlib import resources

import numpy as np
from scipy import constants as sc

from .errors import InputError
from .units import parse_quantity

__all__ = [
    "MaterialEntry",
    "conduction_band_offset",
    "dx_depth",
    "effective_mass",
    "electron_g_factor_gaas",
    "entry",
    "gamma_gap",
    "hydrogenic_binding_energy",
    "indirect_gap_min",
    "permittivity",
]

OFFSET_MODELS = ("vmr", "gap_fraction")
DIRECT_GAP_LIMIT_X = 0.45  # above this AlGaAs is indirect (X lowest); VMR gives ~0.42 at T = 0


@dataclass(frozen=True)
class MaterialEntry:
    """One sourced number: SI value (or ratio), original text, temperature in K, source."""

    key: str
    value: float
    text: str
    temperature: float
    source: str


def _parse_value(text: str, key: str) -> float:
    text = text.strip()
    try:
        return float(text)  # dimensionless entries
    except ValueError:
        pass
    for dim in ("energy", "voltage", "length"):
        try:
            return parse_quantity(text, dim, source="materials.toml", key=key)
        except InputError:
            continue
    raise InputError(f"cannot read '{text}'", source="materials.toml", key=key)


@functools.cache
def table() -> dict[str, MaterialEntry]:
    """All entries of ``materials.toml`` keyed ``"group.name"`` (loaded once)."""
    raw = tomllib.loads(resources.files("qhdesign.data").joinpath("materials.toml").read_text())
    out: dict[str, MaterialEntry] = {}
    for group, entries in raw.items():
        for name, item in entries.items():
            key = f"{group}.{name}"
            out[key] = MaterialEntry(
                key=key,
                value=_parse_value(item["value"], key),
                text=item["value"],
                temperature=parse_quantity(
                    item["temperature"], "temperature", source="materials.toml", key=key
                ),
                source=item["source"],
            )
    return out


def entry(key: str) -> MaterialEntry:
    """The sourced entry ``key`` (e.g. ``"gaas.gamma_gap"``)."""
    return table()[key]


def _v(key: str) -> float:
    return table()[key].value


def electron_g_factor_gaas() -> float:
    """Conduction-electron Lande g factor of bulk GaAs (dimensionless, negative: -0.44).

    References
    ----------
    M. Oestreich, W. W. Ruehle, Phys. Rev. Lett. 74, 2315 (1995).
    """
    return _v("gaas.g_factor")


def gamma_gap(x: float | np.ndarray) -> float | np.ndarray:
    """Gamma band gap of Al_xGa_{1-x}As at T = 0 (J), VMR alloy rule with x-dependent bowing."""
    x = np.asarray(x, dtype=float)
    c = _v("algaas.gamma_gap_bowing_const") + _v("algaas.gamma_gap_bowing_slope") * x
    eg = (1 - x) * _v("gaas.gamma_gap") + x * _v("alas.gamma_gap") - x * (1 - x) * c
    return eg if eg.ndim else float(eg)


def indirect_gap_min(x: float | np.ndarray) -> float | np.ndarray:
    """Lowest of the X and L gaps of Al_xGa_{1-x}As at T = 0 (J), VMR alloy rule."""
    x = np.asarray(x, dtype=float)
    ex = (1 - x) * _v("gaas.x_gap") + x * _v("alas.x_gap") - x * (1 - x) * _v("algaas.x_gap_bowing")
    el = (1 - x) * _v("gaas.l_gap") + x * _v("alas.l_gap") - x * (1 - x) * _v("algaas.l_gap_bowing")
    out = np.minimum(ex, el)
    return out if out.ndim else float(out)


def conduction_band_offset(
    x: float | np.ndarray, model: str = "vmr", gap_fraction: float | None = None
) -> float | np.ndarray:
    """Gamma conduction-band edge of Al_xGa_{1-x}As relative to GaAs (J).

    Parameters
    ----------
    x
        Al fraction in [0, 1].
    model
        ``"vmr"`` (default) or ``"gap_fraction"`` (see the module docstring).
    gap_fraction
        The fraction f for ``"gap_fraction"``; default 0.65 (common practice).
    """
    x = np.asarray(x, dtype=float)
    deg = np.asarray(gamma_gap(x)) - _v("gaas.gamma_gap")
    if model == "vmr":
        vbo = (1 - x) * _v("gaas.valence_band_offset") + x * _v("alas.valence_band_offset")
        out = deg + (vbo - _v("gaas.valence_band_offset"))
    elif model == "gap_fraction":
        f = _v("algaas.gap_fraction_common") if gap_fraction is None else gap_fraction
        out = f * deg
    else:
        raise InputError(
            f"unknown band-offset model '{model}'; allowed: {', '.join(OFFSET_MODELS)}"
        )
    return out if out.ndim else float(out)


def effective_mass(x: float | np.ndarray) -> float | np.ndarray:
    """Gamma-valley electron mass m*/m0 = 0.067 + 0.083x (Adachi 1985)."""
    x = np.asarray(x, dtype=float)
    out = _v("gaas.electron_mass") + _v("algaas.electron_mass_slope") * x
    return out if out.ndim else float(out)


def permittivity(x: float | np.ndarray) -> float | np.ndarray:
    """Static relative permittivity 12.90 - 2.84x (Adachi 1985)."""
    x = np.asarray(x, dtype=float)
    out = _v("gaas.permittivity") + _v("algaas.permittivity_slope") * x
    return out if out.ndim else float(out)


def hydrogenic_binding_energy(mass_rel: float, permittivity_rel: float) -> float:
    """Effective-mass (hydrogenic) donor binding energy R* = Ry m*/kappa^2 (J)."""
    rydberg_j = sc.physical_constants["Rydberg constant times hc in J"][0]
    return rydberg_j * mass_rel / permittivity_rel**2


def dx_depth(x: float | np.ndarray) -> float | np.ndarray:
    """Depth of the DX level below the Gamma conduction-band edge (J); negative = resonant.

    Linear model through the crossover composition (``algaas.dx_crossover_x``) with slope
    ``algaas.dx_depth_slope``; both are "from memory" defaults that a grower should override
    from their own Hall data (per-layer ``doping.level`` in the stack file).
    """
    x = np.asarray(x, dtype=float)
    out = _v("algaas.dx_depth_slope") * (x - _v("algaas.dx_crossover_x"))
    return out if out.ndim else float(out)
