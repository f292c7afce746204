"""Growth-tolerance Monte Carlo: how the errors of one MBE run spread a wafer's design.

Growth errors are modelled as they arise, not as independent noise on every number:

* **Source rates.** One relative growth-rate error per group-III source and run, ``e_Ga`` and
  ``e_Al``, applied to every layer. A layer of nominal Al fraction ``x`` grows at the rate
  ``(1 - x) r_Ga + x r_Al``, so its thickness scales by ``g = 1 + (1 - x) e_Ga + x e_Al`` and its
  Al fraction becomes ``x (1 + e_Al) / g``. Thickness errors are therefore correlated within a run,
  and the Al fraction error follows from the two rates.
* **Layer jitter.** A smaller independent relative thickness error per layer (shutter timing,
  rate drift within the run): thickness scales by ``1 + j_layer``.
* **Doping cells.** One relative calibration error per dopant cell, applied to every layer that
  cell dopes. By default every doped layer comes from one Si cell (the stack's ``donor`` key is
  the ionisation model of the same Si, not a separate cell); ``doping_cells`` maps layers to
  named cells when a machine has more than one. A sheet (delta) doping is flux x time, so it
  scales by ``1 + e_cell``; a volume doping is flux / growth rate, so it scales by
  ``(1 + e_cell) / g``.
* **Surface barrier.** An additive spread of the pinned surface barrier (surface preparation).

The user states the tolerances as the grower quotes them (1-sigma, "common practice" defaults):
thickness 1.5 % (total, of a GaAs layer), Al fraction 0.007 absolute (at ``x_ref = 0.3``), doping
7 %, surface barrier 0.1 eV, and the share of the thickness error that is per-layer jitter (0.5 %).
The source-rate sigmas follow, to first order in the errors:

* ``sigma_Ga = sqrt(sigma_t^2 - sigma_j^2)`` (a GaAs layer has ``g = 1 + e_Ga``),
* ``sigma_Al = sqrt((sigma_x / (x_ref (1 - x_ref)))^2 - sigma_Ga^2)``, since
  ``dx = x (1 - x) (e_Al - e_Ga)`` to first order.

Sample ``i`` draws its normal deviates from ``numpy.random.default_rng([seed, i])``, so any sample
can be regenerated alone (resume, MPI) and the draws never depend on the executor.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import electron_volt

from qhdesign.errors import InputError

__all__ = [
    "GrowthMonteCarlo",
    "TolerancePlan",
    "criteria_fraction",
    "percentiles",
    "sensitivity",
]


@dataclass(frozen=True)
class TolerancePlan:
    """1-sigma growth tolerances (defaults: common practice for a calibrated MBE system).

    Parameters
    ----------
    thickness
        Total relative thickness error of a GaAs layer (0.015 = 1.5 %).
    layer_jitter
        Per-layer part of the thickness error (relative); must be below ``thickness``.
    al_fraction
        Absolute Al-fraction error at ``al_reference_x``.
    al_reference_x
        The Al fraction at which ``al_fraction`` is quoted (0 < x < 1).
    doping
        Relative calibration error of each dopant cell.
    surface_barrier
        Spread of the surface barrier, J.
    """

    thickness: float = 0.015
    layer_jitter: float = 0.005
    al_fraction: float = 0.007
    al_reference_x: float = 0.3
    doping: float = 0.07
    surface_barrier: float = 0.1 * electron_volt

    def __post_init__(self) -> None:
        for name in ("thickness", "layer_jitter", "al_fraction", "doping", "surface_barrier"):
            v = getattr(self, name)
            if not (math.isfinite(v) and v >= 0):
                raise InputError(
                    f"must be a finite number >= 0, got {v!r}", key=f"tolerance.{name}"
                )
        if not 0 < self.al_reference_x < 1:
            raise InputError(
                f"must lie in (0, 1), got {self.al_reference_x!r}", key="tolerance.al_reference_x"
            )
        if self.layer_jitter > self.thickness:
            raise InputError(
                f"layer jitter {self.layer_jitter} exceeds the total thickness tolerance "
                f"{self.thickness}; allowed 0 <= layer_jitter <= thickness",
                key="tolerance.layer_jitter",
            )
        if self.al_fraction / self._xx() < self.sigma_ga:
            raise InputError(
                f"Al-fraction tolerance {self.al_fraction} is smaller than the Ga-rate error alone "
                f"gives at x = {self.al_reference_x} "
                f"({self.sigma_ga * self._xx():.4g}); raise it or lower tolerance.thickness",
                key="tolerance.al_fraction",
            )

    def _xx(self) -> float:
        return self.al_reference_x * (1.0 - self.al_reference_x)

    @property
    def sigma_ga(self) -> float:
        """Relative 1-sigma error of the Ga growth rate."""
        return math.sqrt(self.thickness**2 - self.layer_jitter**2)

    @property
    def sigma_al(self) -> float:
        """Relative 1-sigma error of the Al growth rate."""
        return math.sqrt(max((self.al_fraction / self._xx()) ** 2 - self.sigma_ga**2, 0.0))


@dataclass(frozen=True)
class _LayerInfo:
    name: str
    material: str
    x: float
    thickness: float
    doping_kind: str | None
    doping_density: float | None
    donor: str | None


@dataclass(frozen=True)
class GrowthMonteCarlo:
    """The growth-tolerance Monte Carlo space of one stack.

    Iterating yields, per sample, the drawn errors as ``{variable: value}`` (these are the
    parameter columns of the CSV); :meth:`overrides` turns them into parameter-path values.
    """

    layers: tuple[_LayerInfo, ...]
    surface_barrier: float | None
    plan: TolerancePlan
    samples: int
    seed: int
    cells: tuple[str, ...] = field(default=())

    @classmethod
    def from_stack(
        cls,
        stack,
        plan: TolerancePlan,
        samples: int,
        seed: int,
        doping_cells: Mapping[str, str] | None = None,
    ) -> GrowthMonteCarlo:
        """The Monte Carlo of ``stack``; ``doping_cells`` maps doped layer names to cell names
        (default: every doped layer from one cell called ``si``)."""
        doping_cells = dict(doping_cells or {})
        names = [layer.name for layer in stack.layers]
        for lname, cell in doping_cells.items():
            if lname not in names or stack.layer(lname).doping is None:
                raise InputError(
                    f"'{lname}' is not a doped layer of the stack",
                    key=f"tolerance.doping_cells.{lname}",
                )
            if not str(cell).isidentifier():
                raise InputError(
                    f"cell name {cell!r} must be a plain name (letters, digits, _)",
                    key=f"tolerance.doping_cells.{lname}",
                )
        infos = []
        cells: list[str] = []
        for layer in stack.layers:
            dop = layer.doping
            donor = None
            if dop is not None:
                donor = str(doping_cells.get(layer.name, "si"))
                if donor not in cells:
                    cells.append(donor)
            infos.append(
                _LayerInfo(
                    name=layer.name,
                    material=layer.material,
                    x=float(layer.x),
                    thickness=float(layer.thickness),
                    doping_kind=None if dop is None else dop.kind,
                    doping_density=None if dop is None else float(dop.density),
                    donor=donor,
                )
            )
        surface = getattr(stack, "surface", None)
        barrier = getattr(surface, "barrier", None) if surface is not None else None
        return cls(
            layers=tuple(infos),
            surface_barrier=None if barrier is None else float(barrier),
            plan=plan,
            samples=int(samples),
            seed=int(seed),
            cells=tuple(cells),
        )

    # ----------------------------------------------------------------- variables
    @property
    def variables(self) -> tuple[str, ...]:
        """Names of the drawn errors, in draw order (all relative, except the barrier in eV)."""
        names = ["tol.ga_rate", "tol.al_rate"]
        names += [f"tol.doping.{c}" for c in self.cells]
        if self.surface_barrier is not None:
            names.append("tol.surface.barrier_eV")
        names += [f"tol.jitter.{layer.name}" for layer in self.layers]
        return tuple(names)

    def sigmas(self) -> np.ndarray:
        """1-sigma of every variable, in :attr:`variables` order."""
        p = self.plan
        s = [p.sigma_ga, p.sigma_al] + [p.doping] * len(self.cells)
        if self.surface_barrier is not None:
            s.append(p.surface_barrier / electron_volt)
        s += [p.layer_jitter] * len(self.layers)
        return np.asarray(s)

    def draw(self, i: int) -> np.ndarray:
        """The errors of sample ``i`` (independent of every other sample)."""
        rng = np.random.default_rng([self.seed, int(i)])
        return rng.standard_normal(len(self.variables)) * self.sigmas()

    def __len__(self) -> int:
        return self.samples

    def __iter__(self) -> Iterator[dict[str, float]]:
        names = self.variables
        for i in range(self.samples):
            yield dict(zip(names, (float(v) for v in self.draw(i)), strict=True))

    def corners(self) -> Iterator[dict[str, float]]:
        """Validation designs: +-4 sigma on every variable at once, both signs."""
        names = self.variables
        for sign in (-4.0, 4.0):
            yield dict(zip(names, (float(v) for v in sign * self.sigmas()), strict=True))

    # ----------------------------------------------------------------- apply
    def overrides(self, errors: Mapping[str, float]) -> dict[str, float]:
        """Parameter-path values (SI) of the grown stack for one sample's errors."""
        e_ga = errors["tol.ga_rate"]
        e_al = errors["tol.al_rate"]
        out: dict[str, float] = {}
        for layer in self.layers:
            x = (
                layer.x
                if layer.material == "AlGaAs"
                else (1.0 if layer.material == "AlAs" else 0.0)
            )
            g = 1.0 + (1.0 - x) * e_ga + x * e_al
            jit = errors[f"tol.jitter.{layer.name}"]
            out[f"layers.{layer.name}.thickness"] = layer.thickness * g * (1.0 + jit)
            if layer.material == "AlGaAs":
                out[f"layers.{layer.name}.x"] = min(max(x * (1.0 + e_al) / g, 0.0), 1.0)
            if layer.doping_kind is not None:
                e_d = errors[f"tol.doping.{layer.donor}"]
                if layer.doping_kind == "volume":
                    value = layer.doping_density * (1.0 + e_d) / g
                else:
                    value = layer.doping_density * (1.0 + e_d)
                out[f"layers.{layer.name}.doping.{layer.doping_kind}"] = value
        if self.surface_barrier is not None:
            out["surface.barrier"] = (
                self.surface_barrier + errors["tol.surface.barrier_eV"] * electron_volt
            )
        return out


