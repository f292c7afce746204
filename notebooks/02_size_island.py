# %% [markdown]
# # Sizing an interferometer island, then reading a measurement back
# An invented scenario. A fab engineer at the Quillfeather Epitaxy Lab has the demo wafer
# QL-2417 (`stacks/ql2417_screened.toml`, invented numbers) and room on the mask for one
# Fabry–Pérot island at nu = 1/3. Two sizes are on the table: a radius of 0.6 um and of 1.0 um.
# The device must sit in the Aharonov–Bohm regime (K_IL/K_I < 0.1), keep a charging energy well
# above the electron temperature (E_C > 10 ueV), hold a fixed-filling window of at least 50 mT,
# and keep a thermal visibility factor above 0.3 at a 20 mK electron temperature. The
# quasiparticle creation energy is taken as 60 ueV (invented). The formulas are in
# docs/interferometer.md; the island model in docs/island.md.
#
# This notebook is a jupytext "percent" script: run it as `python notebooks/02_size_island.py` or
# open it in Jupyter with jupytext. The test suite runs it.

# %%
import math
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
from scipy import constants as sc

import qhdesign
from qhdesign import interferometer as itf
from qhdesign.interpretation import Measured, Measurement, interpret_measurement
from qhdesign.island_figures import QHConditions, figures_from_result, island_column
from qhdesign.sizing import parse_targets, size_island

root = Path(__file__).resolve().parents[1] if "__file__" in globals() else Path.cwd().parent
UEV = 1e-6 * sc.e

# %% [markdown]
# ## The two candidates
# The 1D stage runs once; each island radius is one axisymmetric solve.

# %%
from qhdesign.island_options import island_inputs
from qhdesign.pipeline import solve_island

stack = qhdesign.load_stack(root / "stacks" / "ql2417_screened.toml")
column = island_column(stack)
cond = QHConditions(filling=1 / 3, gap_qp_J=60 * UEV, temperature_K=0.020)
n = column.primary.density_m2


def evaluate(R):
    geometry, settings = island_inputs(radius=R, filling=1 / 3)
    res = solve_island(column, geometry, settings)
    return figures_from_result(res, cond, n)


candidates = {R: evaluate(R) for R in (0.6e-6, 1.0e-6)}
print(f"field of nu = 1/3 on QL-2417: {candidates[0.6e-6]['field_T']:.2f} T")
for R, f in candidates.items():
    print(
        f"R = {R * 1e6:.1f} um: K_IL/K_I = {f['K_IL_over_K_I']:.3f} ({f['regime']}), "
        f"E_C = {f['charging_energy_J'] / UEV:.1f} ueV = {f['E_C_mK']:.0f} mK, "
        f"window {f['window_T'] * 1e3:.0f} mT, periods {f['period_compressible_T'] * 1e3:.2f} / "
        f"{f['period_incompressible_T'] * 1e3:.2f} mT, visibility {f['visibility']:.2f}"
    )

# %% [markdown]
# Physics the numbers must respect, whatever the stack: a larger island has a smaller charging
# energy and a weaker bulk–edge coupling (the edge is farther from most of the bulk), and its
# flux period is smaller in proportion to its area (Phi0/A_I, analytic).

# %%
small, large = candidates[0.6e-6], candidates[1.0e-6]
assert large["charging_energy_J"] < small["charging_energy_J"]
assert large["K_IL_over_K_I"] < small["K_IL_over_K_I"]
ratio = small["period_compressible_T"] / large["period_compressible_T"]
assert abs(ratio - (1.0 / 0.6) ** 2) < 1e-12  # analytic: Phi0 / (pi R^2)

# %% [markdown]
# ## Which size meets the targets?
# The same search as `qhdesign size`, called from Python on the same island model.

# %%
targets = parse_targets(["K_IL/K_I < 0.1", "E_C > 10 ueV", "window > 50 mT", "visibility > 0.3"])
result = size_island(evaluate, targets, 0.5e-6, 1.1e-6, points=4)
print(result.verdict())


