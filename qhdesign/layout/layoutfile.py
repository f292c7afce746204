"""Layout files: gate polygons in the surface plane, an island generator, and their checks.

The format is documented in ``docs/layout-format.md``. Validation happens here, once, at load:
every error is a one-line :class:`~qhdesign.errors.InputError` naming the layout file and the key
(``gates[2].vertices``, ``island.gap``). Pure Python + numpy: no DOLFINx or gmsh.
"""

from __future__ import annotations

import difflib
import math
import os
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError
from qhdesign.units import parse_quantity

from . import polygons as pg
from .generators import IslandSpec, island_gates

__all__ = [
    "MIN_CONSTRICTION_CELLS",
    "Constriction",
    "Gate",
    "Layout",
    "check_voltage",
    "load_layout",
    "loads_layout",
]

#: A constriction needs at least this many elements of size ``mesh.gate_edge`` across its gap to
#: resolve the saddle of the potential (common practice: a P1 saddle needs a few cells).
MIN_CONSTRICTION_CELLS = 4
#: Lowest gate voltage accepted (V), as for the 1D and 2D stages.
MIN_GATE_VOLTAGE_V = -20.0
MAX_FILE_BYTES = 4_000_000
MAX_VERTICES = 2000

_TOP = ("layout", "mesh", "gates", "island", "constrictions")
_LAYOUT_KEYS = ("name", "notes", "stack", "domain_x", "domain_y")
_MESH_KEYS = ("gate_edge", "far", "edge_normal", "edge_band", "sheet_level", "strip_chord")
_GATE_KEYS = ("name", "vertices", "voltage", "dielectric_thickness", "dielectric_permittivity")
#: Allowed gate dielectric (as the stack file's surface.dielectric_*): thickness in m, relative
#: permittivity.
DIELECTRIC_THICKNESS_RANGE_M = (0.0, 10e-6)
DIELECTRIC_PERMITTIVITY_RANGE = (1.0, 100.0)
_CONSTRICTION_KEYS = ("name", "path")
_ISLAND_KEYS = (
    "name",
    "shape",
    "radius",
    "width",
    "height",
    "gap",
    "wall",
    "spacing",
    "plunger_width",
    "plungers",
    "wall_voltage",
    "plunger_voltage",
    "seed",
    "plunger_gates",
)


@dataclass(frozen=True, eq=False)
class Gate:
    """A metal gate on the semiconductor surface.

    Attributes
    ----------
    name
        Unique name.
    vertices_m
        Counter-clockwise polygon, shape (N, 2), metres.
    voltage_V
        Gate voltage (V) relative to the grounded 2DEG.
    role
        ``"gate"`` (drawn), ``"wall"`` or ``"plunger"`` (generated or listed as a plunger).
    key
        Where it came from in the file (``gates[1]`` or ``island``), for messages.
    dielectric_thickness_m, dielectric_permittivity
        The gate's own dielectric between metal and semiconductor (m; relative permittivity);
        None: the stack's (``surface.dielectric_*``). A thickness of 0 puts this gate's metal on
        the semiconductor.
    """

    name: str
    vertices_m: np.ndarray
    voltage_V: float
    role: str = "gate"
    key: str = ""
    dielectric_thickness_m: float | None = None
    dielectric_permittivity: float | None = None


@dataclass(frozen=True)
class Constriction:
    """A constriction the electrons pass through between the island and a lead.

    ``path_m`` is the transport path through it, ((x0, y0), (x1, y1)) from the island side to the
    lead side; its state (open or pinched) is read from the density along this segment, and the
    line across the path at its midpoint closes the island. ``gap_m`` is the lithographic gap
    (NaN when drawn by hand: then the distance between gates is checked instead).
    """

    name: str
    path_m: tuple[tuple[float, float], tuple[float, float]]
    gap_m: float = float("nan")


