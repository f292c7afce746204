"""Tolerance statistics of a Monte Carlo sweep CSV: percentiles, yield, sensitivity ranking."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from .table import SweepTable
from .tolerance import criteria_fraction, percentiles, sensitivity

__all__ = ["ToleranceReport", "analyze_tolerance"]


@dataclass(frozen=True)
class ToleranceReport:
    """Per output: P5/P50/P95 over the solved samples and the inputs ranked by |SRC|."""

    samples: int
    solved: int
    stats: dict[str, dict[str, float]]
    ranking: dict[str, list[tuple[str, float]]]
    criteria: dict[str, tuple[float, float]]
    yield_fraction: float | None

    def to_dict(self) -> dict:
        return {
            "samples": self.samples,
            "solved": self.solved,
            "percentiles": self.stats,
            "sensitivity_src": {k: [[n, c] for n, c in v] for k, v in self.ranking.items()},
            "criteria": {k: list(v) for k, v in self.criteria.items()},
            "fraction_meeting_criteria": self.yield_fraction,
        }

    def lines(self, top: int = 3) -> list[str]:
        out = [f"{self.solved} of {self.samples} samples solved"]
        width = max((len(k) for k in self.stats), default=10)
        out.append(f"{'output':<{width}}  {'P5':>12} {'P50':>12} {'P95':>12}  most sensitive to")
        for name, st in self.stats.items():
            rank = ", ".join(
                f"{n.removeprefix('tol.')} {c:+.2f}" for n, c in self.ranking.get(name, [])[:top]
            )
            out.append(
                f"{name:<{width}}  {st['P5']:>12.5g} {st['P50']:>12.5g} {st['P95']:>12.5g}  {rank}"
            )
        if self.criteria:
            crit = "; ".join(f"{lo:g} <= {k} <= {hi:g}" for k, (lo, hi) in self.criteria.items())
            out.append(f"meeting all criteria ({crit}): {100 * self.yield_fraction:.1f} %")
        return out


def analyze_tolerance(
    table: SweepTable, criteria: Mapping[str, tuple[float, float]] | None = None
) -> ToleranceReport:
    """Percentiles, fraction meeting ``criteria`` and SRC sensitivity ranking of every output."""
    ok = table.ok
    tol_cols = [c for c in table.parameters if c.startswith("tol.")]
    x = np.column_stack([table.data[c] for c in tol_cols]) if tol_cols else np.empty((len(ok), 0))
    stats, ranking = {}, {}
    for name in table.outputs:
        col = table.data.get(name)
        if col is None or col.dtype == object:
            continue
        stats[name] = percentiles(col[ok])
        if tol_cols:
            ranking[name] = sensitivity(x[ok], col[ok], tol_cols)
    crit = dict(criteria if criteria is not None else table.meta.get("criteria", {}))
    # an open bound is stored as null in the (strict JSON) sidecar
    crit = {
        table.resolve(k, "output"): (
            -np.inf if v[0] is None else float(v[0]),
            np.inf if v[1] is None else float(v[1]),
        )
        for k, v in crit.items()
    }
    frac = criteria_fraction(table.data, ok, crit) if crit else None
    return ToleranceReport(len(ok), int(ok.sum()), stats, ranking, crit, frac)
