"""Sweep specification: our own TOML format (docs/sweeps.md), parsed and validated up front.

Every swept path and every value or range end is checked against the base stack before the first
design is evaluated: the path must exist and be numeric, every listed value and both ends of every
range must be accepted by ``Stack.with_value``, and the corners of the space (first/last values of
all parameters together) must give a valid stack. Errors are one line naming the spec file and
the key.
"""

from __future__ import annotations

import hashlib
import json
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from qhdesign.errors import InputError, QHDesignError
from qhdesign.units import DIMENSIONS

from .evaluate import apply_values
from .spaces import (
    GridSpace,
    LatinHypercubeSpace,
    LinkedSpace,
    Range,
    ZipSpace,
    check_equal_lengths,
)
from .tolerance import GrowthMonteCarlo, TolerancePlan

__all__ = ["SPACE_KINDS", "SweepPlan", "build_plan", "load_spec", "parse_criteria"]

SPACE_KINDS = ("grid", "zip", "lhs", "montecarlo")
MAX_STEPS = 100_000
MAX_DESIGNS = 10_000_000
_SWEEP_KEYS = ("name", "stack", "stage", "outputs")
_TOP_KEYS = ("sweep", "options", "space", "criteria")
_TOL_KEYS = (
    "doping_cells",
    "thickness",
    "layer_jitter",
    "al_fraction",
    "al_reference_x",
    "doping",
    "surface_barrier",
)


@dataclass(frozen=True)
class SweepPlan:
    """A validated sweep: base stack, stage, space, outputs and criteria.

    ``space`` yields designs as ``{parameter: value}``; :meth:`values_of` turns one into the
    parameter-path values (SI) applied to the stack.
    """

    name: str
    stage: str
    stack: Any
    space: Any
    kind: str
    options: Mapping[str, Any] = field(default_factory=dict)
    outputs: tuple[str, ...] | None = None
    criteria: Mapping[str, tuple[float, float]] = field(default_factory=dict)
    source: str = "<spec>"
    signature: Mapping[str, Any] = field(default_factory=dict)
    allow_plugins: tuple[str, ...] = ()

    @property
    def parameters(self) -> tuple[str, ...]:
        if self.kind == "montecarlo":
            return self.space.variables
        return tuple(self.space.paths)

    def values_of(self, design: Mapping[str, float]) -> dict[str, float]:
        if self.kind == "montecarlo":
            return self.space.overrides(design)
        return dict(design)

    def __len__(self) -> int:
        return len(self.space)

    def fingerprint(self, columns) -> str:
        doc = {
            "stage": self.stage,
            "options": self.options,
            "stack": self.stack.to_toml(),
            "space": self.signature,
            "columns": list(columns),
        }
        text = json.dumps(doc, sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()


# ------------------------------------------------------------------------ loading
def load_spec(
    path: str | Path, stack_override=None, allow_plugins: tuple[str, ...] = ()
) -> SweepPlan:
    """Read a sweep TOML file and return the validated :class:`SweepPlan`."""
    src = str(path)
    p = Path(path)
    raw = read_spec(p)
    return build_plan(
        raw, source=src, base_dir=p.parent, stack=stack_override, allow_plugins=allow_plugins
    )


#: Largest sweep spec file read (bytes).
MAX_SPEC_BYTES = 1_000_000


def read_spec(path: Path) -> dict:
    """The parsed TOML of a spec file (a regular file of at most 1 MB; a BOM is accepted)."""
    from qhdesign.io import decode_text, read_input_bytes

    src = str(path)
    try:
        text = decode_text(read_input_bytes(path, MAX_SPEC_BYTES, "sweep spec (.toml)"), src)
    except InputError as exc:
        if exc.message == "file not found":
            raise InputError("sweep spec not found", source=src) from None
        raise
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"TOML syntax error: {' '.join(str(exc).split())}", source=src) from None


