"""Parameter spaces: full grid, zipped lists and Latin hypercube over parameter paths.

A space yields designs one by one (never a list of all of them), so a grid of 10^6 points costs
no memory. Each design is a ``dict[path, SI float]`` in a fixed, documented order; the order
never depends on the executor, which is what makes serial and parallel CSVs identical.

Ordering
--------
* grid: the last parameter varies fastest (``itertools.product`` order, parameters in the order
  they appear in the spec).
* zip: design ``i`` takes the ``i``-th value of every list.
* Latin hypercube: design ``i`` is row ``i`` of the sample drawn with the spec's seed.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "GridSpace",
    "LatinHypercubeSpace",
    "LinkedSpace",
    "Range",
    "ZipSpace",
    "latin_hypercube",
]


@dataclass(frozen=True)
class Range:
    """A continuous range of one parameter, in SI units.

    ``scale`` is ``"linear"`` or ``"log"`` (log needs both ends > 0; used for doping densities).
    """

    path: str
    low: float
    high: float
    scale: str = "linear"

    def points(self, steps: int) -> tuple[float, ...]:
        """``steps`` evenly spaced values from ``low`` to ``high`` inclusive (both ends exact)."""
        if steps == 1:
            return (self.low,)
        if self.scale == "log":
            vals = np.geomspace(self.low, self.high, steps)
        else:
            vals = np.linspace(self.low, self.high, steps)
        vals[0], vals[-1] = self.low, self.high
        return tuple(float(v) for v in vals)

    def map_unit(self, u: np.ndarray) -> np.ndarray:
        """Map numbers in [0, 1) onto the range (uniform in value, or in log value)."""
        if self.scale == "log":
            return np.exp(math.log(self.low) + u * (math.log(self.high) - math.log(self.low)))
        return self.low + u * (self.high - self.low)


@dataclass(frozen=True)
class GridSpace:
    """Full factorial grid: every combination of every parameter's values."""

    paths: tuple[str, ...]
    values: tuple[tuple[float, ...], ...]

    def __len__(self) -> int:
        return math.prod(len(v) for v in self.values)

    def __iter__(self) -> Iterator[dict[str, float]]:
        for combo in itertools.product(*self.values):
            yield dict(zip(self.paths, combo, strict=True))

    def corners(self) -> Iterator[dict[str, float]]:
        """The first/last value combinations (all 2^d corners up to d = 10, else the two ends)."""
        ends = [(v[0], v[-1]) if len(v) > 1 else (v[0],) for v in self.values]
        if len(self.paths) <= 10:
            for combo in itertools.product(*ends):
                yield dict(zip(self.paths, combo, strict=True))
        else:
            yield dict(zip(self.paths, (e[0] for e in ends), strict=True))
            yield dict(zip(self.paths, (e[-1] for e in ends), strict=True))


@dataclass(frozen=True)
class ZipSpace:
    """Zipped lists: design ``i`` takes value ``i`` of every parameter (lists of equal length)."""

    paths: tuple[str, ...]
    values: tuple[tuple[float, ...], ...]

    def __len__(self) -> int:
        return len(self.values[0]) if self.values else 0

    def __iter__(self) -> Iterator[dict[str, float]]:
        for combo in zip(*self.values, strict=True):
            yield dict(zip(self.paths, combo, strict=True))

    def corners(self) -> Iterator[dict[str, float]]:
        yield from self


def latin_hypercube(n: int, d: int, seed: int) -> np.ndarray:
    """Latin hypercube sample of ``n`` points in ``[0, 1)^d``.

    Each axis is cut into ``n`` equal strata and every stratum holds exactly one point, at a
    uniformly random position inside it; the strata are paired across axes by independent random
    permutations (McKay, Beckman, Conover, Technometrics 21, 239 (1979)).

    Returns
    -------
    ndarray, shape (n, d)
    """
    rng = np.random.default_rng(seed)
    u = rng.random((n, d))
    out = np.empty((n, d))
    for j in range(d):
        out[:, j] = (rng.permutation(n) + u[:, j]) / n
    return out


@dataclass(frozen=True)
class LatinHypercubeSpace:
    """Latin hypercube over continuous ranges, reproducible from ``seed``."""

    ranges: tuple[Range, ...]
    samples: int
    seed: int

    @property
    def paths(self) -> tuple[str, ...]:
        return tuple(r.path for r in self.ranges)

    def __len__(self) -> int:
        return self.samples

    def unit_sample(self) -> np.ndarray:
        return latin_hypercube(self.samples, len(self.ranges), self.seed)

    def __iter__(self) -> Iterator[dict[str, float]]:
        u = self.unit_sample()
        cols = [r.map_unit(u[:, j]) for j, r in enumerate(self.ranges)]
        for i in range(self.samples):
            yield {r.path: float(cols[j][i]) for j, r in enumerate(self.ranges)}

    def repeated_designs(self) -> int:
        """How many samples repeat an earlier one exactly (same values, same row key).

        Continuous draws repeat only where a range is so narrow that floating point cannot tell
        its strata apart; one parameter whose values are all distinct already proves that every
        design is distinct.
        """
        u = self.unit_sample()
        cols = np.column_stack([r.map_unit(u[:, j]) for j, r in enumerate(self.ranges)])
        for j in range(cols.shape[1]):
            if np.unique(cols[:, j]).size == self.samples:
                return 0
        return self.samples - np.unique(cols, axis=0).shape[0]

    def corners(self) -> Iterator[dict[str, float]]:
        lows = {r.path: r.low for r in self.ranges}
        highs = {r.path: r.high for r in self.ranges}
        yield lows
        yield highs


def check_equal_lengths(paths: Sequence[str], values: Sequence[Sequence[float]]) -> str | None:
    """Return a message naming the first path whose list length differs, or None."""
    if not values:
        return None
    n0 = len(values[0])
    for p, v in zip(paths, values, strict=True):
        if len(v) != n0:
            return f"zip lists must have equal lengths: '{paths[0]}' has {n0}, '{p}' has {len(v)}"
    return None


@dataclass(frozen=True)
class LinkedSpace:
    """A space whose linked parameters follow a leader: one value sets several paths.

    ``links`` pairs each leader path of ``inner`` with the paths that take its value (symmetric
    setbacks: ``layers.setback_upper.thickness`` leads, ``layers.setback_lower.thickness``
    follows). Designs carry every path, so the CSV shows the followers too.
    """

    inner: Any
    links: tuple[tuple[str, tuple[str, ...]], ...]

    @property
    def paths(self) -> tuple[str, ...]:
        return tuple(self.inner.paths) + tuple(f for _, fs in self.links for f in fs)

    def __len__(self) -> int:
        return len(self.inner)

    def _expand(self, design: dict[str, float]) -> dict[str, float]:
        out = dict(design)
        for lead, followers in self.links:
            for f in followers:
                out[f] = out[lead]
        return out

    def __iter__(self) -> Iterator[dict[str, float]]:
        return (self._expand(d) for d in self.inner)

    def corners(self) -> Iterator[dict[str, float]]:
        return (self._expand(d) for d in self.inner.corners())
