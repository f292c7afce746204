"""Read a sweep CSV back (for plots and tolerance statistics) and resolve column names."""

from __future__ import annotations

import csv
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from qhdesign.errors import InputError

from .runner import param_column
from .sink import sidecar_path

__all__ = ["SweepTable", "read_sweep_csv"]

_TEXT_COLUMNS = ("key", "status", "error")


@dataclass(frozen=True)
class SweepTable:
    """Columns of a sweep CSV: numbers as float arrays (empty cells NaN), text as lists."""

    source: str
    columns: tuple[str, ...]
    data: dict[str, np.ndarray]
    meta: dict = field(default_factory=dict)

    def __len__(self) -> int:
        return len(self.data["status"])

    @property
    def ok(self) -> np.ndarray:
        return self.data["status"] == "ok"

    @property
    def parameters(self) -> list[str]:
        """Parameter columns (between ``key`` and the first output)."""
        params = self.meta.get("parameters")
        if params:
            return [param_column(p)[0] for p in params]
        return [c for c in self.columns if c.startswith(("layers.", "surface.", "wafer.", "tol."))]

    @property
    def outputs(self) -> list[str]:
        outs = self.meta.get("outputs")
        if outs:
            return list(outs)
        skip = set(self.parameters) | {"design", "key", "status", "error", "solve_time_s"}
        return [c for c in self.columns if c not in skip]

    def resolve(self, name: str, what: str = "column") -> str:
        """Column of a parameter path or output name (``layers.x.thickness`` finds ``..._nm``)."""
        if name in self.data:
            return name
        cand = param_column(name)[0]
        if cand in self.data:
            return cand
        pref = [c for c in self.columns if c.startswith(name + "_")]
        if len(pref) == 1:
            return pref[0]
        raise InputError(
            f"no {what} '{name}' in the CSV; columns: {', '.join(self.parameters + self.outputs)}",
            source=self.source,
        )

    def column(self, name: str) -> np.ndarray:
        return self.data[self.resolve(name)]


def read_sweep_csv(path: str | Path) -> SweepTable:
    """Read a sweep CSV (and its ``.sweep.json`` sidecar when present)."""
    p = Path(path)
    if not p.is_file():
        raise InputError("sweep CSV not found", source=str(p))
    with open(p, encoding="utf-8", newline="") as fh:
        text = fh.read()
    if not text.endswith("\n"):  # a torn last line of a killed sweep: ignore it
        text = text[: text.rfind("\n") + 1]
    rows = list(csv.reader(text.splitlines()))
    if not rows or "status" not in rows[0]:
        raise InputError("not a sweep CSV (no header with a 'status' column)", source=str(p))
    header = rows[0]
    body = [r for r in rows[1:] if len(r) == len(header)]
    cols: dict[str, np.ndarray] = {}
    for j, name in enumerate(header):
        vals = [r[j] for r in body]
        if name in _TEXT_COLUMNS:
            cols[name] = np.array(vals, dtype=object)
            continue
        try:
            cols[name] = np.array([float(v) if v != "" else math.nan for v in vals])
        except ValueError:
            cols[name] = np.array(vals, dtype=object)
    meta = {}
    side = sidecar_path(p)
    if side.is_file():
        try:
            meta = json.loads(side.read_text())
        except ValueError:
            meta = {}
    return SweepTable(str(p), tuple(header), cols, meta)