@dataclass(frozen=True, eq=False)
class Layout:
    """A validated gate layout (SI units).

    Attributes
    ----------
    name, notes, source
        Name, free text, and the file it came from.
    stack_path
        The stack file the layout was drawn for, resolved relative to the layout file.
    domain_m
        ((x_min, x_max), (y_min, y_max)) of the modelled surface (m).
    gate_edge_m, far_m
        Mesh element size at gate edges and in constrictions, and far from them (m).
    edge_normal_m, edge_band_m
        Optional anisotropic band along the gate edges: element size across the edges and the
        band's half width (m); None: an isotropic mesh (band: the primary well's depth).
    sheet_level_m
        Level spacing at every well sheet (m); None: the 3D stage's default (3 nm).
    strip_chord_m
        Curvature-adapted node rows along the island's strip: the largest inward shift (m) of the
        area-equivalent boundary that the chords between row nodes may cause; None: rows
        ``gate_edge`` apart (docs/layout3d.md).
    gates
        All gates (drawn and generated).
    constrictions
        The constrictions that connect the island to its leads.
    seed_m
        A point inside the island, or None if the layout defines no island.
    island
        The generator's parameters, when the island was generated.
    """

    name: str
    notes: str
    source: str
    stack_path: Path
    domain_m: tuple[tuple[float, float], tuple[float, float]]
    gate_edge_m: float
    far_m: float
    gates: tuple[Gate, ...]
    constrictions: tuple[Constriction, ...] = ()
    seed_m: tuple[float, float] | None = None
    island: IslandSpec | None = None
    edge_normal_m: float | None = None
    edge_band_m: float | None = None
    sheet_level_m: float | None = None
    strip_chord_m: float | None = None

    def gate(self, name: str) -> Gate:
        for g in self.gates:
            if g.name == name:
                return g
        raise InputError(
            f"no gate '{name}'; gates: {', '.join(g.name for g in self.gates)}",
            source=self.source,
        )

    @property
    def plungers(self) -> tuple[str, ...]:
        """Names of the plunger gates."""
        return tuple(g.name for g in self.gates if g.role == "plunger")

    def with_voltages(self, volts: dict[str, float]) -> Layout:
        """A copy with some gate voltages changed (V); unknown names are refused."""
        for n in volts:
            self.gate(n)
        gates = tuple(
            replace(g, voltage_V=float(volts[g.name])) if g.name in volts else g for g in self.gates
        )
        return replace(self, gates=gates)

    def to_dict(self) -> dict:
        """JSON-ready description (SI units in the keys)."""
        return {
            "name": self.name,
            "source": self.source,
            "stack_file": str(self.stack_path),
            "domain_m": [list(self.domain_m[0]), list(self.domain_m[1])],
            "gate_edge_m": self.gate_edge_m,
            "far_m": self.far_m,
            "edge_normal_m": self.edge_normal_m,
            "edge_band_m": self.edge_band_m,
            "sheet_level_m": self.sheet_level_m,
            "strip_chord_m": self.strip_chord_m,
            "gates": [
                {
                    "name": g.name,
                    "role": g.role,
                    "voltage_V": g.voltage_V,
                    "vertices_m": g.vertices_m.tolist(),
                    "dielectric_thickness_m": g.dielectric_thickness_m,
                    "dielectric_permittivity": g.dielectric_permittivity,
                }
                for g in self.gates
            ],
            "constrictions": [
                {"name": c.name, "path_m": [list(p) for p in c.path_m], "gap_m": c.gap_m}
                for c in self.constrictions
            ],
            "seed_m": None if self.seed_m is None else list(self.seed_m),
        }


# ============================================================================ loading
def load_layout(path: str | os.PathLike, stack=None) -> Layout:
    """Read and validate a layout file.

    Parameters
    ----------
    path
        The layout TOML file.
    stack
        The :class:`~qhdesign.stack.Stack` the gate voltages are checked against (its
        ``surface.barrier``). Default: the stack file named by ``layout.stack``.

    Raises
    ------
    InputError
        One line naming the file, the key and what is allowed.
    """
    src = str(path)
    p = Path(path)
    if not p.exists():
        raise InputError("file not found", source=src)
    if p.is_dir():
        raise InputError("is a folder, expected a .toml layout file", source=src)
    if p.stat().st_size > MAX_FILE_BYTES:
        raise InputError(f"file is larger than {MAX_FILE_BYTES / 1e6:.0f} MB", source=src)
    return loads_layout(p.read_bytes(), source=src, base=p.parent, stack=stack)


