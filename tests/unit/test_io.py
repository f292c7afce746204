"""Atomic output files: strict JSON, ordinary file modes, no half-written files."""

from __future__ import annotations

import json
import math
import os
import stat

import numpy as np
import pytest

from qhdesign.io import atomic_write_json, atomic_write_text


def test_json_is_strict_nan_and_infinity_become_null(tmp_path):
    path = tmp_path / "r.json"
    atomic_write_json(
        path, {"a": [1.0, math.nan, np.float64("inf")], "b": np.float64(2.5), "c": {"d": -math.inf}}
    )
    text = path.read_text()
    assert "NaN" not in text and "Infinity" not in text
    # a strict parser (as JavaScript's JSON.parse) accepts it
    doc = json.loads(text, parse_constant=lambda name: pytest.fail(f"non-JSON constant {name}"))
    assert doc == {"a": [1.0, None, None], "b": 2.5, "c": {"d": None}}


def test_new_file_gets_the_umask_mode_and_a_replaced_file_keeps_its_mode(tmp_path):
    path = tmp_path / "out.txt"
    atomic_write_text(path, "one")
    # mkstemp's own mode would be 0600; an ordinary open() gives 0666 & ~umask
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(path.stat().st_mode) == 0o666 & ~umask
    path.chmod(0o600)
    atomic_write_text(path, "two")
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    assert path.read_text() == "two"


def test_no_temporary_file_left_behind(tmp_path):
    atomic_write_text(tmp_path / "a.txt", "x")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.txt"]
