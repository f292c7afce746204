"""One error hierarchy for qhdesign.

Every error a user can cause (a bad stack file, a bad option) is a :class:`QHDesignError`.
The CLI turns these into a single line and exit code 2; anything else is a bug and keeps
its traceback.
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = [
    "ConvergenceError",
    "InputError",
    "QHDesignError",
    "StackError",
    "one_line",
]


#: Longest word (a run without spaces) an error line echoes; longer ones are cut in the middle.
MAX_WORD_CHARS = 120
#: Longest error line; a longer one keeps its start and its end (where the allowed range is).
MAX_LINE_CHARS = 600


def one_line(text: object) -> str:
    """``text`` folded onto one line, echoed values cut so that the line stays readable.

    A 900 kB value must not become a 900,000-character line: every word longer than
    :data:`MAX_WORD_CHARS` keeps its first 60 and last 20 characters, and a line longer than
    :data:`MAX_LINE_CHARS` keeps its first 400 and last 180 characters.
    """
    words = []
    for w in str(text).split():
        if len(w) > MAX_WORD_CHARS:
            w = f"{w[:60]}...[{len(w)} characters]...{w[-20:]}"
        words.append(w)
    line = " ".join(words)
    if len(line) > MAX_LINE_CHARS:
        line = f"{line[:400]} ...[{len(line) - 580} characters cut]... {line[-180:]}"
    return line


class QHDesignError(Exception):
    """Base class of every error qhdesign raises on purpose."""


class InputError(QHDesignError, ValueError):
    """Bad user input: names where it came from (file and key, or option) and what is allowed.

    Parameters
    ----------
    message
        What is wrong and what is allowed.
    source
        The file path or ``"option --name"`` the value came from, if known.
    key
        Dotted key path inside the source (``layers.spacer.thickness``), if any. Physics
        functions raise with ``source=None`` and ``key`` = their own argument name
        (``gate_voltage_V``); the command line and the sweep translate that into the option or
        the spec key the user wrote.
    related
        Other argument names the broken rule involves (a ring width that does not fit the
        radius): the front end names the one the user actually gave.
    """

    def __init__(
        self,
        message: str,
        *,
        source: str | None = None,
        key: str | None = None,
        related: tuple[str, ...] = (),
    ):
        self.message = message
        self.source = source
        self.key = key
        #: other argument names the rule involves (a front end names the one the user gave)
        self.related = tuple(related)
        super().__init__(self.one_line())

    def one_line(self) -> str:
        where = []
        if self.source:
            where.append(str(self.source))
        if self.key:
            where.append(f"key '{self.key}'")
        prefix = ": ".join(where)
        text = f"{prefix}: {self.message}" if prefix else self.message
        return one_line(text)


class StackError(InputError):
    """A layer-stack file (or a parameter set on a stack) is invalid."""


class MeshError(QHDesignError, RuntimeError):
    """A generated mesh failed its own check (it does not cover the domain or a gate): the
    geometry or the mesh settings are to blame, and nothing is solved on it."""


class ConvergenceError(QHDesignError, RuntimeError):
    """An iterative solver did not converge.

    Parameters
    ----------
    solver
        Which solver (``"1D Schrödinger–Poisson"``, ``"2D Thomas–Fermi Newton"``).
    iterations
        Iterations done before giving up.
    residuals
        Residual history, one value per iteration, in the units ``residual_unit`` names.
    """

    def __init__(
        self,
        solver: str,
        iterations: int,
        residuals: Sequence[float],
        residual_unit: str = "",
        reason: str = "",
    ):
        self.solver = solver
        self.iterations = int(iterations)
        self.residuals = [float(r) for r in residuals]
        self.residual_unit = residual_unit
        self.reason = reason
        super().__init__(self.one_line())

    def one_line(self) -> str:
        hist = ", ".join(f"{r:.3g}" for r in self.residuals[-8:])
        more = "... " if len(self.residuals) > 8 else ""
        unit = f" {self.residual_unit}" if self.residual_unit else ""
        why = f" ({self.reason})" if self.reason else ""
        return (
            f"{self.solver} did not converge after {self.iterations} iterations{why}; "
            f"residual history{unit}: {more}{hist}"
        )