# --------------------------------------------------------------------- analysis
def percentiles(values: np.ndarray, qs: Sequence[float] = (5.0, 50.0, 95.0)) -> dict[str, float]:
    """P5, P50, P95 (numpy's default linear interpolation) of the finite values."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return {f"P{q:g}": math.nan for q in qs}
    return {f"P{q:g}": float(p) for q, p in zip(qs, np.percentile(v, qs), strict=True)}


def criteria_fraction(
    columns: Mapping[str, np.ndarray], ok: np.ndarray, criteria: Mapping[str, tuple[float, float]]
) -> float:
    """Fraction of all samples that solved (``ok``) and meet every ``min <= value <= max``.

    Failed samples count as not meeting the criteria (a wafer does not get to retry).
    """
    good = np.asarray(ok, dtype=bool).copy()
    for name, (lo, hi) in criteria.items():
        v = np.asarray(columns[name], dtype=float)
        with np.errstate(invalid="ignore"):
            good &= np.isfinite(v) & (v >= lo) & (v <= hi)
    return float(good.mean()) if good.size else math.nan


def sensitivity(x: np.ndarray, y: np.ndarray, names: Sequence[str]) -> list[tuple[str, float]]:
    """Rank the inputs by how strongly each moves ``y``: standardized regression coefficients.

    Fits ``y`` linearly on all inputs at once (least squares) and scales each slope by
    ``std(x_j) / std(y)``; for a linear response the squares of these coefficients are the
    shares of the output variance due to each input (Saltelli et al., Global Sensitivity
    Analysis: The Primer, Wiley 2008, sec. 1.2.5).

    Parameters
    ----------
    x : ndarray, shape (n, k)
    y : ndarray, shape (n,)

    Returns
    -------
    list of (name, SRC), sorted by decreasing ``|SRC|``; constant inputs are left out.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    keep = np.isfinite(y) & np.all(np.isfinite(x), axis=1)
    x, y = x[keep], y[keep]
    if y.size < 3:
        return []
    sx = x.std(axis=0)
    sy = y.std()
    use = sx > 0
    if x.shape[0] <= use.sum() + 1 or sy == 0:
        return []
    xs = (x[:, use] - x[:, use].mean(axis=0)) / sx[use]
    ys = (y - y.mean()) / sy
    coef, *_ = np.linalg.lstsq(xs, ys, rcond=None)
    used = [n for n, u in zip(names, use, strict=True) if u]
    ranked = sorted(zip(used, (float(c) for c in coef), strict=True), key=lambda t: -abs(t[1]))
    return ranked
