"""Shared fixtures. Figures use the Agg backend; paths are relative to the repository root."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("MPLBACKEND", "Agg")

ROOT = Path(__file__).resolve().parents[1]
STACKS = sorted((ROOT / "stacks").glob("*.toml"))
SCREENED = ROOT / "stacks" / "ql2417_screened.toml"


@pytest.fixture
def root() -> Path:
    return ROOT


@pytest.fixture
def screened_path() -> Path:
    return SCREENED


@pytest.fixture
def cli_runner():
    from typer.testing import CliRunner

    return CliRunner()


@pytest.fixture
def app():
    from qhdesign.cli.app import build_app

    return build_app()


def assert_one_line_error(result, *fragments) -> str:
    """A CLI result failed cleanly: exit 2, one line on stderr starting 'error: ', no traceback,
    and every fragment (strings, or one list of strings) present. Returns the line."""
    if len(fragments) == 1 and isinstance(fragments[0], list | tuple):
        fragments = tuple(fragments[0])
    assert result.exit_code == 2, result.output
    err = (result.stderr or "").strip()
    assert err.startswith("error: "), err
    assert "\n" not in err, err
    assert "Traceback" not in result.output
    for frag in fragments:
        assert frag in err, (frag, err)
    return err


# ---------------------------------------------------------------- validation records
# Reference tests record each check against an outside source through ``record_check``: the
# check, its source, the value, the reference value, the tolerance and the measured deviation.
# With QHDESIGN_VALIDATION_JSON=path (or --validation-json path) the records of the run are written
# there as JSON; scripts/render_validation.py turns them into docs/validation.md (make validation).
VALIDATION_ENV = "QHDESIGN_VALIDATION_JSON"
_RECORDS: list[dict] = []
_KINDS = ("rel", "abs", "bound")


def pytest_addoption(parser):
    parser.addoption(
        "--validation-json",
        default=None,
        help="write the checks recorded through record_check to this JSON file",
    )


def _deviation(value, reference, kind: str) -> float:
    import numpy as np

    v = np.asarray(value, dtype=float)
    r = np.asarray(reference, dtype=float)
    if kind == "rel":
        return float(np.max(np.abs(v / r - 1.0)))
    if kind == "abs":
        return float(np.max(np.abs(v - r)))
    # bound: value must not exceed the reference; signed relative excess (negative: below it)
    return float(np.max((v - r) / np.abs(r)))


def make_record(
    test: str,
    name: str,
    source: str,
    value,
    reference,
    tolerance: float,
    *,
    kind: str = "rel",
    unit: str = "",
) -> dict:
    """One validation record; refuses a check without a source (a reference check must name one)."""
    import numpy as np

    if (
        not isinstance(source, str)
        or len(source.strip()) < 8
        or source.strip().lower()
        in {
            "todo",
            "tbd",
            "none",
            "unknown",
        }
    ):
        raise ValueError(f"{test}: check '{name}' has no source (got {source!r})")
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"{test}: a recorded check needs a name")
    if kind not in _KINDS:
        raise ValueError(f"{test}: kind must be one of {_KINDS}, not {kind!r}")
    dev = _deviation(value, reference, kind)
    passed = dev <= tolerance
    scalar = np.ndim(value) == 0 and np.ndim(reference) == 0
    return {
        "test": test,
        "check": " ".join(name.split()),
        "source": " ".join(source.split()),
        "value": float(value) if scalar else None,
        "reference": float(reference) if scalar else None,
        "count": int(np.size(np.broadcast(np.asarray(value), np.asarray(reference)))),
        "unit": unit,
        "kind": kind,
        "tolerance": float(tolerance),
        "deviation": dev,
        "passed": bool(passed),
    }


@pytest.fixture
def record_check(request):
    """Record a check against an outside source: ``record_check(name, source, value, reference,
    tolerance, kind="rel"|"abs"|"bound", unit="")``.

    It only records (the test keeps its own assertion); it returns the measured deviation
    (max |value/reference - 1| for "rel", max |value - reference| for "abs", the signed relative
    excess over an upper bound for "bound"). A check without a source raises ValueError.
    """
    test = request.node.nodeid

    def _record(name, source, value, reference, tolerance, *, kind="rel", unit=""):
        rec = make_record(test, name, source, value, reference, tolerance, kind=kind, unit=unit)
        _RECORDS.append(rec)
        return rec["deviation"]

    return _record


def pytest_sessionfinish(session, exitstatus):
    path = session.config.getoption("--validation-json") or os.environ.get(VALIDATION_ENV)
    if not path or not _RECORDS:
        return
    import json

    from qhdesign.io import atomic_write_text

    atomic_write_text(Path(path), json.dumps(_RECORDS, indent=1) + "\n")
