"""Form factors of a quasi-2D electron layer: the well's own |psi(z)|^2 weighs the Coulomb
potential of charges at other depths, and of its own electrons (screening).

F(q, z_i) = int |psi(z)|^2 exp(-q |z - z_i|) dz (a unit charge at depth z_i);
F_s(q) = int int |psi(z)|^2 |psi(z')|^2 exp(-q |z - z'|) dz dz' (screening);
int F(q, z_i)^2 dz_i over a layer (a uniform density of charges in it).
Derivations in ``docs/disorder.md``, section 2.

References
----------
T. Ando, A. B. Fowler and F. Stern, Rev. Mod. Phys. 54, 437 (1982).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["WellProfile"]


@dataclass(frozen=True)
class WellProfile:
    """A normalised density |psi(z)|^2 on a uniform grid ``z0 + h*j`` (zero outside).

    Parameters
    ----------
    z0_m, h_m
        First node and spacing (m).
    rho_m
        |psi|^2 at the nodes (m^-1), trapezoid-normalised to 1.
    """

    z0_m: float
    h_m: float
    rho_m: np.ndarray

    @classmethod
    def from_samples(cls, z, rho, *, spacing_m: float = 0.25e-9, cut: float = 1e-7) -> WellProfile:
        """Resample a density given on any grid (trimmed where it is below ``cut`` of its peak)."""
        z = np.asarray(z, float)
        rho = np.clip(np.asarray(rho, float), 0.0, None)
        keep = np.nonzero(rho > cut * rho.max())[0]
        i0, i1 = max(keep[0] - 1, 0), min(keep[-1] + 1, len(z) - 1)
        n = max(math.ceil((z[i1] - z[i0]) / spacing_m), 8) + 1
        zz = np.linspace(z[i0], z[i1], n)
        r = np.interp(zz, z, rho)
        h = zz[1] - zz[0]
        return cls(float(zz[0]), float(h), r / float(_trapz(r, h)))

    @property
    def z_m(self) -> np.ndarray:
        return self.z0_m + self.h_m * np.arange(len(self.rho_m))

    @property
    def z_end_m(self) -> float:
        return self.z0_m + self.h_m * (len(self.rho_m) - 1)

    def grid_form_factor(self, q) -> np.ndarray:
        """F(q, z_j) = int rho(z) exp(-q|z - z_j|) dz at every node z_j, shape (Q, N)."""
        from scipy.signal import fftconvolve  # scipy.signal only when an estimate is made

        q = np.atleast_1d(np.asarray(q, float))
        n = len(self.rho_m)
        k = np.abs(np.arange(-(n - 1), n)) * self.h_m
        kernel = np.exp(-q[:, None] * k[None, :])
        wr = self.rho_m * self.h_m
        wr = wr.copy()
        wr[[0, -1]] *= 0.5  # trapezoid
        full = fftconvolve(np.broadcast_to(wr, (len(q), n)), kernel, mode="full", axes=1)
        return full[:, n - 1 : 2 * n - 1]

    def form_factor(self, q, z_imp, grid_ff: np.ndarray | None = None) -> np.ndarray:
        """F(q, z_i) for impurities at depths ``z_imp`` (m), shape (Q, M).

        Outside the profile the exact continuation exp(-q * distance) * F(q, edge) is used;
        inside, linear interpolation between the nodes.
        """
        q = np.atleast_1d(np.asarray(q, float))
        zi = np.atleast_1d(np.asarray(z_imp, float))
        g = self.grid_form_factor(q) if grid_ff is None else grid_ff
        n = len(self.rho_m)
        out = np.empty((len(q), len(zi)))
        above = zi <= self.z0_m
        below = zi >= self.z_end_m
        inside = ~(above | below)
        out[:, above] = g[:, :1] * np.exp(-q[:, None] * (self.z0_m - zi[None, above]))
        out[:, below] = g[:, -1:] * np.exp(-q[:, None] * (zi[None, below] - self.z_end_m))
        if inside.any():
            s = (zi[inside] - self.z0_m) / self.h_m
            j = np.clip(np.floor(s).astype(int), 0, n - 2)
            t = s - j
            out[:, inside] = g[:, j] * (1.0 - t) + g[:, j + 1] * t
        return out

    def screening_form_factor(self, q, grid_ff: np.ndarray | None = None) -> np.ndarray:
        """F_s(q) = int int rho(z) rho(z') exp(-q|z - z'|) dz dz', shape (Q,)."""
        g = self.grid_form_factor(q) if grid_ff is None else grid_ff
        return _trapz(g * self.rho_m, self.h_m)

    def squared_layer_integral(self, q, z_a, z_b, grid_ff: np.ndarray | None = None):
        """int_{z_a}^{z_b} F(q, z_i)^2 dz_i (m), shape (Q,): a uniform impurity layer."""
        q = np.atleast_1d(np.asarray(q, float))
        g = self.grid_form_factor(q) if grid_ff is None else grid_ff
        out = np.zeros(len(q))
        lo, hi = min(z_b, self.z0_m), max(z_a, self.z_end_m)
        if z_a < lo:  # part above the profile: F = F(z0) exp(-q (z0 - z))
            out += (
                g[:, 0] ** 2
                * (np.exp(-2 * q * (self.z0_m - lo)) - np.exp(-2 * q * (self.z0_m - z_a)))
                / (2 * q)
            )
        if z_b > hi:
            out += (
                g[:, -1] ** 2
                * (np.exp(-2 * q * (hi - self.z_end_m)) - np.exp(-2 * q * (z_b - self.z_end_m)))
                / (2 * q)
            )
        z = self.z_m
        m = (z >= z_a) & (z <= z_b)
        if m.sum() >= 2:
            out += _trapz(g[:, m] ** 2, self.h_m)
        return out


def _trapz(y: np.ndarray, h: float):
    """Trapezoid rule on a uniform grid along the last axis."""
    return h * (np.sum(y, axis=-1) - 0.5 * (y[..., 0] + y[..., -1]))
