"""Stack files: every bundled stack loads and round-trips; parameter paths read and write."""

from __future__ import annotations

import itertools

import pytest
from conftest import SCREENED, STACKS
from scipy import constants as sc

from qhdesign.errors import StackError
from qhdesign.stack import load_stack, loads_stack


def test_bundled_stacks_exist():
    assert len(STACKS) >= 3


@pytest.mark.parametrize("path", STACKS, ids=lambda p: p.name)
def test_stack_loads_and_round_trips(path, tmp_path):
    stack = load_stack(path)
    out = tmp_path / "again.toml"
    out.write_text(stack.to_toml())
    again = load_stack(out)
    assert again == stack
    assert again.to_toml() == stack.to_toml()
    assert any(lay.well == "primary" for lay in stack.layers)


@pytest.mark.parametrize("path", STACKS, ids=lambda p: p.name)
def test_profile_is_contiguous_and_sourced(path):
    stack = load_stack(path)
    prof = stack.profile()
    assert prof[0].z_top == 0.0
    for a, b in itertools.pairwise(prof):
        assert a.z_bottom == pytest.approx(b.z_top, abs=1e-18)
    assert prof[-1].z_bottom == pytest.approx(stack.total_thickness)


def test_sheet_doping_is_spread_over_its_layer():
    stack = load_stack(SCREENED)
    lay = stack.layer("delta_upper")
    p = next(p for p in stack.profile() if p.name == "delta_upper")
    assert p.donor_density * lay.thickness == pytest.approx(lay.doping.density, rel=1e-12)


def test_get_and_with_value_paths():
    s = load_stack(SCREENED)
    assert s.get("layers.primary.thickness") == pytest.approx(24e-9)
    assert s.get("surface.barrier") == pytest.approx(0.72 * sc.e)
    assert s.get("layers.barrier_upper.x") == 0.31
    assert s.get("doping.delta_upper.sheet") == pytest.approx(1.8e16)
    assert s.get("layers.delta_upper.doping.sheet") == pytest.approx(1.8e16)
    assert s.get("wafer.temperature") == pytest.approx(0.3)
    s2 = s.with_value("layers.setback_upper.thickness", "30 nm")
    assert s2.layer("setback_upper").thickness == pytest.approx(30e-9)
    assert s.layer("setback_upper").thickness == pytest.approx(
        36e-9
    )  # original untouched (file: 36 nm)
    s3 = s.with_value("surface.barrier", 0.65 * sc.e)  # SI float
    assert s3.surface.barrier == pytest.approx(0.65 * sc.e, rel=1e-14)
    s4 = s.with_value("doping.spacer_upper.sheet", "1e11 cm^-2")  # adds doping
    assert s4.layer("spacer_upper").doping.density == pytest.approx(1e15)
    # the new stack round-trips through its own file text
    assert loads_stack(s4.to_toml()) == s4


@pytest.mark.parametrize(
    ("path", "value", "fragment"),
    [
        ("layers.primry.thickness", "30 nm", "did you mean 'primary'"),
        ("layers.primary.thicknes", "30 nm", "did you mean 'thickness'"),
        ("layers.primary.thickness", "-3 nm", "out of range"),
        ("layers.barrier_upper.x", 1.4, "outside [0, 1]"),
        ("surface.barier", "0.7 eV", "did you mean 'barrier'"),
        ("doping.spacer_upper.donor", "dx", "not doped"),
        ("nonsense", 1, "unknown parameter path"),
    ],
)
def test_bad_paths_and_values_name_the_path(path, value, fragment):
    s = load_stack(SCREENED)
    with pytest.raises(StackError, match=fragment.replace("[", r"\[").replace("]", r"\]")) as e:
        s.with_value(path, value)
    assert path.split(".")[0] in str(e.value)


def test_indirect_barrier_warns():
    text = SCREENED.read_text().replace(
        'x = 0.31\nthickness = "300 nm"', 'x = 0.6\nthickness = "300 nm"'
    )
    stack = loads_stack(text, source="w.toml")
    assert any("indirect" in w and "barrier_lower" in w for w in stack.warnings)


def test_with_values_equals_chained_with_value():
    s = load_stack(SCREENED)
    vals = {"layers.setback_upper.thickness": 27e-9, "layers.barrier_upper.x": 0.3}
    bulk = s.with_values(vals)
    chained = s.with_value("layers.setback_upper.thickness", 27e-9).with_value(
        "layers.barrier_upper.x", 0.3
    )
    assert bulk == chained
    with pytest.raises(StackError, match=r"layers\.nope\.thickness"):
        s.with_values({"layers.nope.thickness": 1e-9})


def test_writer_escapes_control_characters_and_round_trips():
    # TOML forbids raw control characters in strings; the writer must escape them
    s = load_stack(SCREENED).with_value("wafer.notes", 'a\rb\tc "q" \\ \x7f \x01 µ')
    again = loads_stack(s.to_toml())
    assert again == s
    assert again.get("wafer.notes") == 'a\rb\tc "q" \\ \x7f \x01 µ'


def test_range_errors_show_the_value_in_the_unit_of_the_range():
    text = SCREENED.read_text().replace('barrier = "0.72 eV"', 'barrier = "5 eV"')
    with pytest.raises(StackError) as info:
        loads_stack(text, source="b.toml")
    msg = str(info.value)
    assert "value 5 eV is out of range" in msg and "from -0.5 to 3 eV" in msg


def test_exchange_correlation_key_reads_validates_and_sweeps():
    text = SCREENED.read_text()
    stack = loads_stack(text + '\n[models]\nexchange_correlation = "perdew-zunger"\n')
    assert stack.exchange_correlation == "perdew-zunger"
    assert stack.to_dict()["models"]["exchange_correlation"] == "perdew-zunger"
    assert load_stack(SCREENED).exchange_correlation == "none"
    assert stack.with_value("models.exchange_correlation", "none").exchange_correlation == "none"
    with pytest.raises(StackError, match=r"models\.exchange_correlation") as exc:
        loads_stack(text + '\n[models]\nexchange_correlation = "slater"\n')
    assert "hedin-lundqvist" in str(exc.value)
