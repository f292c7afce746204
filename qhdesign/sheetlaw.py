"""Sheet laws: a well's sheet density against the electrostatic potential at its sheet.

The FEM stages reduce every quantum well to a charged sheet. By default the sheet is a
Thomas–Fermi sheet with a constant density of states (a closed form the weak form evaluates
itself). A :class:`SheetLaw` replaces that closed form by any monotone relation n(x), tabulated
on knots and interpolated with a monotone cubic (Fritsch–Carlson, as scipy's
``PchipInterpolator``), so that its slope dn/dx is continuous and Newton converges:

- a table from gated 1D Schrödinger–Poisson solves (:mod:`qhdesign.sp1d.sheet_tables`): the
  well's electrons, wavefunction tails included, against the potential at its sheet;
- a Thomas–Fermi sheet with exchange and correlation (built by helpers elsewhere);

The argument x is phi - E (V): the potential at the sheet minus the sheet's offset E, which the
FEM stage calibrates so that the far field holds the 1D density. A law is ``absolute`` when its
x is already the potential in the 1D stage's convention (a table from gated 1D solves): an empty
well then keeps offset 0. Otherwise x is relative to the subband edge (n = 0 far below x = 0)
and an empty well is placed by its 1D subband energy, like the closed-form sheet.

Below the first knot the density is that of the first knot (normally 0); above the last knot
it grows linearly with the last slope (a well that fills further keeps its last compressibility).

numpy and scipy only.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from qhdesign.errors import InputError

__all__ = ["SheetLaw"]


@dataclass(frozen=True, eq=False)
class SheetLaw:
    """Monotone sheet density n(x) (m^-2) of x = phi - E (V).

    Attributes
    ----------
    x_V
        Knots (V), strictly increasing, shape (M,), M >= 2.
    density_m2
        Density at the knots (m^-2), non-decreasing, >= 0.
    absolute
        True if x is the potential in the 1D convention (offset 0 for an empty well).
    label
        What the law is (for reports): e.g. ``"1D table"``, ``"TF + HF exchange"``.
    reported_m2
        Optional density to report at the knots (m^-2) when it differs from the sheet's charge:
        a 1D table's sheet carries the electrons of the well's subbands, tails included, and
        reports those inside the well layer. None: report ``density_m2``.
    centroid_m
        Optional charge centroid at the knots (m), read by linear interpolation (held beyond
        the ends): where a sheet whose charge moves with its density puts it. None: fixed.
    """

    x_V: np.ndarray
    density_m2: np.ndarray
    absolute: bool = False
    label: str = "tabulated"
    reported_m2: np.ndarray | None = None
    centroid_m: np.ndarray | None = None
    _pchip: object = field(init=False, repr=False)

    def __post_init__(self):
        from scipy.interpolate import PchipInterpolator

        x = np.asarray(self.x_V, dtype=float)
        n = np.asarray(self.density_m2, dtype=float)
        if x.ndim != 1 or x.size < 2 or n.shape != x.shape:
            raise InputError("a sheet law needs >= 2 knots and one density per knot", key="x_V")
        if np.any(np.diff(x) <= 0) or not np.all(np.isfinite(x)):
            raise InputError("sheet-law knots must increase strictly", key="x_V")
        if np.any(n < 0) or np.any(np.diff(n) < 0) or not np.all(np.isfinite(n)):
            raise InputError(
                "sheet-law densities must be >= 0 and non-decreasing", key="density_m2"
            )
        object.__setattr__(self, "x_V", x)
        object.__setattr__(self, "density_m2", n)
        object.__setattr__(self, "_pchip", PchipInterpolator(x, n, extrapolate=False))
        if self.centroid_m is not None:
            c = np.asarray(self.centroid_m, dtype=float)
            if c.shape != x.shape or not np.all(np.isfinite(c)):
                raise InputError("one centroid per knot", key="centroid_m")
            object.__setattr__(self, "centroid_m", c)
        if self.reported_m2 is not None:
            r = np.asarray(self.reported_m2, dtype=float)
            if r.shape != x.shape or not np.all(np.isfinite(r)):
                raise InputError("one reported density per knot", key="reported_m2")
            object.__setattr__(self, "reported_m2", r)

    def reported(self, x) -> np.ndarray:
        """The density to report at x (m^-2): ``reported_m2`` scaled by the charge the law
        holds there (the ratio interpolated), else the density itself."""
        n = self.density(x)
        if self.reported_m2 is None:
            return n
        # the ratio where the charge is well defined (above 1e-4 of its largest value), held
        # at its first such value below (an emptying well keeps the shape it had)
        top = self.density_m2 > 1e-4 * float(self.density_m2.max())
        ratio = np.ones_like(self.x_V)
        ratio[top] = self.reported_m2[top] / self.density_m2[top]
        if np.any(top):
            ratio[~top] = ratio[top][0]
        return n * np.interp(np.asarray(x, dtype=float), self.x_V, ratio)

    @property
    def top_slope(self) -> float:
        """dn/dx at the last knot (m^-2/V), the slope used above the table."""
        return float(self._pchip.derivative()(self.x_V[-1]))

    def density(self, x) -> np.ndarray:
        """n(x) (m^-2), any shape."""
        x = np.asarray(x, dtype=float)
        lo, hi = self.x_V[0], self.x_V[-1]
        inside = self._pchip(np.clip(x, lo, hi))
        above = self.density_m2[-1] + self.top_slope * (x - hi)
        return np.where(x > hi, above, np.where(x < lo, self.density_m2[0], inside))

    def slope(self, x) -> np.ndarray:
        """dn/dx (m^-2/V), any shape; 0 below the first knot."""
        x = np.asarray(x, dtype=float)
        lo, hi = self.x_V[0], self.x_V[-1]
        inside = self._pchip.derivative()(np.clip(x, lo, hi))
        return np.where(x > hi, self.top_slope, np.where(x < lo, 0.0, inside))

    def inverse(self, n_m2: float) -> float:
        """The x (V) at which the law holds ``n_m2`` (> the first knot's density)."""
        from scipy.optimize import brentq

        n = float(n_m2)
        if not n > self.density_m2[0]:
            raise InputError("a sheet law cannot place a density at or below its floor", key="n_m2")
        if n >= self.density_m2[-1]:
            s = self.top_slope
            if not s > 0:
                raise InputError("the sheet law ends flat below this density", key="n_m2")
            return float(self.x_V[-1] + (n - self.density_m2[-1]) / s)
        i = int(np.searchsorted(self.density_m2, n, side="left"))
        a, b = self.x_V[max(i - 1, 0)], self.x_V[i]
        return float(brentq(lambda x: float(self.density(x)) - n, a, b, xtol=1e-15, rtol=1e-14))

    def inverse_reported(self, n_m2: float) -> float:
        """The x (V) at which the law reports ``n_m2`` (> 0); the reported density rises with x
        wherever the charge does."""
        from scipy.optimize import brentq

        if self.reported_m2 is None:
            return self.inverse(n_m2)
        n = float(n_m2)
        if not n > 0:
            raise InputError("a sheet law cannot place a reported density <= 0", key="n_m2")
        lo = float(self.x_V[0])
        hi = float(self.x_V[-1])
        step = max(hi - lo, 1e-3)
        while float(self.reported(hi)) < n:
            if self.top_slope <= 0:
                raise InputError("the sheet law ends flat below this density", key="n_m2")
            hi += step
        if float(self.reported(lo)) >= n:
            return lo
        return float(brentq(lambda x: float(self.reported(x)) - n, lo, hi, xtol=1e-15, rtol=1e-14))

    def centroid(self, x) -> np.ndarray:
        """Charge centroid (m) at x (linear interpolation, held beyond the knots)."""
        if self.centroid_m is None:
            raise InputError("this sheet law has no centroid column", key="centroid_m")
        return np.interp(np.asarray(x, dtype=float), self.x_V, self.centroid_m)

    def centroid_slope(self, x) -> np.ndarray:
        """dc/dx (m/V) of :meth:`centroid` (piecewise constant; 0 beyond the knots)."""
        if self.centroid_m is None:
            raise InputError("this sheet law has no centroid column", key="centroid_m")
        x = np.asarray(x, dtype=float)
        seg = np.diff(self.centroid_m) / np.diff(self.x_V)
        i = np.clip(np.searchsorted(self.x_V, x, side="right") - 1, 0, seg.size - 1)
        inside = (x >= self.x_V[0]) & (x < self.x_V[-1])
        return np.where(inside, seg[i], 0.0)
