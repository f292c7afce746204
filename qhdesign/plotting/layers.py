"""To-scale layer diagram: Gamma conduction-band offset vs depth, wells and doping marked."""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

from qhdesign.stack import Stack


def plot_layers(stack: Stack, ax=None):
    """Draw the conduction-band offset (meV) against depth (nm), to scale.

    Wells are shaded by role (primary, screening); doped layers carry a hatched band whose
    label gives the sheet-equivalent density in cm^-2. Returns the figure.
    """
    from . import use_agg

    use_agg()
    import matplotlib.pyplot as plt

    if ax is None:
        fig, ax = plt.subplots(figsize=(8, 4))
    else:
        fig = ax.figure
    prof = stack.profile()
    z = np.array([[p.z_top, p.z_bottom] for p in prof]).ravel() * 1e9
    ec = np.repeat([p.band_offset / sc.e * 1e3 for p in prof], 2)
    ax.plot(z, ec, color="#1b4f72", lw=1.6, label="Γ conduction-band offset")
    ymax = max(ec.max(), 1.0)
    role_colour = {"primary": "#d35400", "screening": "#f5b041"}
    labelled = set()
    for p in prof:
        z0, z1 = p.z_top * 1e9, p.z_bottom * 1e9
        if p.well:
            lab = f"{p.well} well" if p.well not in labelled else None
            labelled.add(p.well)
            ax.axvspan(z0, z1, color=role_colour[p.well], alpha=0.35, lw=0, label=lab)
        if p.donor_density > 0:
            lab = "Si doping" if "dop" not in labelled else None
            labelled.add("dop")
            ax.axvspan(
                z0, z1, ymin=0.85, ymax=1.0, hatch="////", fill=False, ec="#7d3c98", label=lab
            )
            sheet_cm2 = p.donor_density * (p.z_bottom - p.z_top) * 1e-4
            ax.annotate(
                f"{sheet_cm2:.2g} cm$^{{-2}}$\n({p.donor_model})",
                xy=(0.5 * (z0 + z1), ymax * 1.03),
                ha="center",
                va="bottom",
                fontsize=7,
                color="#7d3c98",
            )
    ax.set_xlabel("depth below surface (nm)")
    ax.set_ylabel("conduction-band offset (meV)")
    ax.set_ylim(-0.05 * ymax, ymax * 1.35)
    ax.set_xlim(0, z.max())
    ax.set_title(f"{stack.name}: layer structure to scale")
    ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    return fig
