"""Figures of the 3D layout stage: per-well density maps in the surface plane.

Each panel is one well's density (cm^-2) on the plane mesh, with the gate outlines, the electronic
island outline of the primary well (and its area in the title), and every constriction's path
marked with its state in that well (green: open, red: pinched).
"""

from __future__ import annotations

import numpy as np

__all__ = ["plot_layout"]


def plot_layout(res, axes=None):
    """Density maps of every well (one panel per well).

    Parameters
    ----------
    res
        A :class:`qhdesign.layout.stage.LayoutResult`.
    axes
        Optional sequence of matplotlib axes, one per well.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt
    from matplotlib.tri import Triangulation

    n_w = len(res.sheet_names)
    if axes is None:
        fig, axes = plt.subplots(1, n_w, figsize=(4.6 * n_w, 4.2), squeeze=False)
        axes = axes[0]
    else:
        fig = axes[0].figure
    um = 1e6
    tri = Triangulation(res.xy_m[:, 0] * um, res.xy_m[:, 1] * um, res.triangles)
    for i, ax in enumerate(axes):
        dens = res.density_m2[i] * 1e-4
        pc = ax.tripcolor(tri, dens, shading="gouraud", cmap="viridis", vmin=0.0)
        fig.colorbar(pc, ax=ax, shrink=0.8, label="density (cm$^{-2}$)")
        for g in res.layout.gates:
            v = np.vstack([g.vertices_m, g.vertices_m[:1]]) * um
            ax.plot(v[:, 0], v[:, 1], color="goldenrod", lw=0.9)
        title = f"{res.sheet_names[i]} ({res.sheet_roles[i]})"
        if i == res.primary and res.outline_m.size:
            for seg in res.outline_m:
                ax.plot(seg[:, 0] * um, seg[:, 1] * um, color="white", lw=1.2)
            title += f"\nisland A = {res.island_area_m2 * 1e12:.3f} um$^2$"
        for c, st in zip(res.layout.constrictions, res.constrictions, strict=True):
            (x0, y0), (x1, y1) = c.path_m
            color = "tab:green" if st.state[i] == "open" else "tab:red"
            ax.plot([x0 * um, x1 * um], [y0 * um, y1 * um], color=color, lw=2.0, ls="--")
            ax.annotate(
                st.state[i],
                (x1 * um, y1 * um),
                color=color,
                fontsize=8,
                ha="center",
                va="bottom",
            )
        ax.set_title(title, fontsize=9)
        ax.set_xlabel("x (um)")
        ax.set_ylabel("y (um)")
        ax.set_aspect("equal")
    fig.tight_layout()
    return fig
