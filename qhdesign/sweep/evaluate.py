"""The worker side of a sweep: apply a design to the base stack, run the stage, time it.

This module is what executor processes import; it stays small and imports the stage module only
on first use. Failures are data, not crashes: a design whose values the stack refuses is
``invalid``, a solver that does not converge is ``not_converged``; both record their one-line
error and the sweep goes on. Any other exception is a bug in a stage: it is recorded with status
``error`` and its exception type, so a 10^4-design sweep is not lost to one bad design, and the
summary reports the count.
"""

from __future__ import annotations

import hashlib
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from qhdesign.errors import ConvergenceError, InputError, QHDesignError

__all__ = ["STATUSES", "Job", "apply_values", "design_key", "evaluate_chunk", "evaluate_design"]

#: Row status values, in the order the summary lists them.
STATUSES = ("ok", "not_converged", "invalid", "error")


@dataclass(frozen=True)
class Job:
    """What every worker needs: the stage, its options and the base stack."""

    stage: str
    stack: Any
    options: Mapping[str, Any] = field(default_factory=dict)
    #: plug-in modules the user allowed (``--allow-plugin``)
    allow_plugins: tuple[str, ...] = ()


def design_key(params: Mapping[str, float]) -> str:
    """Row key: 16 hex digits of SHA-256 over the sorted ``name=repr(value)`` pairs."""
    text = ";".join(f"{k}={float(v)!r}" for k, v in sorted(params.items()))
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def apply_values(stack, values: Mapping[str, float]):
    """The stack with every ``path -> SI value`` of ``values`` set, validated once at the end."""
    if not values:
        return stack
    return stack.with_values(dict(values))


def evaluate_design(job: Job, values: Mapping[str, float]) -> tuple[dict | None, str, str, float]:
    """Evaluate one design: ``(outputs or None, status, error text, stage seconds)``."""
    from .stage_options import split_values
    from .stages import get_stage

    stack_values, option_values = split_values(values)  # "options.<name>" are stage options
    try:
        stack = apply_values(job.stack, stack_values)
    except QHDesignError as exc:
        return None, "invalid", _one_line(exc), 0.0
    fn = get_stage(job.stage, job.allow_plugins)
    t0 = time.perf_counter()
    try:
        out = fn(stack, **{**dict(job.options), **option_values})
        # the return value is checked inside the guard: a stage returning None (or a list) is a
        # bug of that stage, recorded on its row, not the end of the sweep
        if not isinstance(out, Mapping):
            raise TypeError(f"the stage returned {type(out).__name__}, not a dict of outputs")
        out = dict(out)
    except ConvergenceError as exc:
        return None, "not_converged", _one_line(exc), time.perf_counter() - t0
    except QHDesignError as exc:
        return None, "invalid", _one_line(exc), time.perf_counter() - t0
    except (Exception, SystemExit) as exc:  # a bug in a stage: keep the sweep going, record it
        return None, "error", f"{type(exc).__name__}: {_one_line(exc)}", time.perf_counter() - t0
    return out, "ok", "", time.perf_counter() - t0


def evaluate_chunk(
    job: Job, chunk: Sequence[tuple[int, Mapping[str, float]]]
) -> list[tuple[int, dict | None, str, str, float]]:
    """Evaluate designs ``[(index, path values), ...]`` in order; one result tuple each."""
    return [(i, *evaluate_design(job, values)) for i, values in chunk]


def warm_stage(name: str, allow_plugins: tuple[str, ...] = ()) -> bool:
    """Import a stage's modules in a worker before the first design arrives (start-up overlap)."""
    import importlib

    from .stages import _PROBES, get_stage

    get_stage(name, allow_plugins)
    if name in _PROBES:
        try:
            importlib.import_module(_PROBES[name][0])
        except ImportError:
            return False
    return True


def noop_chunk(job: Job, chunk: Sequence[tuple[int, Mapping[str, float]]]) -> list[tuple]:
    """Return at once (benchmarks measure executor overhead per task with it)."""
    return [(i, None, "ok", "", 0.0) for i, _ in chunk]


def _one_line(exc: BaseException) -> str:
    text = exc.one_line() if isinstance(exc, InputError | ConvergenceError) else str(exc)
    return " ".join(text.split())
