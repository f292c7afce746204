"""Sizing chart: each target quantity against island radius, the forbidden side of its threshold
shaded, the feasible radius range marked."""

from __future__ import annotations

__all__ = ["plot_sizing"]


def plot_sizing(result, axes=None):
    """One panel per target (from :func:`qhdesign.sizing.size_island`); returns the figure.

    Every island solve of the search is a point; the forbidden side of each threshold is shaded
    red, the feasible radius range green on every panel.
    """
    import matplotlib.pyplot as plt

    from qhdesign.sizing import QUANTITIES

    targets = result.targets
    n = len(targets)
    if axes is None:
        fig, axes = plt.subplots(
            n, 1, figsize=(7.0, 1.9 * n + 0.8), sharex=True, constrained_layout=True, squeeze=False
        )
        axes = axes[:, 0]
    else:
        fig = axes[0].figure
    radii = sorted(result.evaluations)
    x = [R * 1e6 for R in radii]
    for ax, t in zip(axes, targets, strict=True):
        _, _, unit, scale, desc = QUANTITIES[t.quantity]
        vals = [result.evaluations[R].get(t.key) for R in radii]
        pts = [(xi, v / scale) for xi, v in zip(x, vals, strict=True) if v is not None]
        if pts:
            ax.plot(*zip(*pts, strict=True), "o-", ms=3, color="C0")
        thr = t.threshold / scale
        ax.axhline(thr, color="C3", lw=1)
        lo, hi = ax.get_ylim()
        lo, hi = min(lo, thr), max(hi, thr)
        pad = 0.05 * (hi - lo or 1.0)
        lo, hi = lo - pad, hi + pad
        if t.lower:
            ax.axhspan(lo, thr, color="C3", alpha=0.12, lw=0)
        else:
            ax.axhspan(thr, hi, color="C3", alpha=0.12, lw=0)
        ax.set_ylim(lo, hi)
        if result.radius_range_m:
            a, b = result.radius_range_m
            ax.axvspan(a * 1e6, b * 1e6, color="C2", alpha=0.18, lw=0)
        ax.set_ylabel(f"{t.quantity}{f' ({unit})' if unit else ''}", fontsize=9)
        ax.set_title(f"{t.text}  [{desc}]", fontsize=9, loc="left")
    axes[-1].set_xlabel("island radius R (um)")
    verdict = result.verdict()
    fig.suptitle(verdict if len(verdict) < 110 else verdict[:107] + "...", fontsize=9)
    return fig