def build_plan(
    raw: Mapping[str, Any],
    source: str,
    base_dir: Path | None = None,
    stack=None,
    allow_plugins: tuple[str, ...] = (),
):
    """Validate a parsed spec (the TOML document as a dict) into a :class:`SweepPlan`.

    ``allow_plugins``: modules whose plug-in stages the user allowed (``--allow-plugin``); a
    plug-in stage from any other module is refused. Nothing is imported here.
    """

    def err(msg: str, key: str | None = None) -> InputError:
        return InputError(msg, source=source, key=key)

    for k in raw:
        if k not in _TOP_KEYS:
            raise err(f"unknown table; allowed: {', '.join(_TOP_KEYS)}", key=k)
    sweep = _table(raw, "sweep", source, required=True)
    for k in sweep:
        if k not in _SWEEP_KEYS:
            raise err(f"unknown key; allowed: {', '.join(_SWEEP_KEYS)}", key=f"sweep.{k}")
    stage = sweep.get("stage")
    if not isinstance(stage, str) or not stage:
        raise err('missing or not a string; e.g. stage = "capacitor"', key="sweep.stage")
    from .stages import STAGES, TRUSTED_PREFIX, available_stages, check_stage, get_stage

    try:
        # syntax and consent only: a plug-in module is never imported while a spec is checked
        check_stage(stage, tuple(allow_plugins))
        if stage not in STAGES and stage.startswith(TRUSTED_PREFIX):
            get_stage(stage)  # qhdesign's own module: importing it runs nothing new
    except InputError as exc:
        raise err(exc.message, key="sweep.stage") from None
    if stage in STAGES and stage not in available_stages():
        raise err(
            f"stage '{stage}' is not available in this installation yet; available: "
            f"{', '.join(available_stages())}",
            key="sweep.stage",
        )
    if stack is None:
        stack_path = sweep.get("stack")
        if not isinstance(stack_path, str):
            raise err("missing: path of the base stack file", key="sweep.stack")
        sp = Path(stack_path)
        if not sp.is_absolute() and base_dir is not None:
            sp = base_dir / sp
        from qhdesign.stack import load_stack

        try:
            stack = load_stack(sp)
        except InputError as exc:
            # the spec names the stack: say so, then the stack file's own one-line error
            raise err(exc.one_line(), key="sweep.stack") from None
    outputs = sweep.get("outputs")
    if outputs is not None:
        if not (isinstance(outputs, list) and outputs and all(isinstance(o, str) for o in outputs)):
            raise err("must be a non-empty list of column names", key="sweep.outputs")
        outputs = tuple(outputs)
    options = _table(raw, "options", source)
    space_tab = _table(raw, "space", source, required=True)
    kind = space_tab.get("kind")
    if kind not in SPACE_KINDS:
        raise err(f"got {kind!r}; allowed: {', '.join(SPACE_KINDS)}", key="space.kind")
    from .stage_options import OptionAwareStack

    # stage options swept as "options.<name>" are checked by the option-aware view of the stack
    vstack = OptionAwareStack(stack, stage)
    space, signature = _build_space(kind, space_tab, vstack, source)
    if len(space) == 0:
        raise err("the space has no designs", key="space")
    if len(space) > MAX_DESIGNS:
        raise err(f"{len(space)} designs; at most {MAX_DESIGNS} per sweep", key="space")
    criteria = parse_criteria(_table(raw, "criteria", source), source)
    plan = SweepPlan(
        name=str(sweep.get("name", Path(source).stem)),
        stage=stage,
        stack=stack,
        space=space,
        kind=kind,
        options=dict(options),
        outputs=outputs,
        criteria=criteria,
        source=source,
        signature=signature,
        allow_plugins=tuple(allow_plugins),
    )
    _check_corners(plan, source, vstack)
    return plan


def _table(raw: Mapping, key: str, source: str, required: bool = False) -> dict:
    tab = raw.get(key)
    if tab is None:
        if required:
            raise InputError("missing table", source=source, key=key)
        return {}
    if not isinstance(tab, dict):
        raise InputError("must be a table", source=source, key=key)
    return tab


