"""Island figure: the potentials u_I (edge ring at 1 V) and u_L (bulk at 1 V) in the r-z plane."""

from __future__ import annotations

import numpy as np

__all__ = ["plot_island", "plot_operating_island"]


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


def plot_operating_island(result, axes=None):
    """The island at its operating point: every sheet's n(r) with the gate and the edge strip;
    with several fields, K_I, K_L, K_IL and K_IL/K_I against B.

    Parameters
    ----------
    result
        :class:`qhdesign.island.stage.IslandOperatingResult`.
    axes
        Optional matplotlib axes (one, or two with a field range).

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt

    many = len(result.points) > 1
    if axes is None:
        fig, axes = plt.subplots(
            2 if many else 1, 1, figsize=(8.0, 7.0 if many else 3.8), constrained_layout=True
        )
    axes = list(np.atleast_1d(axes))
    fig = axes[0].figure
    op, p = result.operating, result.point
    r_nm = op.r_m * 1e9
    ax = axes[0]
    for i, s in enumerate(op.section.sheets):
        ax.plot(r_nm, op.solution.density_m2[i] * 1e-15, label=f"{s.name} ({s.role})")
    g0 = op.gate_radius_m * 1e9
    ax.axvspan(
        g0, g0 + result.device.gate_width_m * 1e9, color="goldenrod", alpha=0.25, label="ring gate"
    )
    ax.axvspan(
        p.strip.inner_radius_m * 1e9,
        p.strip.outer_radius_m * 1e9,
        color="C3",
        alpha=0.3,
        label="compressible edge strip",
    )
    ax.set_xlim(0, g0 + 1.5 * result.device.gate_width_m * 1e9)
    ax.set_xlabel("r (nm)")
    ax.set_ylabel("n (1e11 cm^-2)")
    ax.set_title(
        f"gate {result.device.gate_voltage_V:g} V, R_gate {g0:.0f} nm, interfering edge at "
        f"{p.strip.interfering_radius_m * 1e9:.0f} nm",
        fontsize=10,
    )
    ax.legend(fontsize=7, loc="lower left")
    if many:
        ax = axes[1]
        B = np.array([q.field_T for q in result.points])
        ueV = 1e-6 * 1.602176634e-19
        ax.plot(B, [q.K_I_J / ueV for q in result.points], "o-", label="K_I (with edge term)")
        ax.plot(B, [q.K_L_J / ueV for q in result.points], "s-", label="K_L")
        ax.plot(B, [q.K_IL_J / ueV for q in result.points], "^-", label="K_IL")
        ax.set_xlabel("B (T)")
        ax.set_ylabel("energy (ueV)")
        ax.legend(fontsize=7, loc="upper left")
        ax2 = ax.twinx()
        r = np.array([q.ratio for q in result.points])
        ax2.plot(B, r, "k--", label="K_IL/K_I")
        hot = r > result.settings.r_threshold
        if np.any(hot):
            ax2.plot(B[hot], r[hot], "rx", ms=9, label="above threshold")
        ax2.set_ylabel("K_IL/K_I")
        ax2.legend(fontsize=7, loc="upper right")
    return fig
