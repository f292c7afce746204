"""Matplotlib figures (Agg). Each function takes an optional ``ax`` and returns the figure.

Import this subpackage only where a figure is drawn: it loads matplotlib.
"""

from __future__ import annotations


def use_agg() -> None:
    """Select the non-interactive Agg backend (headless machines, tests)."""
    import matplotlib

    matplotlib.use("Agg", force=False)


def save_figure(fig, path) -> None:
    """Save ``fig`` atomically (PNG/SVG/PDF by the file suffix) and close it."""
    import io
    from pathlib import Path

    import matplotlib.pyplot as plt

    from qhdesign.io import atomic_write_bytes

    path = Path(path)
    buf = io.BytesIO()
    fmt = path.suffix.lstrip(".").lower() or "png"
    fig.savefig(buf, format=fmt, dpi=150, bbox_inches="tight")
    plt.close(fig)
    atomic_write_bytes(path, buf.getvalue())