def loads_layout(data: bytes | str, source: str = "<string>", base=None, stack=None) -> Layout:
    """Parse and validate layout text; ``base`` is the folder ``layout.stack`` is relative to."""
    if isinstance(data, bytes):
        if b"\x00" in data:
            raise InputError("binary file (NUL bytes); expected TOML text", source=source)
        try:
            data = data.decode("utf-8")
        except UnicodeDecodeError:
            raise InputError("not UTF-8 text; expected a TOML layout", source=source) from None
    try:
        raw = tomllib.loads(data)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"TOML syntax error: {exc}", source=source) from None
    return _build(raw, source, Path(base) if base is not None else Path("."), stack)


# ============================================================================ readers
def _err(msg: str, src: str, key: str) -> InputError:
    return InputError(msg, source=src, key=key)


def _keys(tab: Any, allowed: tuple, required: tuple, where: str, src: str) -> dict:
    if not isinstance(tab, dict):
        raise _err(f"expected a table, got {type(tab).__name__}", src, where)
    for k in tab:
        if k not in allowed:
            close = difflib.get_close_matches(k, allowed, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise _err(f"unknown key{hint}; allowed: {', '.join(allowed)}", src, f"{where}.{k}")
    for k in required:
        if k not in tab:
            raise _err("missing required key", src, f"{where}.{k}")
    return tab


def _text(tab: dict, k: str, where: str, src: str, default: str | None = None) -> str:
    if k not in tab:
        if default is None:
            raise _err("missing required key", src, f"{where}.{k}")
        return default
    v = tab[k]
    if not isinstance(v, str) or not v.strip():
        raise _err(f"expected non-empty text, got {v!r}", src, f"{where}.{k}")
    return v


def _qty(tab: dict, k: str, dim: str, where: str, src: str, default: float | None = None) -> float:
    if k not in tab:
        if default is None:
            raise _err("missing required key", src, f"{where}.{k}")
        return default
    return parse_quantity(tab[k], dim, source=src, key=f"{where}.{k}")


def _positive(v: float, where: str, src: str, unit=("nm", 1e-9)) -> float:
    if not v > 0:
        raise _err(f"must be > 0, got {v / unit[1]:g} {unit[0]}", src, where)
    return v


def _point(v: Any, key: str, src: str) -> tuple[float, float]:
    if not isinstance(v, list) or len(v) != 2:
        raise _err(f'expected a point ["x with unit", "y with unit"], got {v!r}', src, key)
    return (
        parse_quantity(v[0], "length", source=src, key=key),
        parse_quantity(v[1], "length", source=src, key=key),
    )


def _gate_dielectric(tab: dict, where: str, src: str) -> tuple[float | None, float | None]:
    """A gate's own dielectric (thickness m, relative permittivity), None where not given."""
    t = eps = None
    if "dielectric_thickness" in tab:
        t = _qty(tab, "dielectric_thickness", "length", where, src)
        lo, hi = DIELECTRIC_THICKNESS_RANGE_M
        if not lo <= t <= hi:
            raise _err(
                f"{t * 1e9:g} nm; allowed from {lo * 1e9:g} nm to {hi * 1e6:g} um",
                src,
                f"{where}.dielectric_thickness",
            )
    if "dielectric_permittivity" in tab:
        v = tab["dielectric_permittivity"]
        lo, hi = DIELECTRIC_PERMITTIVITY_RANGE
        if isinstance(v, bool) or not isinstance(v, int | float) or not lo <= v <= hi:
            raise _err(
                f"{v!r}; allowed a number from {lo:g} to {hi:g}",
                src,
                f"{where}.dielectric_permittivity",
            )
        eps = float(v)
        if t is None:
            raise _err(
                "a gate's dielectric permittivity needs its dielectric_thickness",
                src,
                f"{where}.dielectric_thickness",
            )
    if t is not None and t > 0 and eps is None:
        raise _err(
            "a gate dielectric needs its relative permittivity (a number from 1 to 100)",
            src,
            f"{where}.dielectric_permittivity",
        )
    return t, eps


def check_voltage(v: float, key: str, src: str, barrier_V: float, stack_src: str) -> float:
    """Refuse a voltage at or past the Schottky barrier or below -20 V (one line, file, key)."""
    if v >= barrier_V:
        raise _err(
            f"{v:+.3f} V is past the Schottky barrier ({barrier_V:.3f} eV, surface.barrier of "
            f"{stack_src}): the gate would conduct; allowed {MIN_GATE_VOLTAGE_V:g} V to "
            f"{barrier_V:+.3f} V (exclusive)",
            src,
            key,
        )
    if v < MIN_GATE_VOLTAGE_V:
        raise _err(
            f"{v:+.3f} V is below {MIN_GATE_VOLTAGE_V:g} V (dielectric breakdown range); allowed "
            f"{MIN_GATE_VOLTAGE_V:g} V to {barrier_V:+.3f} V",
            src,
            key,
        )
    return v


_NM = ("nm", 1e-9)


def _build(raw: dict, src: str, base: Path, stack) -> Layout:
    for k in raw:
        if k not in _TOP:
            close = difflib.get_close_matches(k, _TOP, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise _err(f"unknown table{hint}; allowed: {', '.join(_TOP)}", src, k)
    if "layout" not in raw:
        raise _err("missing required table", src, "layout")
    top = _keys(
        raw["layout"], _LAYOUT_KEYS, ("name", "stack", "domain_x", "domain_y"), "layout", src
    )
    name = _text(top, "name", "layout", src)
    notes = top.get("notes", "")
    if not isinstance(notes, str):
        raise _err(f"expected text, got {notes!r}", src, "layout.notes")
    stack_path = (base / _text(top, "stack", "layout", src)).resolve()
    if stack is None:
        if not stack_path.is_file():
            raise _err(f"stack file {stack_path} not found", src, "layout.stack")
        from qhdesign.stack import load_stack

        stack = load_stack(stack_path)
    barrier_V = stack.surface.barrier / sc.e
    dom = []
    for k in ("domain_x", "domain_y"):
        v = top[k]
        if not isinstance(v, list) or len(v) != 2:
            raise _err(
                f'expected ["min with unit", "max with unit"], got {v!r}', src, f"layout.{k}"
            )
        lo, hi = (parse_quantity(t, "length", source=src, key=f"layout.{k}") for t in v)
        if not hi > lo:
            raise _err("the maximum must exceed the minimum", src, f"layout.{k}")
        dom.append((lo, hi))
    domain = (dom[0], dom[1])
    size = max(dom[0][1] - dom[0][0], dom[1][1] - dom[1][0])
    if size > 1e-3:
        raise _err(f"domain of {size * 1e3:g} mm; allowed up to 1 mm", src, "layout.domain_x")

    mesh = _keys(raw.get("mesh", {}), _MESH_KEYS, (), "mesh", src)
    gate_edge = _positive(
        _qty(mesh, "gate_edge", "length", "mesh", src, 25e-9), "mesh.gate_edge", src
    )
    far = _positive(_qty(mesh, "far", "length", "mesh", src, 10 * gate_edge), "mesh.far", src)
    if not 1e-9 <= gate_edge <= 500e-9:
        raise _err(f"{gate_edge * 1e9:g} nm; allowed 1 nm to 500 nm", src, "mesh.gate_edge")
    if far < gate_edge:
        raise _err("must be at least mesh.gate_edge", src, "mesh.far")
    edge_normal = edge_band = None
    if "edge_normal" in mesh:
        edge_normal = _qty(mesh, "edge_normal", "length", "mesh", src)
        if not 1e-9 <= edge_normal <= gate_edge:
            raise _err(
                f"{edge_normal * 1e9:g} nm; allowed 1 nm to mesh.gate_edge "
                f"({gate_edge * 1e9:g} nm)",
                src,
                "mesh.edge_normal",
            )
    if "edge_band" in mesh:
        if edge_normal is None:
            raise _err("needs mesh.edge_normal (the size across the band)", src, "mesh.edge_band")
        edge_band = _qty(mesh, "edge_band", "length", "mesh", src)
        if not edge_normal <= edge_band <= 2e-6:
            raise _err(
                f"{edge_band * 1e9:g} nm; allowed mesh.edge_normal to 2 um", src, "mesh.edge_band"
            )
    sheet_level = strip_chord = None
    if "sheet_level" in mesh:
        sheet_level = _qty(mesh, "sheet_level", "length", "mesh", src)
        if not 0.5e-9 <= sheet_level <= 10e-9:
            raise _err(
                f"{sheet_level * 1e9:g} nm; allowed 0.5 nm to 10 nm", src, "mesh.sheet_level"
            )
    if "strip_chord" in mesh:
        strip_chord = _qty(mesh, "strip_chord", "length", "mesh", src)
        if not 0.01e-9 <= strip_chord <= 5e-9:
            raise _err(
                f"{strip_chord * 1e9:g} nm; allowed 0.01 nm to 5 nm", src, "mesh.strip_chord"
            )
    if size / gate_edge > 20_000:
        raise _err(
            f"{size / gate_edge:.0f} gate-edge elements across the domain; allowed up to 20000",
            src,
            "mesh.gate_edge",
        )

    gates: list[Gate] = []
    raw_gates = raw.get("gates", [])
    if not isinstance(raw_gates, list):
        raise _err("expected an array of tables [[gates]]", src, "gates")
    for i, tab in enumerate(raw_gates):
        where = f"gates[{i}]"
        tab = _keys(tab, _GATE_KEYS, ("name", "vertices", "voltage"), where, src)
        gname = _text(tab, "name", where, src)
        verts = tab["vertices"]
        if not isinstance(verts, list) or not 3 <= len(verts) <= MAX_VERTICES:
            raise _err(f"expected 3 to {MAX_VERTICES} points", src, f"{where}.vertices")
        poly = np.array([_point(v, f"{where}.vertices[{j}]", src) for j, v in enumerate(verts)])
        volt = check_voltage(
            _qty(tab, "voltage", "voltage", where, src),
            f"{where}.voltage",
            src,
            barrier_V,
            stack.source,
        )
        gates.append(Gate(gname, poly, volt, "gate", where, *_gate_dielectric(tab, where, src)))

    spec = None
    seed = None
    constrictions: list[Constriction] = []
    if "island" in raw:
        spec, seed, gen, cons, plunger_names = _island(
            raw["island"], src, barrier_V, stack.source, gate_edge
        )
        gates.extend(gen)
        constrictions.extend(cons)
        known = {g.name for g in gates}
        for j, pname in enumerate(plunger_names):
            if pname not in known:
                raise _err(f"no gate named '{pname}'", src, f"island.plunger_gates[{j}]")
        gates = [replace(g, role="plunger") if g.name in plunger_names else g for g in gates]
    drawn_keys: list[str] = []
    raw_cons = raw.get("constrictions", [])
    if not isinstance(raw_cons, list):
        raise _err("expected an array of tables [[constrictions]]", src, "constrictions")
    for i, tab in enumerate(raw_cons):
        where = f"constrictions[{i}]"
        tab = _keys(tab, _CONSTRICTION_KEYS, _CONSTRICTION_KEYS, where, src)
        path = tab["path"]
        if not isinstance(path, list) or len(path) != 2:
            raise _err("expected two points [island side, lead side]", src, f"{where}.path")
        a, b = (_point(v, f"{where}.path", src) for v in path)
        if math.hypot(b[0] - a[0], b[1] - a[1]) < gate_edge:
            raise _err("the path is shorter than mesh.gate_edge", src, f"{where}.path")
        constrictions.append(Constriction(_text(tab, "name", where, src), (a, b)))
        drawn_keys.append(where)

    if not gates:
        raise _err("no gates: give [[gates]] or an [island] generator", src, "gates")
    _check_gates(gates, domain, gate_edge, src)
    need = MIN_CONSTRICTION_CELLS * gate_edge
    drawn = constrictions[len(constrictions) - len(drawn_keys) :]
    for where, c in zip(drawn_keys, drawn, strict=True):
        # a drawn constriction's gap: twice the distance from its path midpoint to the gates
        mid = 0.5 * (np.asarray(c.path_m[0]) + np.asarray(c.path_m[1]))
        dist = min(_point_polygon_distance(mid, g.vertices_m) for g in gates)
        if 2 * dist < need:
            raise _err(
                f"constriction '{c.name}' is about {2 * dist * 1e9:.3g} nm wide at its path "
                f"midpoint, narrower than the mesh resolves: at least {MIN_CONSTRICTION_CELLS} x "
                f"mesh.gate_edge = {need * 1e9:g} nm",
                src,
                f"{where}.path",
            )
    names = [c.name for c in constrictions]
    for c in constrictions:
        if names.count(c.name) > 1:
            raise _err(f"constriction name '{c.name}' is used twice", src, "constrictions")
        for p in c.path_m:
            _inside_domain(np.array([p]), domain, 0.0, src, "constrictions", c.name)
    return Layout(
        name=name,
        notes=notes,
        source=src,
        stack_path=stack_path,
        domain_m=domain,
        gate_edge_m=gate_edge,
        far_m=far,
        edge_normal_m=edge_normal,
        edge_band_m=edge_band,
        sheet_level_m=sheet_level,
        strip_chord_m=strip_chord,
        gates=tuple(gates),
        constrictions=tuple(constrictions),
        seed_m=seed,
        island=spec,
    )


def _island(tab: Any, src: str, barrier_V: float, stack_src: str, gate_edge: float):
    """Read the [island] table: a generator (``shape``) or a hand-drawn island (``seed``)."""
    tab = _keys(tab, _ISLAND_KEYS, (), "island", src)
    if "shape" not in tab:
        # hand-drawn: a seed point and the names of the plunger gates
        for k in tab:
            if k not in ("seed", "plunger_gates", "name"):
                raise _err("only with island.shape (a generated island)", src, f"island.{k}")
        if "seed" not in tab:
            raise _err("give island.shape (generator) or island.seed (drawn island)", src, "island")
        seed = _point(tab["seed"], "island.seed", src)
        pl = tab.get("plunger_gates", [])
        if not isinstance(pl, list) or not all(isinstance(x, str) for x in pl):
            raise _err("expected a list of gate names", src, "island.plunger_gates")
        return None, seed, [], [], list(pl)
    if "seed" in tab or "plunger_gates" in tab:
        key = "seed" if "seed" in tab else "plunger_gates"
        raise _err("a generated island places its own seed and plungers", src, f"island.{key}")
    shape = tab["shape"]
    if shape not in ("circle", "rectangle"):
        raise _err(f"'{shape}' is not allowed; choose circle or rectangle", src, "island.shape")
    name = _text(tab, "name", "island", src, "island")
    w = lambda k, d=None: _positive(_qty(tab, k, "length", "island", src, d), f"island.{k}", src)  # noqa: E731
    if shape == "circle":
        for k in ("width", "height"):
            if k in tab:
                raise _err("only for shape = rectangle", src, f"island.{k}")
        dims = {"radius_m": w("radius")}
    else:
        if "radius" in tab:
            raise _err("only for shape = circle", src, "island.radius")
        dims = {"width_m": w("width"), "height_m": w("height")}
    plungers = tab.get("plungers", 1)
    if isinstance(plungers, bool) or plungers not in (1, 2):
        raise _err(f"{plungers!r}; allowed 1 or 2", src, "island.plungers")
    spec = IslandSpec(
        name=name,
        shape=shape,
        gap_m=w("gap"),
        wall_m=w("wall"),
        spacing_m=w("spacing", 60e-9),
        plunger_width_m=w("plunger_width"),
        plungers=int(plungers),
        wall_voltage_V=check_voltage(
            _qty(tab, "wall_voltage", "voltage", "island", src),
            "island.wall_voltage",
            src,
            barrier_V,
            stack_src,
        ),
        plunger_voltage_V=check_voltage(
            _qty(tab, "plunger_voltage", "voltage", "island", src),
            "island.plunger_voltage",
            src,
            barrier_V,
            stack_src,
        ),
        **dims,
    )
    need = MIN_CONSTRICTION_CELLS * gate_edge
    if spec.gap_m < need:
        raise _err(
            f"constriction gap {spec.gap_m * 1e9:g} nm is narrower than the mesh resolves: "
            f"at least {MIN_CONSTRICTION_CELLS} x mesh.gate_edge = {need * 1e9:g} nm",
            src,
            "island.gap",
        )
    a, b = spec.half_extent_m
    if spec.gap_m >= 2 * b:
        raise _err(
            f"the gap {spec.gap_m * 1e9:g} nm must be narrower than the island "
            f"({2 * b * 1e9:g} nm across)",
            src,
            "island.gap",
        )
    room = spec.flat_half_width_m - gate_edge
    if 0.5 * spec.plunger_width_m + spec.spacing_m > room:
        raise _err(
            f"plunger_width/2 + spacing = "
            f"{(0.5 * spec.plunger_width_m + spec.spacing_m) * 1e9:g} nm does not fit on the "
            f"island's side (at most {room * 1e9:.0f} nm)",
            src,
            "island.plunger_width",
        )
    if spec.spacing_m < gate_edge:
        raise _err(
            f"{spec.spacing_m * 1e9:g} nm is below mesh.gate_edge ({gate_edge * 1e9:g} nm)",
            src,
            "island.spacing",
        )
    # arcs as chords within 1 nm of the circle (area error < 0.2 % for R > 0.5 um)
    gen = island_gates(spec, sagitta_m=min(0.25 * gate_edge, 1e-9))
    gates = [Gate(g.name, g.vertices_m, g.voltage_V, g.role, "island") for g in gen]
    xo = a + spec.wall_m
    cons = [
        Constriction(f"{name}_left", ((-a, 0.0), (-xo, 0.0)), spec.gap_m),
        Constriction(f"{name}_right", ((a, 0.0), (xo, 0.0)), spec.gap_m),
    ]
    return spec, (0.0, 0.0), gates, cons, []


def _point_polygon_distance(p, poly: np.ndarray) -> float:
    if pg.point_in_polygon(p, poly):
        return 0.0
    return min(
        pg.segment_distance(p, p, poly[i], poly[(i + 1) % len(poly)]) for i in range(len(poly))
    )


def _inside_domain(poly, domain, margin, src, key, name) -> None:
    (x0, x1), (y0, y1) = domain
    bad = (
        (poly[:, 0] < x0 + margin)
        | (poly[:, 0] > x1 - margin)
        | (poly[:, 1] < y0 + margin)
        | (poly[:, 1] > y1 - margin)
    )
    if np.any(bad):
        x, y = poly[int(np.argmax(bad))]
        raise _err(
            f"'{name}' has a point ({x * 1e9:.0f} nm, {y * 1e9:.0f} nm) outside the domain "
            f"x {x0 * 1e9:.0f}..{x1 * 1e9:.0f} nm, y {y0 * 1e9:.0f}..{y1 * 1e9:.0f} nm"
            + (f" less a margin of mesh.gate_edge ({margin * 1e9:g} nm)" if margin else ""),
            src,
            key,
        )


def _check_gates(gates: list[Gate], domain, gate_edge: float, src: str) -> None:
    """Names unique, polygons simple with area, inside the domain, apart from each other."""
    seen: dict[str, str] = {}
    for i, g in enumerate(gates):
        if g.name in seen:
            raise _err(f"gate name '{g.name}' is used twice (also {seen[g.name]})", src, g.key)
        seen[g.name] = g.key
        poly = g.vertices_m
        if not np.all(np.isfinite(poly)):
            raise _err(f"gate '{g.name}' has a non-finite vertex", src, f"{g.key}.vertices")
        key = f"{g.key}.vertices" if g.key.startswith("gates") else g.key
        hit = pg.self_intersection(poly)
        if hit is not None:
            raise _err(f"gate '{g.name}' intersects itself (edges {hit[0]} and {hit[1]})", src, key)
        area = pg.polygon_area(poly)
        if abs(area) < gate_edge**2:
            raise _err(f"gate '{g.name}' has (almost) no area", src, key)
        if area < 0:
            gates[i] = g = replace(g, vertices_m=poly[::-1].copy())
        _inside_domain(g.vertices_m, domain, gate_edge, src, key, g.name)
    for i, g in enumerate(gates):
        for h in gates[i + 1 :]:
            key = f"{h.key}.vertices" if h.key.startswith("gates") else h.key
            if pg.polygons_overlap(g.vertices_m, h.vertices_m):
                raise _err(f"gates '{g.name}' and '{h.name}' overlap or touch", src, key)
            d = pg.polygon_distance(g.vertices_m, h.vertices_m)
            if d < gate_edge:
                raise _err(
                    f"gates '{g.name}' and '{h.name}' are {d * 1e9:.3g} nm apart, below "
                    f"mesh.gate_edge ({gate_edge * 1e9:g} nm): the mesh would close the gap",
                    src,
                    key,
                )
