"""Test stages for the sweep machinery (used by the test suite; plug in as
``"qhdesign.sweep.testing:flaky_stage"``). Not a physics model.

They live in the package, not in ``tests/``, so that worker processes (forkserver, MPI ranks)
can import them exactly as they import a real stage.
"""

from __future__ import annotations

import os as _os
import time

from qhdesign.errors import ConvergenceError, InputError

from .capacitor import capacitor_stage

__all__ = ["flaky_stage"]


def flaky_stage(
    stack,
    path: str = "layers.setback_upper.thickness",
    not_converged_above: float | None = None,
    invalid_above: float | None = None,
    bug_above: float | None = None,
    die_at: float | None = None,
    delay_s: float = 0.0,
    none_above: float | None = None,
    exit_above: float | None = None,
    interrupt_above: float | None = None,
    **options,
) -> dict[str, float]:
    """The capacitor stage, but failing on purpose when ``stack.get(path)`` (SI) exceeds a bound.

    ``not_converged_above`` raises :class:`ConvergenceError`, ``invalid_above`` an
    :class:`InputError`, ``bug_above`` a ``ZeroDivisionError`` (a stage bug); ``die_at`` ends
    the worker process outright (``os._exit``, as a crash in native code or the out-of-memory
    killer would) when the value equals it to 1e-15 relative; ``delay_s`` sleeps before
    returning, so a test can kill a sweep part-way. ``none_above`` returns None (a stage bug),
    ``exit_above`` raises ``SystemExit(3)``, ``interrupt_above`` raises ``KeyboardInterrupt``
    (Ctrl-C in the middle of a serial sweep).
    """
    value = float(stack.get(path))
    if delay_s:
        time.sleep(delay_s)
    if die_at is not None and abs(value - die_at) <= 1e-15 * abs(die_at):
        _os._exit(3)
    if none_above is not None and value > none_above:
        return None  # type: ignore[return-value]
    if exit_above is not None and value > exit_above:
        raise SystemExit(3)
    if interrupt_above is not None and value > interrupt_above:
        raise KeyboardInterrupt
    if bug_above is not None and value > bug_above:
        _ = 1 / 0
    if invalid_above is not None and value > invalid_above:
        raise InputError(f"test stage refuses {path} = {value:g} > {invalid_above:g}", key=path)
    if not_converged_above is not None and value > not_converged_above:
        raise ConvergenceError("test solver", 7, [1.0, 0.5, 0.3], "V")
    out = capacitor_stage(stack, **options)
    out["probe_value"] = value
    return out
