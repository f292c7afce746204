"""Figures of the 1D stage: band diagram with subbands; density per well against gate voltage."""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

_WELL_COLOURS = {"primary": "#b03a2e", "screening": "#2471a3"}


def plot_bands(result, ax=None, *, window_nm: tuple[float, float] | None = None):
    """Conduction-band edge (meV, relative to E_F) against depth (nm), with every subband's
    |psi|^2 drawn at its energy (scaled to a common height) and the Fermi level at zero.

    Parameters
    ----------
    result
        A :class:`qhdesign.sp1d.BandsResult`.
    ax
        Matplotlib axes to draw on (a new figure if omitted).
    window_nm
        Depth range to show (nm); default: the surface to 60 nm below the last well.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from . import use_agg

    use_agg()
    import matplotlib.pyplot as plt

    if ax is None:
        fig, ax = plt.subplots(figsize=(8, 4.5))
    else:
        fig = ax.figure
    z = result.z_m * 1e9
    ec = result.conduction_band_J / sc.e * 1e3
    if window_nm is None:
        last = max(w.z_bottom_m for w in result.wells) * 1e9
        window_nm = (min(z[0], 0.0), min(z[-1], last + 60.0))
    sel = (z >= window_nm[0]) & (z <= window_nm[1])
    ax.plot(z[sel], ec[sel], color="black", lw=1.4, label="conduction-band edge")
    for w in result.wells:
        ax.axvspan(
            w.z_top_m * 1e9,
            w.z_bottom_m * 1e9,
            color=_WELL_COLOURS.get(w.role, "grey"),
            alpha=0.08,
            lw=0,
        )
        ax.text(
            0.5 * (w.z_top_m + w.z_bottom_m) * 1e9,
            1.0,
            f"{w.name}\n{w.sheet_density_m2 * 1e-4:.3g} cm$^{{-2}}$",
            transform=ax.get_xaxis_transform(),
            ha="center",
            va="top",
            fontsize=7,
        )
    energies = np.array([s.energy_J for s in result.subbands]) / sc.e * 1e3
    spread = max(energies.max() - energies.min(), 5.0) if len(energies) else 5.0
    height = 0.25 * spread
    roles = {w.name: w.role for w in result.wells}
    for k, s in enumerate(result.subbands):
        p2 = result.psi[k] ** 2
        if p2.max() <= 0:
            continue
        e = energies[k]
        colour = _WELL_COLOURS.get(roles.get(s.well), "grey")
        # draw |psi|^2 only where it is visible (> 0.5% of its peak), on its energy level
        show = sel & (p2 > 5e-3 * p2.max())
        idx = np.nonzero(show)[0]
        if len(idx) == 0:
            continue
        part = slice(idx[0], idx[-1] + 1)
        ax.plot(z[part], e + height * p2[part] / p2.max(), color=colour, lw=0.9)
        ax.hlines(e, z[idx[0]], z[idx[-1]], color=colour, lw=0.5, ls=":")
    ax.axhline(0.0, color="#117a65", lw=1.0, ls="--", label="Fermi level")
    lo = min(-10.0, float(ec[sel].min()) - 3.0)
    if len(energies):
        lo = min(lo, energies.min() - 5.0)
    hi = max(60.0, energies.max() + height + 10.0) if len(energies) else 60.0
    ax.set_ylim(lo, hi)
    ax.set_xlim(*window_nm)
    ax.set_xlabel("depth below surface (nm)")
    ax.set_ylabel("energy relative to $E_F$ (meV)")
    ax.set_title(
        f"{result.stack_name}: T = {result.temperature_K:g} K, gate {result.gate_voltage_V:+.3f} V"
    )
    ax.legend(loc="upper left", fontsize=8)
    return fig


def plot_gate(result, ax=None):
    """Sheet density of each well (cm^-2) against gate voltage, thresholds marked, with the
    geometric-plus-quantum capacitance slope of each well drawn through its threshold.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from . import use_agg

    use_agg()
    import matplotlib.pyplot as plt

    if ax is None:
        fig, ax = plt.subplots(figsize=(7, 4.5))
    else:
        fig = ax.figure
    v = result.voltages_V
    nmax = 0.0
    for i, (name, role) in enumerate(zip(result.well_names, result.well_roles, strict=True)):
        colour = _WELL_COLOURS.get(role, "grey")
        ls = "-" if role == "primary" else ("--" if i == 0 else "-.")
        n = result.density_m2[i] * 1e-4
        nmax = max(nmax, float(n.max()))
        ax.plot(v, n, color=colour, ls=ls, lw=1.5, label=f"{name} ({role})")
        t = result.thresholds_V.get(name, float("nan"))
        if np.isfinite(t):
            ax.axvline(t, color=colour, lw=0.7, ls=":")
            ax.annotate(
                f"{t:+.3f} V",
                (t, 0),
                xytext=(2, 4),
                textcoords="offset points",
                fontsize=7,
                color=colour,
                rotation=90,
                va="bottom",
            )
            slope = result.geometric_slope_m2_V.get(name)
            if slope:
                vv = np.array([t, v.max()])
                ax.plot(vv, (vv - t) * slope * 1e-4, color=colour, lw=0.6, alpha=0.6)
    ax.plot([], [], color="grey", lw=0.6, alpha=0.6, label="geometric + quantum capacitance")
    ax.set_ylim(0, 1.1 * nmax if nmax > 0 else 1.0)
    ax.set_xlabel("gate voltage (V)")
    ax.set_ylabel("sheet density (cm$^{-2}$)")
    ax.set_title(f"{result.stack_name}: T = {result.temperature_K:g} K, donors frozen")
    ax.legend(fontsize=8, loc="upper left")
    return fig