def meets(f):
    return all(t.margin(f.get(t.key)) >= 0 for t in targets)


for R, f in candidates.items():
    failed = [t.text for t in targets if t.margin(f.get(t.key)) < 0]
    verdict = "meets every target" if not failed else "fails " + ", ".join(failed)
    print(f"R = {R * 1e6:.1f} um: {verdict}")

# %% [markdown]
# The verdict and the two candidates must agree: a candidate inside the feasible range meets
# every target, one outside fails at least one. On QL-2417 neither candidate makes it: the small
# island couples its edge to the bulk too strongly, the large one loses its charging energy. The
# engineer draws the island inside the feasible range instead.

# %%
assert result.feasible
lo, hi = result.radius_range_m
for R, f in candidates.items():
    assert meets(f) == (lo <= R <= hi)
choice = next((R for R, f in candidates.items() if meets(f)), None)
print(
    "choice:",
    "neither candidate; move inside the feasible range"
    if choice is None
    else f"R = {choice * 1e6:.1f} um",
)

# %%
from qhdesign.plotting import save_figure
from qhdesign.plotting.sizing import plot_sizing

out = root / "results" / "notebooks"
out.mkdir(parents=True, exist_ok=True)
save_figure(plot_sizing(result), out / "02_size_island.png")
print("wrote", out / "02_size_island.png")

# %% [markdown]
# ## Reading a measurement back
# Months later the device at R = 0.8 um (inside the range) is measured (invented numbers): the
# flux period where quasiparticles enter freely is 2.14 mT +- 0.02 mT, the period at fixed
# quasiparticle number 6.95 mT +- 0.10 mT, and a phase jump of 0.305 +- 0.015 turns is seen when a
# quasiparticle enters. What do they say about the coupling and the anyonic phase?

# %%
meas = Measurement(
    period_compressible_T=Measured(2.14e-3, 0.02e-3),
    period_incompressible_T=Measured(6.95e-3, 0.10e-3),
    filling=1 / 3,
    jump_rad=Measured(0.305 * 2 * math.pi, 0.015 * 2 * math.pi),
)
back = interpret_measurement(meas)
print(
    f"K_IL/K_I = {back['K_IL_over_K_I']:.3f} +- {back['K_IL_over_K_I_uncertainty']:.3f} "
    f"({back['regime']}); effective radius {back['effective_radius_m'] * 1e9:.0f} nm "
    f"+- {back['effective_radius_uncertainty_m'] * 1e9:.0f} nm"
)
print(
    f"anyonic phase = {back['anyonic_phase_over_2pi']:.3f} +- "
    f"{back['anyonic_phase_uncertainty_rad'] / (2 * math.pi):.3f} x 2 pi (Laughlin 1/3)"
)
predicted = evaluate(0.8e-6)
print(f"the model predicted K_IL/K_I = {predicted['K_IL_over_K_I']:.3f} at R = 0.8 um")

# %% [markdown]
# ## Checks: physical invariants
# On the read-back: the inferred area and coupling reproduce the measured periods through
# the forward closed forms (analytic inverse), and the corrected anyonic phase is consistent with
# the Laughlin value 1/3 (Arovas, Schrieffer, Wilczek, Phys. Rev. Lett. 53, 722 (1984)) within
# its propagated uncertainty.

# %%
A = back["A_I_m2"]
r = back["K_IL_over_K_I"]
assert abs(itf.period_compressible_T(A) / 2.14e-3 - 1) < 1e-12
assert abs(itf.period_incompressible_T(A, r, 1 / 3) / 6.95e-3 - 1) < 1e-12
sigma = back["anyonic_phase_uncertainty_rad"] / (2 * math.pi)
assert abs(back["anyonic_phase_over_2pi"] - 1 / 3) < 2 * sigma
assert back["regime"] == "AB"
