"""Layout files: the bundled layouts load; generated gates have the analytic area; every bad
input is refused with one line naming the file and the key."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from conftest import ROOT

from qhdesign.errors import InputError
from qhdesign.layout import load_layout, loads_layout
from qhdesign.layout import polygons as pg

LAYOUTS = sorted((ROOT / "stacks" / "layouts").glob("*.toml"))
BASE = ROOT / "stacks" / "layouts"

HEAD = """
[layout]
name = "t"
stack = "../ql2417_screened.toml"
domain_x = ["-2 um", "2 um"]
domain_y = ["-2 um", "2 um"]
[mesh]
gate_edge = "20 nm"
"""

ISLAND = """
[island]
shape = "circle"
radius = "600 nm"
gap = "300 nm"
wall = "300 nm"
plunger_width = "400 nm"
wall_voltage = "-1 V"
plunger_voltage = "-0.5 V"
"""


def _gate(name, pts, volt="-0.5 V"):
    v = ", ".join(f'["{x} nm", "{y} nm"]' for x, y in pts)
    return f'\n[[gates]]\nname = "{name}"\nvoltage = "{volt}"\nvertices = [{v}]\n'


def _load(text):
    return loads_layout(text, source="lay.toml", base=BASE)


def test_bundled_layouts_exist():
    assert len(LAYOUTS) >= 3


@pytest.mark.parametrize("path", LAYOUTS, ids=lambda p: p.name)
def test_bundled_layout_loads(path):
    lay = load_layout(path)
    assert lay.gates and lay.stack_path.is_file()
    for g in lay.gates:
        assert pg.polygon_area(g.vertices_m) > 0  # stored counter-clockwise
    if lay.island is not None:
        assert len(lay.constrictions) == 2 and lay.plungers


def test_circle_generator_area_is_analytic():
    # analytic: gate area = outer rectangle - (disk U channel strip) - two plunger spacings,
    # each piece an elementary integral of sqrt(R^2 - x^2)
    lay = _load(HEAD + ISLAND)
    r, w, wall, p, s = 600e-9, 300e-9, 300e-9, 400e-9, 60e-9
    h = w / 2
    xo = yo = r + wall
    disk_strip = 2 * (h * math.sqrt(r * r - h * h) + r * r * math.asin(h / r))
    free = math.pi * r * r + 2 * xo * w - disk_strip

    def prim(x):  # antiderivative of sqrt(r^2 - x^2)
        return 0.5 * (x * math.sqrt(r * r - x * x) + r * r * math.asin(x / r))

    spacing = 2 * (yo * s - (prim(p / 2 + s) - prim(p / 2)))
    expect = 4 * xo * yo - free - spacing
    got = sum(pg.polygon_area(g.vertices_m) for g in lay.gates)
    # chords lie within 1 nm (sagitta) of the arc: the polygon gains < perimeter * 1 nm
    assert got == pytest.approx(expect, abs=2 * math.pi * r * 1e-9)
    assert got > expect  # chords cut into the disk, so the gates are larger, never smaller
    names = {g.name for g in lay.gates}
    assert names == {
        "island_upper_left",
        "island_plunger_upper",
        "island_upper_right",
        "island_lower",
    }


def test_two_plungers_and_rectangle():
    text = (
        HEAD
        + ISLAND.replace(
            'shape = "circle"\nradius = "600 nm"',
            'shape = "rectangle"\nwidth = "1.4 um"\nheight = "1 um"',
        )
        + "plungers = 2\n"
    )
    lay = _load(text)
    assert set(lay.plungers) == {"island_plunger_upper", "island_plunger_lower"}
    # analytic: rectangle band area = outer - island - channels - 4 spacings
    a, b, w, wall, s = 0.7e-6, 0.5e-6, 0.3e-6, 0.3e-6, 60e-9
    expect = 4 * (a + wall) * (b + wall) - 4 * a * b - 2 * wall * w - 4 * s * wall
    got = sum(pg.polygon_area(g.vertices_m) for g in lay.gates)
    assert got == pytest.approx(expect, rel=1e-12)


def test_with_voltages():
    lay = _load(HEAD + ISLAND)
    new = lay.with_voltages({"island_plunger_upper": -0.7})
    assert new.gate("island_plunger_upper").voltage_V == -0.7
    assert lay.gate("island_plunger_upper").voltage_V == -0.5
    with pytest.raises(InputError, match="no gate"):
        lay.with_voltages({"nope": 0.0})


SQUARE = [(-100, -100), (100, -100), (100, 100), (-100, 100)]


@pytest.mark.parametrize(
    "text, key, fragment",
    [
        (
            HEAD + _gate("bow", [(0, 0), (200, 200), (200, 0), (0, 200)]),
            "gates[0].vertices",
            "intersects itself",
        ),
        (
            HEAD + _gate("fold", [(0, 0), (200, 0), (100, 0), (100, 200)]),
            "gates[0].vertices",
            "intersects itself",
        ),
        (
            HEAD + _gate("a", SQUARE) + _gate("b", [(50, 50), (300, 50), (300, 300), (50, 300)]),
            "gates[1].vertices",
            "overlap",
        ),
        (
            HEAD + _gate("a", SQUARE) + _gate("b", [(-50, -50), (50, -50), (50, 50), (-50, 50)]),
            "gates[1].vertices",
            "overlap",
        ),
        (
            HEAD
            + _gate("a", SQUARE)
            + _gate("b", [(110, -100), (300, -100), (300, 100), (110, 100)]),
            "gates[1].vertices",
            "apart",
        ),
        (
            HEAD + _gate("out", [(0, 0), (2500, 0), (2500, 100), (0, 100)]),
            "gates[0].vertices",
            "outside the domain",
        ),
        (HEAD + _gate("hot", SQUARE, "0.8 V"), "gates[0].voltage", "Schottky barrier"),
        (HEAD + _gate("cold", SQUARE, "-25 V"), "gates[0].voltage", "below -20"),
        (HEAD + _gate("bare", SQUARE, "-0.5"), "gates[0].voltage", "no unit"),
        (
            HEAD + _gate("a", SQUARE) + _gate("a", [(300, 0), (400, 0), (400, 100)]),
            "gates[1]",
            "used twice",
        ),
        (
            HEAD + ISLAND.replace('gap = "300 nm"', 'gap = "70 nm"'),
            "island.gap",
            "narrower than the mesh",
        ),
        (HEAD + ISLAND.replace('"-1 V"', '"0.9 V"'), "island.wall_voltage", "Schottky barrier"),
        (
            HEAD + ISLAND.replace('plunger_width = "400 nm"', 'plunger_width = "1.1 um"'),
            "island.plunger_width",
            "does not fit",
        ),
        (
            HEAD + ISLAND.replace('radius = "600 nm"', 'radius = "1.9 um"'),
            "island",
            "outside the domain",
        ),
        (
            HEAD + ISLAND.replace('shape = "circle"', 'shape = "hexagon"'),
            "island.shape",
            "circle or rectangle",
        ),
        (HEAD + ISLAND + "plungers = 3\n", "island.plungers", "allowed 1 or 2"),
        (
            HEAD
            + _gate("up", [(-200, 30), (200, 30), (200, 500), (-200, 500)])
            + _gate("dn", [(-200, -500), (200, -500), (200, -30), (-200, -30)])
            + '[[constrictions]]\nname = "q"\npath = [["-300 nm", "0 nm"], ["300 nm", "0 nm"]]\n',
            "constrictions[0].path",
            "narrower than the mesh",
        ),
        (HEAD.replace("gate_edge", "gate_egde"), "mesh.gate_egde", "did you mean 'gate_edge'"),
        (
            HEAD.replace('stack = "../ql2417_screened.toml"', 'stack = "none.toml"'),
            "layout.stack",
            "not found",
        ),
        (HEAD, "gates", "no gates"),
        (
            HEAD + 'edge_normal = "30 nm"\n' + _gate("a", SQUARE),
            "mesh.edge_normal",
            "allowed 1 nm to mesh.gate_edge",
        ),
        (
            HEAD + 'edge_band = "150 nm"\n' + _gate("a", SQUARE),
            "mesh.edge_band",
            "needs mesh.edge_normal",
        ),
        (
            HEAD + 'edge_normal = "6 nm"\nedge_band = "3 um"\n' + _gate("a", SQUARE),
            "mesh.edge_band",
            "allowed mesh.edge_normal to 2 um",
        ),
        (
            HEAD + 'sheet_level = "20 nm"\n' + _gate("a", SQUARE),
            "mesh.sheet_level",
            "allowed 0.5 nm to 10 nm",
        ),
        (
            HEAD + 'strip_chord = "0 nm"\n' + _gate("a", SQUARE),
            "mesh.strip_chord",
            "allowed 0.01 nm to 5 nm",
        ),
        (
            HEAD.replace('["-2 um", "2 um"]\ndomain_y', '["2 um", "-2 um"]\ndomain_y'),
            "layout.domain_x",
            "maximum",
        ),
    ],
)
def test_bad_layout_one_line(text, key, fragment):
    with pytest.raises(InputError) as exc:
        _load(text)
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith("lay.toml: "), msg
    assert f"key '{key}'" in msg, msg
    assert fragment in msg, msg


def test_edge_band_keys():
    lay = _load(HEAD + 'edge_normal = "6 nm"\nedge_band = "120 nm"\n' + _gate("a", SQUARE))
    assert lay.edge_normal_m == pytest.approx(6e-9)
    assert lay.edge_band_m == pytest.approx(120e-9)
    plain = _load(HEAD + _gate("a", SQUARE))
    assert plain.edge_normal_m is None and plain.edge_band_m is None
    assert plain.sheet_level_m is None and plain.strip_chord_m is None


def test_sheet_level_and_strip_chord_keys():
    lay = _load(HEAD + 'sheet_level = "1.5 nm"\nstrip_chord = "0.1 nm"\n' + _gate("a", SQUARE))
    assert lay.sheet_level_m == pytest.approx(1.5e-9)
    assert lay.strip_chord_m == pytest.approx(0.1e-9)
    assert lay.to_dict()["sheet_level_m"] == pytest.approx(1.5e-9)


def test_load_layout_missing_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        load_layout(tmp_path / "nope.toml")


def test_polygon_predicates():
    sq = np.array(SQUARE, dtype=float)
    assert pg.polygon_area(sq) == pytest.approx(40000.0)  # analytic: 200 x 200
    assert pg.polygon_area(sq[::-1]) == pytest.approx(-40000.0)
    assert pg.self_intersection(sq) is None
    assert pg.point_in_polygon((0, 0), sq) and not pg.point_in_polygon((150, 0), sq)
    far = sq + np.array([300.0, 0.0])
    assert not pg.polygons_overlap(sq, far)
    assert pg.polygon_distance(sq, far) == pytest.approx(100.0)  # analytic: 300 - 200
    diag = sq + np.array([300.0, 400.0])
    assert pg.polygon_distance(sq, diag) == pytest.approx(math.hypot(100.0, 200.0))


def test_layout_file_path_in_error_is_given(tmp_path):
    p = Path(tmp_path) / "bad.toml"
    p.write_text("[layout\n")
    with pytest.raises(InputError, match=r"bad\.toml: TOML syntax error"):
        load_layout(p)


def test_docs_example_loads():
    text = (ROOT / "docs" / "layout-format.md").read_text()
    block = text.split("```toml\n", 1)[1].split("```", 1)[0]
    lay = _load(block)
    assert "side" in {g.name for g in lay.gates} and lay.plungers == ("fp_plunger_upper",)
