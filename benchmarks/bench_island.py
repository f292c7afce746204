"""Benchmark of the island capacitance stage (paste the printed table into docs/performance.md).

1. The default island of the screened demo stack (R = 0.8 um, QL-2417): the 1D stage once, then
   the island solve (mesh, assembly, MUMPS LU for both conductors, energies) after a warm-up run,
   so the form cache is warm; median of 5 runs.
2. Refinement: ``refine`` 1, 1.5, 2, 3 (every cell and the growth divided by it), each in its own
   process so its peak memory (max RSS) is its own: dofs, wall time of the island solve, K_IL/K_I.

Run: ``.venv/bin/python benchmarks/bench_island.py``.
"""

from __future__ import annotations

import json
import os
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import machine_line  # noqa: E402  (one machine line for all benchmarks)

STACK = ROOT / "stacks" / "ql2417_screened.toml"
OPTIONS = {"radius": "0.8 um", "filling": "1/3", "gap": "50 ueV"}


def one(refine: float) -> dict:
    """Island solve at ``refine`` in this process (1D stage outside the timing)."""
    from mpi4py import MPI  # noqa: F401  (before dolfinx)

    from qhdesign.island import solve_island
    from qhdesign.sp1d import sheet_model, solve_bands
    from qhdesign.stack import load_stack

    stack = load_stack(STACK)
    t0 = time.perf_counter()
    model = sheet_model(stack, solve_bands(stack))
    t_1d = time.perf_counter() - t0
    solve_island(model, **OPTIONS, refine=refine)  # warm-up: forms into the cache
    walls = []
    for _ in range(5 if refine == 1 else 1):
        t0 = time.perf_counter()
        res = solve_island(model, **OPTIONS, refine=refine)
        walls.append(time.perf_counter() - t0)
    d = res.to_dict()
    return {
        "refine": refine,
        "t_1d_s": t_1d,
        "wall_s": statistics.median(walls),
        "dofs": d["solver"]["dofs"],
        "timings": d["solver"]["timings_s"],
        "ratio": d["K_IL_over_K_I"],
        "E_C_ueV": d["charging_energy_J"] / 1.602176634e-25,
        "max_rss_MB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
    }


def main() -> None:
    if len(sys.argv) > 2 and sys.argv[1] == "--one":
        print(json.dumps(one(float(sys.argv[2]))))
        return
    rows = []
    for refine in (1.0, 1.5, 2.0, 3.0):
        out = subprocess.run(
            [sys.executable, __file__, "--one", str(refine)],
            capture_output=True,
            text=True,
            check=True,
        )
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    base = rows[0]
    print(f"machine: {machine_line()}")
    print(f"load average at the end: {os.getloadavg()[0]:.2f} ({os.cpu_count()} CPUs)")
    print()
    t = base["timings"]
    print(
        f"default island (R = 0.8 um, QL-2417), 1D stage {base['t_1d_s'] * 1e3:.0f} ms once; "
        f"island solve median {base['wall_s']:.2f} s (mesh {t['mesh_s']:.2f} s, assembly "
        f"{t['assemble_s']:.2f} s, LU solve {t['solve_s']:.2f} s, energies {t['energy_s']:.2f} s)"
    )
    print()
    print("| refine | dofs | island solve (s) | peak RSS (MB) | K_IL/K_I | E_C (ueV) |")
    print("|---|---|---|---|---|---|")
    for r in rows:
        print(
            f"| {r['refine']:g} | {r['dofs']} | {r['wall_s']:.2f} | {r['max_rss_MB']:.0f} | "
            f"{r['ratio']:.5f} | {r['E_C_ueV']:.4f} |"
        )


if __name__ == "__main__":
    main()
