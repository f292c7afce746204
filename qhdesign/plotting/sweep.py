"""Figures of a sweep CSV: design-window maps, one-parameter lines, Monte Carlo histograms.

Every function takes an optional ``ax`` (or draws a new figure) and returns the figure. The Agg
backend is selected when no figure canvas is given, so this runs on headless machines.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from qhdesign.errors import InputError

__all__ = ["axis_label", "design_window", "histograms", "line_plot", "plot_sweep_table"]


def _plt():
    import matplotlib

    if matplotlib.get_backend().lower() not in ("agg", "pdf", "svg", "ps", "cairo"):
        matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _spans_area(x, y) -> bool:
    """True when the points (x, y) span an area, so that they can be triangulated: at least three
    distinct points, not all on one line (each axis scaled to [0, 1] first: a doping in m^-2
    against an Al fraction must not look collinear)."""
    xs, ys = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if xs.size < 3:
        return False
    pts = np.unique(np.column_stack([xs, ys]), axis=0)
    if len(pts) < 3:
        return False
    span = np.ptp(pts, axis=0)
    if np.any(span == 0):
        return False
    u = (pts - pts.min(axis=0)) / span
    return int(np.linalg.matrix_rank(u - u.mean(axis=0), tol=1e-9)) >= 2


def _tri(x, y):
    """Delaunay triangulation of the designs in the (x, y) plane (call when they span an area)."""
    from matplotlib.tri import Triangulation

    return Triangulation(np.asarray(x, dtype=float), np.asarray(y, dtype=float))


def feasible_mask(table, criteria: Mapping[str, tuple[float, float]] | None) -> np.ndarray:
    """True where the design solved and meets every ``min <= value <= max``."""
    good = table.ok.copy()
    for name, (lo, hi) in (criteria or {}).items():
        v = table.column(name).astype(float)
        with np.errstate(invalid="ignore"):
            good &= np.isfinite(v) & (v >= lo) & (v <= hi)
    return good


def _criteria(table, criteria):
    if criteria is None:
        criteria = table.meta.get("criteria", {}) or {}

    # an open bound is stored as null in the (strict JSON) sidecar
    def bound(x, default):
        return default if x is None else float(x)

    return {
        table.resolve(k, "output"): (bound(v[0], -np.inf), bound(v[1], np.inf))
        for k, v in criteria.items()
    }


def design_window(
    table,
    x: str,
    y: str,
    color: str,
    contours: Sequence[tuple[str, float]] = (),
    criteria: Mapping[str, tuple[float, float]] | None = None,
    ax=None,
):
    """Colour map of ``color`` over two swept parameters, contour lines, infeasible part hatched.

    Works for grids and scattered (Latin hypercube) designs alike: values are triangulated.
    """
    plt = _plt()
    if ax is None:
        fig, ax = plt.subplots(figsize=(6.4, 4.8), layout="constrained")
    else:
        fig = ax.figure
    xc, yc, cc = table.resolve(x, "parameter"), table.resolve(y, "parameter"), table.resolve(color)
    xs, ys, cs = table.data[xc], table.data[yc], table.data[cc].astype(float)
    ok = table.ok & np.isfinite(cs)
    if _spans_area(xs[ok], ys[ok]):
        m = ax.tricontourf(_tri(xs[ok], ys[ok]), cs[ok], levels=20, cmap="viridis")
        fig.colorbar(m, ax=ax, label=axis_label(cc))
    else:
        m = ax.scatter(xs[ok], ys[ok], c=cs[ok], cmap="viridis")
        fig.colorbar(m, ax=ax, label=axis_label(cc))
    for name, value in contours:
        col = table.resolve(name, "output")
        v = table.data[col].astype(float)
        sel = table.ok & np.isfinite(v)
        if _spans_area(xs[sel], ys[sel]) and np.nanmin(v[sel]) <= value <= np.nanmax(v[sel]):
            cs_ = ax.tricontour(
                _tri(xs[sel], ys[sel]), v[sel], levels=[value], colors="w", linewidths=1.5
            )
            ax.clabel(cs_, fmt={value: f"{col} = {value:g}"}, fontsize=7)
    crit = _criteria(table, criteria)
    spread = _spans_area(xs, ys)
    # Hatch where a criterion fails, from the output itself so the boundary is smooth.
    for name, (lo, hi) in crit.items():
        v = table.data[name].astype(float)
        sel = table.ok & np.isfinite(v)
        if not spread or not _spans_area(xs[sel], ys[sel]):
            continue
        vmin, vmax = float(np.min(v[sel])), float(np.max(v[sel]))
        pad = 1.0 + abs(vmax - vmin)
        bands = []
        if vmin < lo:  # some designs fall below the minimum
            bands.append(((vmin - pad, lo), lo))
        if hi < vmax:  # some designs exceed the maximum
            bands.append(((hi, vmax + pad), hi))
        for levels, edge in bands:
            ax.tricontourf(
                _tri(xs[sel], ys[sel]), v[sel], levels=list(levels), colors="none", hatches=["////"]
            )
            ax.tricontour(
                _tri(xs[sel], ys[sel]), v[sel], levels=[edge], colors="0.2", linewidths=0.8
            )
    failed = ~table.ok
    if failed.any() and spread:
        ax.tricontourf(
            _tri(xs, ys), failed.astype(float), levels=[0.5, 1.5], colors="none", hatches=["xx"]
        )
    failed = ~table.ok
    if failed.any():
        ax.plot(xs[failed], ys[failed], "x", color="r", ms=5, label="failed design")
        ax.legend(loc="best", fontsize=8)
    ax.set_xlabel(axis_label(xc))
    ax.set_ylabel(axis_label(yc))
    title = "hatched: infeasible"
    if crit:
        import textwrap

        text = "feasible: " + ", ".join(_crit_text(k, v) for k, v in crit.items())
        title += "\n" + textwrap.fill(text, width=70)
    ax.set_title(title, fontsize=8)
    return fig


def _crit_text(name: str, bounds: tuple[float, float]) -> str:
    lo, hi = bounds
    if math.isinf(lo):
        return f"{name} <= {hi:g}"
    if math.isinf(hi):
        return f"{name} >= {lo:g}"
    return f"{lo:g} <= {name} <= {hi:g}"


#: Unit suffixes of CSV columns (``primary_density_cm^-2``), longest first when matched.
_UNITS = (
    "cm^-2/V", "cm^2/Vs", "cm^-2", "cm^-3", "m/s", "km/s", "ueV", "meV", "eV", "nm", "um",
    "mT", "aF", "mK", "K", "V", "T", "s", "%",
)  # fmt: skip
_PRETTY = (("^-2", "\u207b\u00b2"), ("^-3", "\u207b\u00b3"), ("^2", "\u00b2"), ("ueV", "\u00b5eV"))


def _words(name: str) -> str:
    """``primary_density`` -> "primary density"; symbols stay joined: ``K_IL_over_K_I`` ->
    "K_IL/K_I", ``E_C`` -> "E_C"."""
    tokens = [t for t in name.split("_") if t]
    if not tokens:
        return name

    def sym(t: str) -> bool:
        return len(t) == 1 or any(c.isupper() for c in t)

    out, prev, slash = tokens[0], tokens[0], False
    for tok in tokens[1:]:
        if tok == "over":
            slash = True
            continue
        if slash:
            out += "/" + tok
        elif sym(prev) and sym(tok):
            out += "_" + tok
        else:
            out += " " + tok
        prev, slash = tok, False
    return out


def _name_unit(column: str) -> tuple[str, str]:
    label = axis_label(column)
    if label.endswith(")") and " (" in label:
        name, unit = label[:-1].rsplit(" (", 1)
        return name, unit
    return label, ""


def _value_text(column: str, value: float) -> str:
    """``setback_lower thickness = 26 nm`` for a legend entry."""
    name, unit = _name_unit(column)
    return f"{name} = {value:g}{' ' + unit if unit else ''}"


def axis_label(column: str) -> str:
    """A readable axis label from a CSV column: quantity, then the unit in brackets.

    ``layers.setback_upper.thickness_nm`` -> "setback_upper thickness (nm)";
    ``primary_density_cm^-2`` -> "primary density (cm⁻²)"; ``dn_dV_primary_cm^-2/V`` ->
    "dn/dV primary (cm⁻²/V)". Layer names keep their underscores (they are the user's names).
    """
    name, unit = column, ""
    for u in sorted(_UNITS, key=len, reverse=True):
        if column.endswith("_" + u):
            name, unit = column[: -len(u) - 1], u
            break
    for prefix in ("layers.", "doping."):
        if name.startswith(prefix):
            name = name[len(prefix) :].replace(".", " ")
            break
    else:
        name = " ".join(_words(part) for part in name.replace("dn_dV", "dn/dV").split("."))
    for a, b in _PRETTY:
        unit = unit.replace(a, b)
    if unit == "um":
        unit = "\u00b5m"
    return f"{name} ({unit})" if unit else name


def _varies_within(values: np.ndarray, xs: np.ndarray) -> bool:
    """True when ``values`` take more than one value at some x (an independent parameter);
    False when they follow x (zipped or linked with it)."""
    return any(len(set(values[xs == xv].tolist())) > 1 for xv in np.unique(xs))


def line_plot(table, x: str, outputs: Sequence[str], criteria=None, ax=None):
    """Each output against one swept parameter: one panel per output, one curve per design line.

    Parameters that follow x (a zip sweep of both setbacks, a linked parameter) are named in the
    x label, not drawn as separate designs. Parameters that vary independently of x (a grid)
    give one curve per combination of their values (up to 10, beyond that points), with the
    legend outside the data. Infeasible designs are circled, failed ones marked by a red dashed
    line. With ``ax``, every output is drawn on that one axis.
    """
    plt = _plt()
    xc = table.resolve(x, "parameter")
    xs = table.data[xc].astype(float)
    others = [
        p
        for p in table.parameters
        if p != xc and table.data[p].dtype != object and len(set(table.data[p])) > 1
    ]
    indep = [p for p in others if _varies_within(table.data[p], xs)]
    follow = [p for p in others if p not in indep]
    groups: dict[tuple, list[int]] = {}
    keys = list(zip(*(table.data[p] for p in indep), strict=True)) if indep else [()] * len(xs)
    for i, k in enumerate(keys):
        groups.setdefault(k, []).append(i)
    as_points = len(groups) > 10
    crit = _criteria(table, criteria)
    bad = ~feasible_mask(table, crit)
    cols = [table.resolve(name, "output") for name in outputs]
    if ax is None:
        fig, axes = plt.subplots(
            len(cols), 1, sharex=True, squeeze=False, layout="constrained",
            figsize=(7.4, 1.0 + 2.4 * len(cols)),
        )  # fmt: skip
        axes = list(axes[:, 0])
    else:
        fig, axes = ax.figure, [ax] * len(cols)
    failed = ~table.ok
    for k_out, (col, a) in enumerate(zip(cols, axes, strict=True)):
        v = table.data[col].astype(float)
        for gi, (k, idx) in enumerate(groups.items()):
            idx = np.asarray(idx)
            idx = idx[np.argsort(xs[idx], kind="stable")]
            sel = idx[table.ok[idx]]
            if k and not as_points:
                label = ", ".join(_value_text(p, val) for p, val in zip(indep, k, strict=True))
            elif len(set(axes)) == 1 and len(cols) > 1:
                label = axis_label(col) if gi == 0 else None
            else:
                label = None
            a.plot(
                xs[sel], v[sel], "o" if as_points else "o-", ms=3, label=label,
                color=f"C{k_out}" if as_points or (len(set(axes)) == 1 and not k) else f"C{gi}",
            )  # fmt: skip
            nb = sel[bad[sel]]
            if nb.size:
                a.plot(xs[nb], v[nb], "o", mfc="none", mec="k", ms=7)
        for xv in np.unique(xs[failed]):
            a.axvline(xv, color="r", lw=0.8, ls="--")
        if len(set(axes)) > 1:
            a.set_ylabel(axis_label(col), fontsize=9)
    xlabel = axis_label(xc)
    if follow:
        xlabel += "; " + ", ".join(axis_label(p) for p in follow) + " follow"
    axes[-1].set_xlabel(xlabel)
    handles = [h for h in axes[0].get_legend_handles_labels()[1] if h]
    if handles:  # outside the data, to the right of the first panel
        axes[0].legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
    axes[0].set_title("circled: infeasible; red dashed: failed design", fontsize=8)
    return fig


def histograms(table, outputs: Sequence[str], criteria=None):
    """Histogram of each output over the Monte Carlo samples with P5, P50 and P95 marked."""
    plt = _plt()
    n = len(outputs)
    ncol = min(n, 3)
    nrow = math.ceil(n / ncol)
    fig, axes = plt.subplots(
        nrow, ncol, figsize=(4.2 * ncol, 3.2 * nrow), layout="constrained", squeeze=False
    )
    crit = _criteria(table, criteria)
    good = feasible_mask(table, crit)
    for ax, name in zip(axes.flat, outputs, strict=False):
        col = table.resolve(name, "output")
        v = table.data[col].astype(float)
        sel = table.ok & np.isfinite(v)
        if not sel.any():
            ax.set_title(f"{col}: no solved samples", fontsize=8)
            continue
        bins = np.histogram_bin_edges(v[sel], bins="auto")
        ax.hist(v[sel], bins=bins, color="C0", alpha=0.8, label="all solved")
        if crit:
            ax.hist(
                v[sel & ~good],
                bins=bins,
                color="none",
                edgecolor="k",
                hatch="///",
                label="fails criteria",
            )
        for q, ls in zip(np.percentile(v[sel], [5, 50, 95]), (":", "-", ":"), strict=True):
            ax.axvline(q, color="k", ls=ls, lw=1)
        ax.set_xlabel(axis_label(col), fontsize=8)
        ax.set_title("P5 / P50 / P95 marked", fontsize=8)
        if crit:
            ax.legend(fontsize=7)
    for ax in list(axes.flat)[n:]:
        ax.set_visible(False)
    return fig


#: Bookkeeping columns left out of the default choice of outputs to plot.
_BOOKKEEPING = {"converged", "iterations", "temperature_K", "gate_V", "charge_balance_relative"}


def _informative(table, outputs: Sequence[str]) -> list[str]:
    """Outputs worth a default plot: not bookkeeping, not constant over the solved designs."""
    out = []
    for o in outputs:
        if o in _BOOKKEEPING:
            continue
        v = table.data[o].astype(float)[table.ok]
        v = v[np.isfinite(v)]
        if v.size and np.ptp(v) > 1e-12 * max(1.0, float(np.max(np.abs(v)))):
            out.append(o)
    return out or list(outputs)


def plot_sweep_table(table, x=None, y=None, color=(), contours=(), criteria=None):
    """Pick the figure from the arguments: map (x and y), line (x) or histograms (neither)."""
    color = list(color)
    outputs = [o for o in table.outputs if table.data[o].dtype != object]
    if y is not None and x is None:
        raise InputError("--y needs --x", source="option --y")
    if x is not None and y is not None:
        if len(color) > 1:
            raise InputError("a map shows one --color output", source="option --color")
        if not outputs and not color:
            raise InputError("the CSV has no numeric outputs", source=table.source)
        return design_window(table, x, y, color[0] if color else outputs[0], contours, criteria)
    if contours:
        raise InputError("--contour needs a map (--x and --y)", source="option --contour")
    shown = color or _informative(table, outputs)[:6]
    if not shown:
        raise InputError("the CSV has no numeric outputs", source=table.source)
    if x is not None:
        return line_plot(table, x, shown, criteria)
    return histograms(table, shown, criteria)
