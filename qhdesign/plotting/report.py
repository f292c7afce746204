"""Figures of the design review (``qhdesign report``), as inline SVG or embedded PNG.

Each figure is drawn by the stage's own plotting function. Line figures become inline SVG with
the text as paths (no font is needed to show it) and a fixed hash salt (the same input gives the
same file); field maps become base64 PNG images.
"""

from __future__ import annotations

import io

__all__ = ["figure_png", "figure_svg", "review_figures"]


def figure_svg(fig) -> str:
    """The figure as an ``<svg>`` element (XML prolog and DOCTYPE dropped); closes the figure."""
    import matplotlib
    import matplotlib.pyplot as plt

    buf = io.StringIO()
    with matplotlib.rc_context({"svg.fonttype": "path", "svg.hashsalt": "qhdesign-review"}):
        fig.savefig(buf, format="svg", bbox_inches="tight")
    plt.close(fig)
    text = buf.getvalue()
    start = text.find("<svg")
    return text[start:] if start >= 0 else text


def figure_png(fig, dpi: int = 110) -> str:
    """The figure as an ``<img>`` with an embedded base64 PNG; closes the figure.

    Used for the field maps (edge cross-section, island), whose SVG would hold one path per
    mesh cell (over 100 MB).
    """
    import base64

    import matplotlib.pyplot as plt

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight", metadata={"Software": None})
    plt.close(fig)
    data = base64.b64encode(buf.getvalue()).decode("ascii")
    return f'<img alt="figure" src="data:image/png;base64,{data}">'


def review_figures(results: dict) -> dict[str, str]:
    """SVG of every figure the review shows, by section: layers, bands, gate, edge, island."""
    from . import use_agg

    use_agg()
    from .bands import plot_bands, plot_gate
    from .layers import plot_layers

    out = {
        "layers": figure_svg(plot_layers(results["stack"])),
        "bands": figure_svg(plot_bands(results["bands"])),
        "gate": figure_svg(plot_gate(results["gate"])),
    }
    if "edge" in results:
        from .edge import plot_edge

        out["edge"] = figure_png(plot_edge(results["edge"]))
    if "island" in results:
        from .island import plot_island

        out["island"] = figure_png(plot_island(results["island"]))
    return out