def parse_criteria(tab: Mapping[str, Any], source: str) -> dict[str, tuple[float, float]]:
    """``{column: {min = a, max = b}}`` -> ``{column: (a, b)}`` (missing ends are infinite)."""
    out = {}
    for col, c in tab.items():
        key = f"criteria.{col}"
        if not isinstance(c, dict) or not c or any(k not in ("min", "max") for k in c):
            raise InputError(
                "must be a table with min and/or max, e.g. { min = 1.5e11 }", source=source, key=key
            )
        lo, hi = c.get("min", -math.inf), c.get("max", math.inf)
        for v in (lo, hi):
            if isinstance(v, bool) or not isinstance(v, int | float) or math.isnan(v):
                raise InputError(
                    f"bound {v!r} is not a number (in the column's unit)", source=source, key=key
                )
        if lo > hi:
            raise InputError(f"min {lo} exceeds max {hi}", source=source, key=key)
        out[col] = (float(lo), float(hi))
    return out


# ------------------------------------------------------------------------ spaces
def _pkey(path: str) -> str:
    return f'space.parameters."{path}"'


def _si(stack, path: str, value: Any, source: str, *, from_user: bool = True) -> float:
    """SI value of ``value`` at ``path``, validated by the stack.

    A value the user wrote must carry its unit when the parameter is a quantity (as in the stack
    file): a bare 1.8e12 for a sheet density would otherwise be read as 1.8e12 m^-2. Values the
    sweep computes itself (``from_user=False``) are SI floats.
    """
    if isinstance(value, bool) or not isinstance(value, str | int | float):
        raise InputError(
            f"value {value!r} must be a number or a string with a unit",
            source=source,
            key=_pkey(path),
        )
    if from_user and not isinstance(value, str):
        kind = stack.kind_of(path)
        if kind in DIMENSIONS:
            _, _, example = DIMENSIONS[kind]
            raise InputError(
                f"value {value!r} has no unit; write it as in the stack file, with its unit "
                f'(a {kind.replace("_", " ")}, e.g. "{example}")',
                source=source,
                key=_pkey(path),
            )
    try:
        got = stack.with_value(path, value).get(path)
    except QHDesignError as exc:
        raise InputError(
            f"value {value!r} rejected: {_msg(exc)}", source=source, key=_pkey(path)
        ) from None
    if isinstance(got, bool) or not isinstance(got, int | float):
        raise InputError(
            f"not a numeric parameter (its value is {got!r}); only numbers can be swept",
            source=source,
            key=_pkey(path),
        )
    return float(got)


def _msg(exc: QHDesignError) -> str:
    return getattr(exc, "message", None) or str(exc)


def _check_path(stack, path: str, source: str) -> None:
    if not isinstance(path, str):
        raise InputError("parameter paths must be strings", source=source, key="space.parameters")
    try:
        cur = stack.get(path)
    except QHDesignError as exc:
        raise InputError(_msg(exc), source=source, key=_pkey(path)) from None
    if isinstance(cur, bool) or not isinstance(cur, int | float):
        raise InputError(
            f"not a numeric parameter (its value is {cur!r}); only numbers can be swept",
            source=source,
            key=_pkey(path),
        )


def _int(tab: Mapping, key: str, where: str, source: str, lo: int, hi: int) -> int:
    v = tab.get(key)
    if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
        raise InputError(
            f"must be an integer from {lo} to {hi}, got {v!r}", source=source, key=f"{where}.{key}"
        )
    return v


def _range(stack, path: str, spec: Mapping, source: str, *, steps_allowed: bool) -> tuple:
    allowed = ("from", "to", "steps", "scale") if steps_allowed else ("from", "to", "scale")
    for k in spec:
        if k not in allowed:
            raise InputError(
                f"unknown key '{k}'; allowed: {', '.join(allowed)}", source=source, key=_pkey(path)
            )
    if "from" not in spec or "to" not in spec:
        raise InputError("a range needs 'from' and 'to'", source=source, key=_pkey(path))
    lo = _si(stack, path, spec["from"], source)
    hi = _si(stack, path, spec["to"], source)
    if lo == hi:
        raise InputError(
            f"the range ends are equal ({spec['from']!r} and {spec['to']!r}); give two different "
            "ends, or a one-value list to fix the parameter",
            source=source,
            key=_pkey(path),
        )
    scale = spec.get("scale", "linear")
    if scale not in ("linear", "log"):
        raise InputError(f"scale {scale!r}; allowed: linear, log", source=source, key=_pkey(path))
    if scale == "log" and (lo <= 0 or hi <= 0):
        raise InputError("a log range needs both ends > 0", source=source, key=_pkey(path))
    r = Range(path, lo, hi, scale)
    if not steps_allowed:
        return r, None
    if "steps" not in spec:
        raise InputError(
            "a range needs 'steps' (number of values, ends included)",
            source=source,
            key=_pkey(path),
        )
    steps = spec["steps"]
    if isinstance(steps, bool) or not isinstance(steps, int) or not 1 <= steps <= MAX_STEPS:
        raise InputError(
            f"steps must be an integer from 1 to {MAX_STEPS}, got {steps!r}",
            source=source,
            key=_pkey(path),
        )
    return r, steps


