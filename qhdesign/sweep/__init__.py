"""Design sweeps: parameter spaces, growth-tolerance Monte Carlo, executors, resumable CSV.

The modules, in the order data flows through them: :mod:`.spec` (the sweep TOML, validated
against the stack), :mod:`.spaces` and :mod:`.tolerance` (the designs), :mod:`.stages` (the
evaluation step), :mod:`.evaluate` (worker side), :mod:`.runner` (executors and chunking),
:mod:`.sink` (the streamed CSV), :mod:`.table` and :mod:`.analysis` (reading results back).
Nothing heavy is imported here; mpi4py loads only inside the MPI executor.
"""

from __future__ import annotations

from .runner import run_sweep
from .spec import SweepPlan, build_plan, load_spec
from .tolerance import GrowthMonteCarlo, TolerancePlan

__all__ = ["GrowthMonteCarlo", "SweepPlan", "TolerancePlan", "build_plan", "load_spec", "run_sweep"]
