"""Island figure: the potentials u_I (edge ring at 1 V) and u_L (bulk at 1 V) in the r-z plane."""

from __future__ import annotations

import numpy as np

__all__ = ["plot_island"]


def plot_island(result, axes=None):
    """Two maps, u_I and u_L, around the island (needs ``solve_island(..., keep_potentials=True)``).

    Parameters
    ----------
    result
        :class:`qhdesign.island.IslandResult` with its solution kept.
    axes
        Optional pair of matplotlib axes.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt

    sol = result.solution
    if sol is None or sol.potentials is None:
        raise ValueError("solve the island with keep_potentials=True to plot it")
    if axes is None:
        fig, axes = plt.subplots(2, 1, figsize=(8.0, 6.5), constrained_layout=True)
    else:
        fig = axes[0].figure
    g = result.geometry
    r_nm, z_nm = sol.r_m * 1e9, sol.z_m * 1e9
    rmax = 1.3 * g.gate_radius_m * 1e9
    zp = result.primary_depth_m * 1e9
    zmax = min(z_nm[-1], 2.2 * zp)
    rs = np.arange(r_nm.size) <= np.searchsorted(r_nm, rmax)  # one node past the window
    zs = np.arange(z_nm.size) <= np.searchsorted(z_nm, zmax)
    for ax, name in zip(axes, ("I", "L"), strict=True):
        u = sol.potentials[sol.names.index(name)]
        mesh = ax.pcolormesh(
            r_nm[rs], z_nm[zs], u[np.ix_(zs, rs)], shading="gouraud", cmap="viridis", vmin=0, vmax=1
        )
        fig.colorbar(mesh, ax=ax, label=f"u_{name} (V)")
        for sheet, d in result.sheets.items():
            lo = d["r_from_m"] * 1e9
            ax.plot([lo, rmax], [d["z_m"] * 1e9] * 2, color="w", lw=0.8, ls="--")
            ax.text(max(lo, 0) + 5, d["z_m"] * 1e9 - 3, sheet, color="w", fontsize=7)
        ax.plot([g.gate_radius_m * 1e9, rmax], [0, 0], color="goldenrod", lw=5)
        ax.set_ylim(zmax, 0)
        ax.set_xlim(0, rmax)
        ax.set_xlabel("r (nm)")
        ax.set_ylabel("depth (nm)")
        title = "edge ring I" if name == "I" else "bulk L"
        ax.set_title(f"{title} at 1 V, everything else at the Fermi level", fontsize=10)
    return fig
