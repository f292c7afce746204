# %% [markdown]
# # Comparing the bundled stacks
# A grower's first look at three Quillfeather Epitaxy Lab wafers (invented examples): load each
# stack, list its wells and their depths, and draw the layer diagrams side by side.
# This notebook is a jupytext "percent" script: run it as `python notebooks/01_compare_stacks.py`
# or open it in Jupyter with jupytext. The test suite runs it.

# %%
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt

import qhdesign
from qhdesign.plotting.layers import plot_layers

root = Path(__file__).resolve().parents[1] if "__file__" in globals() else Path.cwd().parent
stacks = sorted((root / "stacks").glob("*.toml"))

# %% [markdown]
# ## Wells and their depths
# Depths are measured from the semiconductor surface to the well centre.

# %%
for path in stacks:
    stack = qhdesign.load_stack(path)
    prof = {p.name: p for p in stack.profile()}
    wells = [
        f"{w.name} ({w.well}) at {0.5 * (prof[w.name].z_top + prof[w.name].z_bottom) * 1e9:.0f} nm"
        for w in stack.wells()
    ]
    print(f"{stack.name}: {', '.join(wells)}")

# %% [markdown]
# ## A parameter path changes one value and re-validates
# Moving the upper screening well 12 nm closer to the primary well (36 nm -> 24 nm):

# %%
screened = qhdesign.load_stack(root / "stacks" / "ql2417_screened.toml")
closer = screened.with_value("layers.setback_upper.thickness", "24 nm")
print(
    "setback_upper:",
    screened.get("layers.setback_upper.thickness") * 1e9,
    "->",
    closer.get("layers.setback_upper.thickness") * 1e9,
    "nm",
)

# %%
fig, axes = plt.subplots(len(stacks), 1, figsize=(8, 3.2 * len(stacks)))
for ax, path in zip(axes, stacks, strict=True):
    plot_layers(qhdesign.load_stack(path), ax=ax)
fig.tight_layout()
out = root / "results" / "notebooks"
out.mkdir(parents=True, exist_ok=True)
fig.savefig(out / "01_compare_stacks.png", dpi=100)
print("wrote", out / "01_compare_stacks.png")

# %% [markdown]
# ## Checks: physical invariants
# Whatever the layers, two things must hold for every stack, and the notebook stops if they do
# not. (1) Gauss's law: the 1D column is neutral once the charge on the boundaries (surface and
# bottom) is counted; the solver reports the imbalance relative to the donor charge. (2) The
# sheet model handed to the 2D stage carries every charge of the 1D solution: with the
# boundary charges, its sheets, donors and residual electrons add up to zero as well.

# %%
import numpy as np
from scipy import constants as sc

from qhdesign.sp1d import sheet_model, solve_bands

for path in stacks:
    stack = qhdesign.load_stack(path)
    bands = solve_bands(stack)
    assert abs(bands.charge_balance_relative) < 1e-6, (stack.name, bands.charge_balance_relative)
    model = sheet_model(stack, bands)
    h = np.diff(model.fixed_charge_edges_m)
    donors = float(np.sum(model.fixed_charge_C_m3 * h))
    column = float(np.sum(model.volume_charge_C_m3 * h)) - sc.e * sum(
        s.density_m2 for s in model.sheets
    )
    total = column + bands.surface_charge_C_m2 + bands.bottom_charge_C_m2
    assert abs(total) < 1e-6 * donors, (stack.name, total / donors)
    print(f"{stack.name}: neutral to {abs(total) / donors:.1e} of the donor charge")