def _values(stack, path: str, spec: Any, source: str) -> tuple[float, ...]:
    if isinstance(spec, list):
        if not spec:
            raise InputError("empty list of values", source=source, key=_pkey(path))
        return tuple(_si(stack, path, v, source) for v in spec)
    if isinstance(spec, dict):
        r, steps = _range(stack, path, spec, source, steps_allowed=True)
        vals = r.points(steps)
        # the ends are valid and every scalar limit is an interval, so the interior is valid
        # too; check an evenly spread sample of it anyway (at most 50 points: a 10^5-step
        # range must not spend minutes here before its design count is even looked at)
        inner = vals[1:-1]
        for v in inner[:: max(1, len(inner) // 50)]:
            _si(stack, path, v, source, from_user=False)
        return vals
    raise InputError(
        "expected a list of values or a table {from, to, steps}", source=source, key=_pkey(path)
    )


#: Joins linked parameter paths in one key: ``"layers.a.thickness+layers.b.thickness"``.
LINK = "+"


def _split_links(params: Mapping, stack, source: str):
    """Keys naming several paths joined by '+' (one value sets all of them): the leader (first
    path) keeps the values; the others follow. Each path must accept the same values."""
    out: dict = {}
    links: list[tuple[str, tuple[str, ...]]] = []
    for key, spec in params.items():
        if not isinstance(key, str) or LINK not in key:
            out[key] = spec
            continue
        paths = [p.strip() for p in key.split(LINK)]
        if any(not p for p in paths) or len(set(paths)) != len(paths):
            raise InputError(
                "a linked parameter joins distinct paths with '+', e.g. "
                '"layers.setback_upper.thickness+layers.setback_lower.thickness"',
                source=source,
                key=_pkey(key),
            )
        for p in paths:
            _check_path(stack, p, source)
        if isinstance(spec, dict) and "steps" not in spec:  # a Latin-hypercube range
            ref = _range(stack, paths[0], spec, source, steps_allowed=False)[0]
            for p in paths[1:]:
                r = _range(stack, p, spec, source, steps_allowed=False)[0]
                if (r.low, r.high) != (ref.low, ref.high):
                    raise InputError(
                        f"'{p}' does not take the same values as '{paths[0]}'",
                        source=source,
                        key=_pkey(key),
                    )
        else:
            ref = _values(stack, paths[0], spec, source)
            for p in paths[1:]:
                if _values(stack, p, spec, source) != ref:
                    raise InputError(
                        f"'{p}' does not take the same values as '{paths[0]}'",
                        source=source,
                        key=_pkey(key),
                    )
        if paths[0] in out or any(p in params for p in paths):
            raise InputError("a path appears twice in the space", source=source, key=_pkey(key))
        out[paths[0]] = spec
        links.append((paths[0], tuple(paths[1:])))
    followers = [f for _, fs in links for f in fs]
    if len(set(followers) | set(out)) != len(followers) + len(out):
        raise InputError("a path appears twice in the space", source=source, key="space.parameters")
    return out, tuple(links)


def _build_space(kind: str, tab: Mapping, stack, source: str):
    space, sig, links = _build_space_inner(kind, tab, stack, source)
    if links:
        sig = {**sig, "links": [[lead, list(fs)] for lead, fs in links]}
        space = LinkedSpace(space, links)
    return space, sig


def _build_space_inner(kind: str, tab: Mapping, stack, source: str):
    allowed = {
        "grid": ("kind", "parameters"),
        "zip": ("kind", "parameters"),
        "lhs": ("kind", "parameters", "samples", "seed"),
        "montecarlo": ("kind", "samples", "seed", "tolerance"),
    }[kind]
    for k in tab:
        if k not in allowed:
            raise InputError(
                f'not used by kind = "{kind}"; allowed: {", ".join(allowed)}',
                source=source,
                key=f"space.{k}",
            )
    if kind == "montecarlo":
        samples = _int(tab, "samples", "space", source, 1, MAX_DESIGNS)
        seed = _int(tab, "seed", "space", source, 0, 2**63 - 1)
        tol = tab.get("tolerance", {})
        plan = parse_tolerance(tol, source)
        cells = tol.get("doping_cells", {}) if isinstance(tol, dict) else {}
        if not isinstance(cells, dict):
            raise InputError(
                'must be a table {layer = "cell"}',
                source=source,
                key="space.tolerance.doping_cells",
            )
        try:
            base = getattr(stack, "stack", stack)  # the real stack under an OptionAwareStack
            space = GrowthMonteCarlo.from_stack(base, plan, samples, seed, cells)
        except InputError as exc:
            raise InputError(exc.message, source=source, key=f"space.{exc.key}") from None
        sig = {
            "kind": kind,
            "samples": samples,
            "seed": seed,
            "tolerance": plan.__dict__,
            "doping_cells": cells,
        }
        return space, sig, ()
    params = tab.get("parameters")
    if not isinstance(params, dict) or not params:
        raise InputError(
            'needs at least one parameter: "path" = values or range',
            source=source,
            key="space.parameters",
        )
    params, links = _split_links(params, stack, source)
    for path in params:
        _check_path(stack, path, source)
    # one spelling per parameter: two spellings of one parameter would write two columns, and
    # the rows would follow only one of them (mislabelled rows); linked followers count too
    canonical: dict[str, str] = {}
    followers = [f for _, fs in links for f in fs]
    for path in [*params, *followers]:
        canon = stack.canonical_path(path)
        if canon in canonical:
            raise InputError(
                f"names the same parameter as '{canonical[canon]}' (both are '{canon}'); "
                "sweep each parameter once",
                source=source,
                key=_pkey(path),
            )
        canonical[canon] = path
    paths = tuple(params)  # as the user wrote them (for error messages)
    canon_paths = tuple(stack.canonical_path(p) for p in paths)  # space and CSV: one spelling
    links = tuple(
        (stack.canonical_path(lead), tuple(stack.canonical_path(f) for f in fs))
        for lead, fs in links
    )
    if kind == "lhs":
        samples = _int(tab, "samples", "space", source, 1, MAX_DESIGNS)
        seed = _int(tab, "seed", "space", source, 0, 2**63 - 1)
        ranges = []
        for path, spec in params.items():
            if not isinstance(spec, dict):
                raise InputError(
                    "Latin hypercube needs a range table {from, to}", source=source, key=_pkey(path)
                )
            r = _range(stack, path, spec, source, steps_allowed=False)[0]
            ranges.append(Range(stack.canonical_path(path), r.low, r.high, r.scale))
        sig = {
            "kind": kind,
            "samples": samples,
            "seed": seed,
            "ranges": [(r.path, r.low, r.high, r.scale) for r in ranges],
        }
        space = LatinHypercubeSpace(tuple(ranges), samples, seed)
        repeats = space.repeated_designs()
        if repeats:
            raise InputError(
                f"{repeats} of the {samples} samples repeat another design exactly (the ranges "
                "are too narrow for this many samples); widen a range or take fewer samples",
                source=source,
                key="space.samples",
            )
        return space, sig, links
    if kind == "grid":
        # refuse an oversized grid before any value is built or checked
        total = 1
        for spec in params.values():
            n = spec.get("steps") if isinstance(spec, dict) else len(spec)
            if isinstance(n, int) and not isinstance(n, bool) and n > 0:
                total *= n
        if total > MAX_DESIGNS:
            raise InputError(
                f"{total} designs; at most {MAX_DESIGNS} per sweep",
                source=source,
                key="space.parameters",
            )
    values = tuple(_values(stack, p, params[p], source) for p in paths)
    if kind == "zip":
        msg = check_equal_lengths(paths, values)
        if msg:
            bad = next(p for p, v in zip(paths, values, strict=True) if len(v) != len(values[0]))
            raise InputError(msg, source=source, key=_pkey(bad))
        space = ZipSpace(canon_paths, values)
    else:
        space = GridSpace(canon_paths, values)
    for p, v in zip(paths, values, strict=True):
        if len(set(v)) != len(v) and kind == "grid":
            raise InputError(
                "repeated values (each design must be distinct)", source=source, key=_pkey(p)
            )
    if kind == "zip" and len(set(zip(*values, strict=True))) != len(space):
        raise InputError(
            "two zipped designs are identical (each design must be distinct)",
            source=source,
            key="space.parameters",
        )
    sig = {"kind": kind, "paths": list(canon_paths), "values": [list(v) for v in values]}
    return space, sig, links


def _fraction(v: Any, key: str, source: str) -> float:
    """A relative tolerance: a percentage string ("1.5 %").

    A bare number is refused: ``thickness = 5`` could mean 5 % or 500 % (it used to be read as
    the fraction 5, i.e. 500 %).
    """
    from qhdesign.units import parse_number, shorten

    if isinstance(v, str) and v.strip().endswith("%"):
        try:
            return parse_number(v.strip()[:-1].strip()) / 100.0
        except InputError:
            pass
    if isinstance(v, int | float) and not isinstance(v, bool):
        raise InputError(
            f'{v!r} has no unit: write a relative tolerance as a percentage, e.g. "{v} %" or '
            f'"{100 * v:g} %"',
            source=source,
            key=key,
        )
    raise InputError(
        f'expected a percentage like "1.5 %", got {shorten(v)!r}', source=source, key=key
    )


def parse_tolerance(tab: Any, source: str) -> TolerancePlan:
    """``[space.tolerance]`` -> :class:`TolerancePlan` (missing keys keep the defaults)."""
    if not isinstance(tab, dict):
        raise InputError("must be a table", source=source, key="space.tolerance")
    kw: dict[str, float] = {}
    for k, v in tab.items():
        key = f"space.tolerance.{k}"
        if k == "doping_cells":
            continue  # layer -> cell map, used by GrowthMonteCarlo.from_stack
        if k not in _TOL_KEYS:
            raise InputError(
                f"unknown tolerance; allowed: {', '.join(_TOL_KEYS)}", source=source, key=key
            )
        if k == "surface_barrier":
            from qhdesign.units import parse_quantity

            kw[k] = parse_quantity(v, "energy", source=source, key=key)
        elif k in ("al_fraction", "al_reference_x"):
            if isinstance(v, bool) or not isinstance(v, int | float):
                raise InputError(
                    f"expected a number (absolute Al fraction), got {v!r}", source=source, key=key
                )
            kw[k] = float(v)
        else:
            kw[k] = _fraction(v, key, source)
    try:
        return TolerancePlan(**kw)
    except InputError as exc:
        raise InputError(
            exc.message,
            source=source,
            key=(exc.key or "").replace("tolerance.", "space.tolerance."),
        ) from None


def _check_corners(plan: SweepPlan, source: str, vstack=None) -> None:
    """Every corner of the space must give a valid stack (joint check of the range ends)."""
    for corner in plan.space.corners():
        values = plan.values_of(corner)
        try:
            apply_values(vstack if vstack is not None else plan.stack, values)
        except QHDesignError as exc:
            key = getattr(exc, "key", None)
            shown = ", ".join(
                f"{k}={v:.4g}" for k, v in corner.items() if plan.kind != "montecarlo" or k == key
            )
            raise InputError(
                f"the corner of the space ({shown}) gives an invalid stack: {_msg(exc)}",
                source=source,
                key=_pkey(key) if key else "space",
            ) from None
