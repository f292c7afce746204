"""Figures of the 1D stage: band diagram with subbands; density per well against gate voltage."""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

_WELL_COLOURS = {"primary": "#b03a2e", "screening": "#2471a3"}
_DOPING_COLOUR = "#e67e22"


def volts_text(v: float) -> str:
    """A voltage for a figure label with a true minus sign (U+2212), e.g. "−0.523 V"."""
    return f"{v:+.3f} V".replace("-", "\u2212")


def _electrons_text(n_m2: float) -> str:
    """Free electrons of a doped layer, for its label ("no free electrons" or a density)."""
    if n_m2 < 1e9:  # 1e5 cm^-2: nothing a measurement would see
        return "no free electrons"
    return f"electrons: {n_m2 * 1e-4:.2g} cm$^{{-2}}$"


def plot_bands(result, ax=None, *, window_nm: tuple[float, float] | None = None):
    """Band diagram of a 1D solution over the whole stack, and zoomed on the wells.

    Without ``ax``: three panels. (a) the conduction-band edge (meV, relative to E_F) from the
    surface to the bottom of the stack, with the Fermi level, the wells and the ionised-donor
    (doping) layers shaded and labelled, and every subband's |psi|^2 drawn at its energy;
    (b) the electron density and the ionised-donor density (cm^-3, log scale) over the same
    depth, so electrons in a doping layer or the buffer (a parallel channel) are visible;
    (c) the wells zoomed in, |psi|^2 at the subband energies. With ``ax``: panel (a) on it (or,
    with ``window_nm``, the band edge and subbands in that depth window).

    Parameters
    ----------
    result
        A :class:`qhdesign.sp1d.BandsResult`.
    ax
        Matplotlib axes to draw one panel on (a new three-panel figure if omitted).
    window_nm
        Depth range of the zoomed panel (nm); default: 30 nm above the first well to 30 nm
        below the last.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from . import use_agg

    use_agg()
    import matplotlib.pyplot as plt

    z = result.z_m * 1e9
    first = min(w.z_top_m for w in result.wells) * 1e9 if result.wells else z[0]
    last = max(w.z_bottom_m for w in result.wells) * 1e9 if result.wells else z[-1]
    zoom = window_nm or (max(z[0], first - 30.0), min(z[-1], last + 30.0))
    if ax is not None:
        if window_nm is not None:
            _draw_bands(result, ax, window_nm, full=False)
        else:
            _draw_bands(result, ax, (z[0], z[-1]), full=True)
        return ax.figure
    fig, axes = plt.subplots(
        3, 1, figsize=(8, 10), gridspec_kw={"height_ratios": [3.0, 1.4, 3.0]}, layout="constrained"
    )
    _draw_bands(result, axes[0], (z[0], z[-1]), full=True)
    _draw_density(result, axes[1], (z[0], z[-1]))
    _draw_bands(result, axes[2], zoom, full=False)
    for a_ in (axes[0], axes[1]):
        a_.axvspan(zoom[0], zoom[1], color="0.5", alpha=0.07, lw=0)
    axes[0].set_title(
        f"{result.stack_name}: T = {result.temperature_K:g} K, gate {result.gate_voltage_V:+.3f} V "
        "(whole stack; grey: zoomed below)"
    )
    axes[2].set_title("wells (zoom)")
    return fig


def _donor_runs(result) -> list[tuple[float, float]]:
    """Depth ranges (nm) of contiguous cells holding ionised-donor charge."""
    zc = result.z_m * 1e9
    on = np.asarray(result.fixed_charge_C_m3) > 0
    runs = []
    k = 0
    while k < len(on):
        if on[k]:
            j = k
            while j + 1 < len(on) and on[j + 1]:
                j += 1
            runs.append((float(zc[k]), float(zc[j + 1])))
            k = j + 1
        else:
            k += 1
    return runs


def _draw_bands(result, ax, window, *, full: bool) -> None:
    """Band edge, Fermi level, wells, doping layers and |psi|^2 in ``window`` (nm)."""
    z = result.z_m * 1e9
    ec = result.conduction_band_J / sc.e * 1e3
    sel = (z >= window[0]) & (z <= window[1])
    ax.plot(z[sel], ec[sel], color="black", lw=1.2, label="conduction-band edge")
    for w in result.wells:
        a, b = w.z_top_m * 1e9, w.z_bottom_m * 1e9
        if b < window[0] or a > window[1]:
            continue
        ax.axvspan(a, b, color=_WELL_COLOURS.get(w.role, "grey"), alpha=0.1, lw=0)
        label = w.name if full else f"{w.name}\n{w.sheet_density_m2 * 1e-4:.3g} cm$^{{-2}}$"
        ax.text(
            0.5 * (a + b),
            1.0 if not full else 0.02,
            label,
            transform=ax.get_xaxis_transform(),
            ha="center",
            va="top" if not full else "bottom",
            fontsize=6 if full else 7,
            rotation=90 if full else 0,
        )
    runs = _donor_runs(result)
    names = [d.name for d in result.doping] if len(result.doping) == len(runs) else []
    for k, (a, b) in enumerate(runs):
        if b < window[0] or a > window[1]:
            continue
        ax.axvspan(
            a, b, color=_DOPING_COLOUR, alpha=0.35, lw=0, label="ionised donors" if k == 0 else None
        )
        if names and full:
            d = result.doping[k]
            ax.text(
                0.5 * (a + b),
                0.98,
                f"{d.name}\n{_electrons_text(d.electrons_m2)}",
                transform=ax.get_xaxis_transform(),
                ha="center",
                va="top",
                fontsize=6,
                color="#a04000",
            )
    energies = np.array([s.energy_J for s in result.subbands]) / sc.e * 1e3
    if full:
        lo = min(float(ec.min()), float(energies.min()) if len(energies) else 0.0, -10.0)
        hi = max(float(ec.max()), 20.0)
        span = hi - lo
        lo, hi = lo - 0.05 * span, hi + 0.12 * span
        height = 0.06 * span
    else:
        spread = max(energies.max() - energies.min(), 5.0) if len(energies) else 5.0
        height = 0.25 * spread
        lo = min(-10.0, float(ec[sel].min()) - 3.0)
        if len(energies):
            lo = min(lo, energies.min() - 5.0)
        hi = max(60.0, energies.max() + height + 10.0) if len(energies) else 60.0
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
        ax.plot(
            z[part],
            e + height * p2[part] / p2.max(),
            color=colour,
            lw=0.9,
            label="|psi|$^2$ at its subband energy" if k == 0 else None,
        )
        ax.hlines(e, z[idx[0]], z[idx[-1]], color=colour, lw=0.5, ls=":")
    ax.axhline(0.0, color="#117a65", lw=1.0, ls="--", label="Fermi level")
    ax.set_ylim(lo, hi)
    ax.set_xlim(*window)
    ax.set_xlabel("depth below surface (nm)")
    ax.set_ylabel("energy relative to $E_F$ (meV)")
    if full:
        ax.legend(loc="upper right", fontsize=7)
    else:
        # below the well labels, above the Fermi level, left of the first well
        ax.legend(loc="upper left", bbox_to_anchor=(0.0, 0.88), fontsize=7)


def _draw_density(result, ax, window) -> None:
    """Electron and ionised-donor densities (cm^-3, log) against depth."""
    z = result.z_m * 1e9
    n = np.asarray(result.electron_density_m3) * 1e-6
    floor = 1e10
    ax.semilogy(z, np.maximum(n, floor), color="#1f618d", lw=1.0, label="electrons")
    nd = np.asarray(result.fixed_charge_C_m3) / sc.e * 1e-6
    zc = np.asarray(result.cell_centres_m) * 1e9
    if np.any(nd > 0):
        ax.semilogy(zc, np.maximum(nd, floor), color=_DOPING_COLOUR, lw=1.0, label="ionised donors")
    for w in result.wells:
        ax.axvspan(
            w.z_top_m * 1e9,
            w.z_bottom_m * 1e9,
            color=_WELL_COLOURS.get(w.role, "grey"),
            alpha=0.1,
            lw=0,
        )
    top = max(float(n.max()), float(nd.max()) if len(nd) else 0.0, floor * 10)
    ax.set_ylim(floor, top * 5)
    ax.set_xlim(*window)
    ax.set_xlabel("depth below surface (nm)")
    ax.set_ylabel("density (cm$^{-3}$)")
    ax.legend(loc="upper right", fontsize=7)
    flags = getattr(result, "flags", None)
    layers = getattr(flags, "parallel_layers", ()) if flags is not None else ()
    ax.text(
        0.01,
        0.95,
        "parallel conduction: " + (", ".join(layers) if layers else "none flagged"),
        transform=ax.transAxes,
        va="top",
        fontsize=7,
    )


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
        t = result.thresholds_V.get(name, float("nan"))
        empties = f", empties at {volts_text(t)}" if np.isfinite(t) else ""
        ax.plot(v, n, color=colour, ls=ls, lw=1.5, label=f"{name} ({role}){empties}")
        if np.isfinite(t):
            ax.axvline(t, color=colour, lw=0.7, ls=":")
            ax.annotate(
                volts_text(t),
                (t, 0),
                xytext=(3, 10),
                textcoords="offset points",
                fontsize=7,
                color=colour,
                rotation=90,
                va="bottom",
                bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.85},
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
