"""Figures of the 2D Thomas–Fermi stage: edge profiles, the potential map, pinch-off curves.

Each function takes an optional ``ax`` and returns the figure (Agg-safe).
"""

from __future__ import annotations

import numpy as np

__all__ = ["plot_edge", "plot_edge_profiles", "plot_pinchoff", "plot_potential_map"]

_WINDOW_NM = (-300.0, 600.0)


def _window(x_nm: np.ndarray, window_nm) -> np.ndarray:
    """Nodes inside the window plus one beyond each end, so curves and maps fill it."""
    i0 = max(int(np.searchsorted(x_nm, window_nm[0])) - 1, 0)
    i1 = min(int(np.searchsorted(x_nm, window_nm[1])) + 1, x_nm.size)
    sel = np.zeros(x_nm.size, dtype=bool)
    sel[i0:i1] = True
    return sel


def _ax(ax, **fig_kw):
    import matplotlib.pyplot as plt

    if ax is None:
        fig, ax = plt.subplots(**fig_kw)
        return fig, ax
    return ax.figure, ax


def _nu_text(nu: float) -> str:
    from fractions import Fraction

    f = Fraction(nu).limit_denominator(9)
    return str(f.numerator) if f.denominator == 1 else f"{f.numerator}/{f.denominator}"


def plot_edge_profiles(result, ax=None, window_nm=_WINDOW_NM):
    """n(x) of every well near the edge, with the lithographic and electronic edges and strips.

    With a magnetic field the local filling of the primary well is drawn on a second axis.
    """
    from scipy import constants as sc

    fig, ax = _ax(ax, figsize=(7.5, 4.0))
    sol = result.solution
    x_nm = sol.x_m * 1e9
    sel = _window(x_nm, window_nm)
    colours = {}
    for name, n in zip(sol.sheet_names, sol.density_m2, strict=True):
        (line,) = ax.plot(x_nm[sel], n[sel] * 1e-15, lw=1.6, label=f"{name}")
        colours[name] = line.get_color()
    ax.axvline(result.lithographic_edge_m * 1e9, color="k", lw=1.0, ls="-")
    ax.axvspan(window_nm[0], result.lithographic_edge_m * 1e9, color="0.85", zorder=0)
    ax.text(window_nm[0] + 10, ax.get_ylim()[1] * 0.95, "gate", va="top", ha="left", fontsize=8)
    for w in result.wells:
        if w.edge_x_m is not None:
            ax.axvline(w.edge_x_m * 1e9, color=colours[w.name], ls="--", lw=1.0)
    flagged = False
    label = (
        "incompressible strips (ν = "
        + ", ".join(_nu_text(t["filling"]) for t in result.strips)
        + ")"
    )
    for k, s in enumerate(result.strips):
        c = s["centre_m"] * 1e9
        a = s["width_m"] * 1e9
        if s.get("narrower_than_lB"):
            # the strip model does not hold: hatched in red, labelled with the ratio to l_B
            flagged = True
            ax.axvspan(c - a / 2, c + a / 2, facecolor="none", edgecolor="tab:red", hatch="///")
            ax.annotate(
                f"\u03bd={_nu_text(s['filling'])}: {s['width_over_lB']:.2g} l$_B$",
                (c, 0.0),
                xytext=(0, 12),
                textcoords="offset points",
                ha="center",
                fontsize=7,
                color="tab:red",
            )
        else:
            ax.axvspan(
                c - a / 2,
                c + a / 2,
                color="tab:purple",
                alpha=0.25,
                lw=0,
                label=label if k == 0 else None,
            )
    ax.set_xlim(*window_nm)
    ax.set_xlabel("x from the lithographic gate edge (nm)")
    ax.set_ylabel("sheet density (10$^{11}$ cm$^{-2}$)")
    ax.set_ylim(bottom=0)
    ax.legend(
        loc="lower right", fontsize=8, title="wells (dashed: electronic edge)", framealpha=0.9
    )
    if result.settings.field_T:
        ip = sol.sheet_names.index(result.primary)
        nu = sol.density_m2[ip] * sc.h / (sc.e * result.settings.field_T)
        ax2 = ax.twinx()
        ax2.plot(x_nm[sel], nu[sel], color=colours[result.primary], lw=0.8, ls=":")
        ax2.set_ylabel(f"local filling of {result.primary} (dotted)")
        ax2.set_ylim(bottom=0)
    vg = f"{result.settings.gate_voltage_V:g}".replace("-", "\u2212")
    title = f"edge at V$_g$ = {vg} V"
    if flagged:
        crit = result.settings.strip_min_width_lB
        title += f"; hatched red: strip narrower than {crit:g} l$_B$ (model does not hold)"
    ax.set_title(title, fontsize=10)
    return fig


def plot_potential_map(solution, ax=None, window_nm=_WINDOW_NM, gates_m=((-np.inf, 0.0),)):
    """Electrostatic potential phi(x, z) of the cross-section near the gate edge."""
    fig, ax = _ax(ax, figsize=(7.5, 3.5))
    x_nm = solution.x_m * 1e9
    z_nm = solution.z_m * 1e9
    sel = _window(x_nm, window_nm)
    zmax = min(z_nm[-1], 2.0 * z_nm[solution.sheet_level].max() + 50.0)
    zsel = z_nm <= zmax
    mesh = ax.pcolormesh(
        x_nm[sel],
        z_nm[zsel],
        solution.phi_V[np.ix_(zsel, sel)],
        shading="gouraud",
        cmap="viridis",
    )
    fig.colorbar(mesh, ax=ax, label="potential (V)")
    for k, name in zip(solution.sheet_level, solution.sheet_names, strict=True):
        ax.axhline(z_nm[k], color="w", lw=0.8, ls="--")
        ax.text(window_nm[0] + 8, z_nm[k] - 3, name, color="w", fontsize=7, ha="left")
    for a, b in gates_m:
        lo, hi = max(a * 1e9, window_nm[0]), min(b * 1e9, window_nm[1])
        if hi > lo:
            ax.plot([lo, hi], [0, 0], color="goldenrod", lw=5, solid_capstyle="butt")
    ax.set_ylim(zmax, 0)
    ax.set_xlim(*window_nm)
    ax.set_xlabel("x (nm)")
    ax.set_ylabel("depth (nm)")
    return fig


def plot_edge(result, ax=None):
    """Edge figure: n(x) per well (top) and the potential map (bottom); with ``ax``, only n(x)."""
    if ax is not None:
        return plot_edge_profiles(result, ax=ax)
    import matplotlib.pyplot as plt

    fig, (a1, a2) = plt.subplots(2, 1, figsize=(8.0, 7.5), constrained_layout=True)
    plot_edge_profiles(result, ax=a1)
    plot_potential_map(result.solution, ax=a2)
    return fig


def plot_pinchoff(result, ax=None):
    """Density at the constriction centre vs gate voltage, with each well's pinch-off."""
    fig, ax = _ax(ax, figsize=(6.5, 4.0))
    for name, n in result.centre_density_m2.items():
        (line,) = ax.plot(result.voltages_V, n * 1e-15, marker="o", ms=3, label=name)
        v = result.pinchoff_V.get(name)
        if v is not None:
            ax.axvline(v, color=line.get_color(), ls="--", lw=1.0)
    ax.set_xlabel("gate voltage (V)")
    ax.set_ylabel("density at the centre (10$^{11}$ cm$^{-2}$)")
    ax.set_title(f"split gate, gap {result.gap_m * 1e9:.0f} nm (dashed: pinch-off)", fontsize=10)
    ax.legend(fontsize=8)
    ax.set_ylim(bottom=0)
    return fig
