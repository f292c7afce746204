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
    parser.addoption(
        "--heavy",
        action="store_true",
        default=False,
        help="run the heavy tier too (resolution studies of minutes to tens of minutes)",
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


# ---------------------------------------------------------------------------- test tiers
# ``mpi`` (mpiexec subprocess) is set on the tests themselves; ``slow`` and ``fem`` (needs
# DOLFINx) are set here for whole modules and listed tests, or by a decorator on single tests.
# ``make test-fast`` runs ``-m "not slow and not mpi"``; ``make test`` (and CI) runs everything
# but the ``heavy`` tier (resolution studies of tens of minutes, set on the tests themselves),
# which is skipped with its reason unless ``--heavy`` is given (``make test-heavy``).
# Where DOLFINx is not installed the FEM tests are skipped, with the reason shown.
FEM_MODULES = (
    "test_sheet_laws_far_field.py",
    "test_tf2d_sheet_xc.py",
    "test_tf2d_bare_potential.py",
    "test_tf2d_consistency.py",
    "test_tf2d_csg.py",
    "test_tf2d_island_consistency.py",
    "test_tf2d_island_convergence.py",
    "test_tf2d_island_reference.py",
    "test_tf2d_mesh_convergence.py",
    "test_tf2d_pinchoff.py",
    "test_tf2d_screening_planes.py",
    "test_tf2d_solver.py",
    "test_cli_edge.py",
    "test_cli_island.py",
    "test_cli_sweep_island.py",
    "test_tf2d_parallel_path.py",
    "test_cli_island_operating.py",
    "test_cli_layout.py",
    "test_island_operating_consistency.py",
    "test_island_operating_convergence.py",
    "test_island_operating_reference.py",
    "test_layout3d.py",
    "test_layout3d_pinchoff.py",
    "test_island_gate_dielectric.py",
    "test_layout3d_gate_dielectric.py",
    "test_layout3d_island.py",
)


#: Slow tier (``slow``): whole modules whose tests each run finite-element solves or many 1D
#: solves (seconds to tens of seconds each on the shared 2-core machine, fixtures included).
#: Single slow tests elsewhere carry ``@pytest.mark.slow`` themselves.
SLOW_MODULES = (
    "test_sheet_laws_far_field.py",
    "test_tf2d_sheet_xc.py",
    "test_tf2d_bare_potential.py",
    "test_tf2d_consistency.py",
    "test_tf2d_csg.py",
    "test_tf2d_island_consistency.py",
    "test_tf2d_island_convergence.py",
    "test_tf2d_island_reference.py",
    "test_tf2d_mesh_convergence.py",
    "test_tf2d_pinchoff.py",
    "test_tf2d_screening_planes.py",
    "test_cli_edge.py",
    "test_cli_island.py",
    "test_cli_sweep_island.py",
    "test_sp1d_independent.py",
    "test_sp1d_convergence.py",
    "test_sweep_executors.py",
    "test_notebooks.py",
    "test_cli_island_operating.py",
    "test_cli_layout.py",
    "test_island_operating_consistency.py",
    "test_island_operating_convergence.py",
    "test_island_operating_reference.py",
    "test_layout3d.py",
    "test_layout3d_pinchoff.py",
    "test_island_gate_dielectric.py",
    "test_layout3d_gate_dielectric.py",
    "test_layout3d_island.py",
)
#: Single slow tests in otherwise quick modules (node id without the parameter part): 10-80 s
#: each in a `make test-fast` run on the shared machine (``--durations``, 2026-12-02).
SLOW_TESTS = (
    "test_interferometer.py::test_compressible_period_matches_brute_force",
    "test_interferometer.py::test_compressible_general_decomposition",
    "test_interferometer.py::test_thermal_window_matches_brute_force_average",
    "test_sweep_stages.py::test_edge_stage_runs_the_2d_cross_section",
    "test_cli_sweep.py::test_monte_carlo_spec_prints_tolerance_statistics",
    "test_cli_sweep.py::test_sweep_spec_then_plot",
    "test_cli_sweep.py::test_tolerance_prints_percentiles_yield_and_sensitivity",
    "test_cli_bands.py::test_calibrate_threshold_round_trip",
    "test_cli_bands.py::test_output_piped_into_head_still_writes_the_json",
    "test_cli_bands.py::test_bands_json_keys_and_plot",
    "test_stack_fuzz.py::test_structured_mutations",
    "test_result_protocol.py::test_constriction_and_pinchoff_results_follow_the_protocol",
    "test_cli_check.py::test_python_dash_m_runs_the_cli",
    "test_sp1d_consistency.py::test_thresholds_do_not_depend_on_the_sweep_step",
)


def _node(item) -> str:
    return f"{item.path.name}::{item.originalname}"


def _have_dolfinx() -> bool:
    import importlib.util

    return importlib.util.find_spec("dolfinx") is not None


def pytest_collection_modifyitems(config, items):
    have = _have_dolfinx()
    if not have and os.environ.get("CI"):
        # CI runs every tier: a missing DOLFINx there is an install failure, never a skip
        raise pytest.UsageError("DOLFINx is not importable, but CI must run the FEM tests")
    skip = pytest.mark.skip(reason="needs DOLFINx, which is not installed (FEM test)")
    heavy = pytest.mark.skip(
        reason="heavy tier (a resolution study, about 10 min on 2 cores): make test-heavy runs it"
    )
    run_heavy = config.getoption("--heavy")
    for item in items:
        if item.get_closest_marker("heavy") is not None and not run_heavy:
            item.add_marker(heavy)
        if item.path.name in FEM_MODULES:
            item.add_marker(pytest.mark.fem)
        if item.path.name in SLOW_MODULES or _node(item) in SLOW_TESTS:
            item.add_marker(pytest.mark.slow)
        if not have and item.get_closest_marker("fem") is not None:
            item.add_marker(skip)
