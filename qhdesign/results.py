"""The result protocol every stage result follows, and the table it hands to CSV writers.

Every stage result (``BandsResult``, ``GateResult``, ``CalibrationResult``, ``EdgeResult``,
``PinchoffResult``, ``ConstrictionResult``, ``IslandResult``) has

* ``to_dict()`` -- nested, JSON-ready, SI values with the unit in every key;
* ``summary()`` -- flat ``{column: float}`` with display units in the names (a sweep row);
* ``table()`` -- the result's main profile or sweep as a :class:`Table` (a CSV file).

Front ends (CLI, sweep) only call these three; they build no columns of their own.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

import numpy as np

__all__ = ["StageResult", "Table", "flatten", "nan_if_none"]


@dataclass(frozen=True, eq=False)
class Table:
    """Named columns of equal length: a CSV file.

    Attributes
    ----------
    columns
        Column names with their units (``x_nm``, ``primary_density_cm^-2``).
    rows
        Values, shape (M, len(columns)).
    formats
        Format spec per column for :meth:`to_csv` (default ``.10g`` for every column).

    Examples
    --------
    >>> t = Table(("x_nm", "n_cm^-2"), np.array([[0.0, 1.5e11], [2.0, 2.0e11]]))
    >>> print(t.to_csv(), end="")
    x_nm,n_cm^-2
    0,1.5e+11
    2,2e+11
    >>> cols, rows = t  # unpacks like the (columns, rows) pairs of earlier versions
    """

    columns: tuple[str, ...]
    rows: np.ndarray
    formats: tuple[str, ...] | None = None

    def __post_init__(self):
        rows = np.asarray(self.rows, dtype=float)
        if rows.ndim != 2 or rows.shape[1] != len(self.columns):
            raise ValueError(f"rows of shape {rows.shape} do not fit {len(self.columns)} columns")
        object.__setattr__(self, "columns", tuple(self.columns))
        object.__setattr__(self, "rows", rows)
        if self.formats is not None and len(self.formats) != len(self.columns):
            raise ValueError("one format per column")

    def __iter__(self) -> Iterator[Any]:
        yield list(self.columns)
        yield self.rows

    def column(self, name: str) -> np.ndarray:
        """One column by name, shape (M,)."""
        return self.rows[:, self.columns.index(name)]

    def to_csv(self) -> str:
        """CSV text: a header line, then one line per row."""
        fmts = self.formats or (".10g",) * len(self.columns)
        lines = [",".join(self.columns)]
        for row in self.rows:
            lines.append(",".join(format(v, f) for v, f in zip(row, fmts, strict=True)))
        return "\n".join(lines) + "\n"


@runtime_checkable
class StageResult(Protocol):
    """What every stage result offers (see the module docstring)."""

    def to_dict(self) -> dict: ...

    def summary(self) -> dict[str, float]: ...

    def table(self) -> Table: ...


def flatten(d: dict, prefix: str = "") -> dict[str, float]:
    """Numeric leaves of a nested result dict as ``a.b.c`` keys (lists, text and None dropped).

    Examples
    --------
    >>> flatten({"a": {"b": 1, "c": "text"}, "d": True, "e": [1, 2], "f": None})
    {'a.b': 1.0, 'd': 1.0}
    """
    out: dict[str, float] = {}
    for k, v in d.items():
        name = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(flatten(v, name + "."))
        elif isinstance(v, bool):
            out[name] = float(v)
        elif isinstance(v, int | float):
            out[name] = float(v)
    return out


def nan_if_none(value: float | None) -> float:
    """A value for a flat summary: None becomes NaN.

    >>> nan_if_none(None), nan_if_none(2)
    (nan, 2.0)
    """
    return float("nan") if value is None else float(value)
