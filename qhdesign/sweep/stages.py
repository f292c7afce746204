"""Stage registry: the evaluation step of a sweep, ``stage(stack, **options) -> dict``.

A stage takes a validated :class:`~qhdesign.stack.Stack` and its options and returns a flat
``dict[str, float | str]`` whose keys are CSV column names with units (``primary_density_cm^-2``).
Stage modules are imported only when a stage is first used, in the process that evaluates it.

Built-in names: ``capacitor`` (closed-form lever arms, always available), ``bands`` and ``gate``
(1D Schrödinger–Poisson, :mod:`qhdesign.sp1d`), ``edge`` and ``island`` (the FEM stages
:mod:`qhdesign.section` and :mod:`qhdesign.island`, reached through :mod:`qhdesign.pipeline`).
Any other stage plugs in as ``"package.module:function"``.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any

from qhdesign.errors import InputError

__all__ = ["STAGES", "get_stage", "stage_names"]

StageFunc = Callable[..., dict[str, Any]]


def _capacitor(stack, **options):
    from .capacitor import capacitor_stage

    return capacitor_stage(stack, **options)


def _import(module: str, attr: str, stage: str) -> Callable[..., Any]:
    try:
        mod = importlib.import_module(module)
        return getattr(mod, attr)
    except (ImportError, AttributeError):
        raise InputError(
            f"stage '{stage}' needs {module}.{attr}, which this installation does not have yet; "
            f"available: {', '.join(available_stages())}",
            key="stage",
        ) from None


def _summary(result) -> dict[str, Any]:
    return {k: (float(v) if isinstance(v, int | float) else v) for k, v in result.summary().items()}


def _quantity(value: Any, dimension: str, key: str) -> float:
    """A spec option value: a string with a unit, or a number already in SI units."""
    from qhdesign.units import parse_quantity

    if isinstance(value, str):
        return parse_quantity(value, dimension, key=f"options.{key}")
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise InputError(f"expected a quantity with a unit, got {value!r}", key=f"options.{key}")
    return float(value)


def _bands_options(options: dict[str, Any], stage: str):
    """Split spec options into solver keywords and a ``BandsOptions`` (SI-suffixed fields)."""
    import dataclasses

    from qhdesign.sp1d import BandsOptions

    fields = {f.name for f in dataclasses.fields(BandsOptions)} - {"solve", "grid"}
    kw: dict[str, Any] = {}
    bo: dict[str, Any] = {}
    for key, value in options.items():
        if key == "temperature":
            kw[key] = _quantity(value, "temperature", key)
        elif key == "gate_voltage" and stage == "bands":
            kw[key] = _quantity(value, "voltage", key)
        elif key == "cool_bias" and stage == "gate":
            kw[key] = _quantity(value, "voltage", key)
        elif key in fields:
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise InputError(
                    f"expected a number in SI units, got {value!r}", key=f"options.{key}"
                )
            bo[key] = float(value)
        else:
            own = ["temperature", "gate_voltage" if stage == "bands" else "cool_bias"]
            own += ["disorder", *_DISORDER_KEYS] if stage == "bands" else []
            raise InputError(
                f"unknown option of stage '{stage}'; allowed: {', '.join(own + sorted(fields))}",
                key=f"options.{key}",
            )
    if bo:
        kw["options"] = BandsOptions(**bo)
    return kw


#: Options of the ``bands`` stage that switch on the disorder estimate (spec value with unit
#: -> ScatteringOptions field); ``disorder = true`` switches it on with the defaults.
_DISORDER_KEYS = {
    "background": ("volume_density", "background_m3"),
    "roughness_height": ("length", "roughness_height_m"),
    "roughness_length": ("length", "roughness_length_m"),
    "min_mobility": ("mobility", "min_mobility_m2_Vs"),
}


def _bands(stack, **options):
    fn = _import("qhdesign.sp1d", "solve_bands", "bands")
    dis = {k: options.pop(k) for k in list(options) if k in _DISORDER_KEYS}
    on = options.pop("disorder", False)
    if not isinstance(on, bool):
        raise InputError("expected true or false", key="options.disorder")
    result = fn(stack, **_bands_options(options, "bands"))
    out = _summary(result)
    if on or dis:
        from qhdesign.sp1d.scattering import ScatteringOptions, scattering

        kw = {_DISORDER_KEYS[k][1]: _quantity(v, _DISORDER_KEYS[k][0], k) for k, v in dis.items()}
        try:
            sopts = ScatteringOptions(**kw)
        except InputError as exc:
            raise InputError(exc.message, key=f"options.{exc.key}") from None
        out.update(scattering(result, sopts).summary())
    return out


def _gate(stack, v_from=None, v_to=None, step=None, **options):
    fn = _import("qhdesign.sp1d", "gate_response", "gate")
    volts = []
    for name, v in (("v_from", v_from), ("v_to", v_to), ("step", step)):
        if v is None:
            raise InputError("the gate stage needs v_from, v_to and step", key=f"options.{name}")
        volts.append(_quantity(v, "voltage", name))
    return _summary(fn(stack, *volts, **_bands_options(options, "gate")))


def _edge(stack, gate_voltage=None, field=None, filling=None, gap_energy=None, perimeter=None):
    """2D edge cross-section: 1D solve -> sheets -> DOLFINx Thomas-Fermi, one process per design."""
    solve_edge = _import("qhdesign.section", "solve_edge", "edge")
    # Each design is one serial 2D solve: COMM_SELF, never the world of an MPI sweep (whose
    # other ranks are busy with their own designs). The 2D stage has loaded mpi4py already.
    from mpi4py import MPI

    from qhdesign.pipeline import section_from_stack
    from qhdesign.section import EdgeSettings

    if gate_voltage is None:
        raise InputError("the edge stage needs gate_voltage", key="options.gate_voltage")
    settings = EdgeSettings(
        gate_voltage_V=_quantity(gate_voltage, "voltage", "gate_voltage"),
        field_T=None if field is None else _quantity(field, "field", "field"),
        filling=None if filling is None else float(filling),
        gap_energy_J=None if gap_energy is None else _quantity(gap_energy, "energy", "gap_energy"),
        perimeter_m=None if perimeter is None else _quantity(perimeter, "length", "perimeter"),
    )
    return _summary(solve_edge(section_from_stack(stack), settings, comm=MPI.COMM_SELF))


def _island(stack, **options):
    """Island capacitances plus the interferometer figures (``interferometer.*`` columns)."""
    _import("qhdesign.pipeline", "solve_island", "island")
    from mpi4py import MPI  # one serial solve per design, as in _edge

    from qhdesign.island_figures import figure_columns, island_figures, split_island_options

    cond, island_opts, gate_voltage = split_island_options(options, source_prefix="options.")
    if gate_voltage is not None:
        from qhdesign.island_figures import conditions_from_edge

        cond = conditions_from_edge(stack, cond, gate_voltage, comm=MPI.COMM_SELF)
    fig = island_figures(stack, cond, comm=MPI.COMM_SELF, keep_result=True, **island_opts)
    res = fig.pop("_result")
    return {**_summary(res), **figure_columns(fig)}


#: Built-in stages: name -> (callable, one-line description).
STAGES: dict[str, tuple[StageFunc, str]] = {
    "capacitor": (_capacitor, "closed-form capacitor-ladder lever arms and depletion voltages"),
    "bands": (_bands, "1D Schrödinger–Poisson at zero bias (per-well densities, subbands)"),
    "gate": (_gate, "1D gate-voltage sweep (dn/dV per well, depletion thresholds)"),
    "edge": (_edge, "2D Thomas–Fermi edge cross-section"),
    "island": (_island, "2D axisymmetric island capacitances (K_I, K_L, K_IL)"),
}

_PROBES = {
    "bands": ("qhdesign.sp1d", "solve_bands"),
    "gate": ("qhdesign.sp1d", "gate_response"),
    "edge": ("qhdesign.section", "solve_edge"),
    "island": ("qhdesign.pipeline", "solve_island"),
}


def stage_names() -> tuple[str, ...]:
    return tuple(STAGES)


def available_stages() -> list[str]:
    """Built-in stages whose implementation is importable now."""
    out = []
    for name in STAGES:
        if name in _PROBES:
            mod, attr = _PROBES[name]
            try:
                if not hasattr(importlib.import_module(mod), attr):
                    continue
            except ImportError:
                continue
        out.append(name)
    return out


_CACHE: dict[str, StageFunc] = {}


def get_stage(name: str) -> StageFunc:
    """The callable of stage ``name`` (a built-in name or ``"module:function"``).

    Raises
    ------
    InputError
        Unknown name, or a plug-in reference that does not import.
    """
    if name in _CACHE:
        return _CACHE[name]
    if name in STAGES:
        fn = STAGES[name][0]
    elif ":" in name:
        mod, _, attr = name.partition(":")
        try:
            fn = getattr(importlib.import_module(mod), attr)
        except (ImportError, AttributeError, ValueError):
            raise InputError(
                f"cannot import plug-in stage '{name}' (expected 'package.module:function')",
                key="stage",
            ) from None
        if not callable(fn):
            raise InputError(f"'{name}' is not callable", key="stage")
    else:
        raise InputError(
            f"unknown stage '{name}'; allowed: {', '.join(STAGES)} or 'package.module:function'",
            key="stage",
        )
    _CACHE[name] = fn
    return fn
