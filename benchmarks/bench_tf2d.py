"""Benchmark of the 2D Thomas–Fermi stage (paste the printed tables into docs/performance.md).

1. The default edge solve of the screened demo stack (``qhdesign edge``'s work after the 1D
   stage): mesh time (both passes), solve time, Newton iterations, dofs; after a warm-up run so
   the form cache is warm.
2. Scaling of one cold cross-section solve (mesh, forms, Newton with temperature continuation)
   at the default resolution and at about 2x and 4x the dofs, with MUMPS LU and with CG + GAMG;
   each configuration in its own process so its peak memory (max RSS) is its own.

Run: ``.venv/bin/python benchmarks/bench_tf2d.py``.
"""

from __future__ import annotations

import json
import os
import platform
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
STACK = ROOT / "stacks" / "ql2417_screened.toml"


def _section(sheets: str = "1d-tables"):
    from qhdesign.pipeline import section_from_stack
    from qhdesign.stack import load_stack

    return section_from_stack(load_stack(STACK), sheets=sheets)


def tables_run() -> dict:
    """Cold cost of the 1D-table sheets in a fresh process: the 1D stage, then the tables
    (one freeze-out and the gated 1D solves), then the laws (column rebuilds), each timed."""
    from qhdesign import pipeline
    from qhdesign.section.model import cross_section_from_sheet_model
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.sheets import sheet_model
    from qhdesign.stack import load_stack

    stack = load_stack(STACK)
    t0 = time.perf_counter()
    bands = solve_bands(stack)
    base = cross_section_from_sheet_model(sheet_model(stack, bands))
    t1 = time.perf_counter()
    tab = pipeline.stack_tables(stack)
    t2 = time.perf_counter()
    pipeline.tabulated_section(base, stack, bands)
    t3 = time.perf_counter()
    return {
        "bands_s": t1 - t0,
        "tables_s": t2 - t1,
        "laws_s": t3 - t2,
        "solves": int(tab.gate_voltage_V.size),
    }


def edge_run(sheets: str = "1d-tables") -> dict:
    import qhdesign.section.solver as solver_mod
    from qhdesign.section import EdgeSettings, solve_edge

    section = _section(sheets)
    solve_edge(section, EdgeSettings(-1.0))  # warm-up: JIT forms into the cache
    mesh_t, solve_t, its = [], [], []
    orig_init, orig_solve = (
        solver_mod.CrossSectionSolver.__init__,
        solver_mod.CrossSectionSolver.solve,
    )

    def init(self, *a, **k):
        orig_init(self, *a, **k)
        mesh_t.append(self.timings["mesh"])

    def solve(self, *a, **k):
        t0 = time.perf_counter()
        out = orig_solve(self, *a, **k)
        solve_t.append(time.perf_counter() - t0)
        its.append(out.iterations)
        return out

    solver_mod.CrossSectionSolver.__init__ = init
    solver_mod.CrossSectionSolver.solve = solve
    t0 = time.perf_counter()
    res = solve_edge(section, EdgeSettings(-1.0, field_T=2.0, filling=1.0))
    total = time.perf_counter() - t0
    return {
        "total_s": total,
        "mesh_s": sum(mesh_t),
        "solve_s": sum(solve_t),
        "newton_iterations": its,
        "dofs": res.info["dofs"],
    }


def scaling_run(refine: float, linear_solver: str) -> dict:
    from qhdesign.section import CrossSectionSolver, GateLayout, MeshOptions, SolverOptions

    section = _section()
    t0 = time.perf_counter()
    s = CrossSectionSolver(
        section,
        GateLayout.single_edge(),
        MeshOptions(refine=refine),
        SolverOptions(linear_solver=linear_solver),
    )
    t1 = time.perf_counter()
    sol = s.solve(-1.0)
    t2 = time.perf_counter()
    return {
        "refine": refine,
        "linear_solver": linear_solver,
        "dofs": s.num_dofs,
        "mesh_s": s.timings["mesh"],
        "setup_s": t1 - t0,
        "solve_s": t2 - t1,
        "newton_iterations": sol.iterations,
        "peak_rss_MB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }


def _child(args: list[str]) -> dict:
    env = dict(os.environ, OMP_NUM_THREADS="1")
    out = subprocess.run(
        [sys.executable, __file__, *args], capture_output=True, text=True, check=True, env=env
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    if len(sys.argv) > 1 and sys.argv[1] == "--edge":
        print(json.dumps(edge_run(sys.argv[2] if len(sys.argv) > 2 else "1d-tables")))
        return
    if len(sys.argv) > 1 and sys.argv[1] == "--tables":
        print(json.dumps(tables_run()))
        return
    if len(sys.argv) > 1 and sys.argv[1] == "--scale":
        print(json.dumps(scaling_run(float(sys.argv[2]), sys.argv[3])))
        return
    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores, {platform.python_version()}, "
        f"{platform.platform()}"
    )
    e = _child(["--edge"])
    print("\n| default edge solve (warm cache) | value |\n|---|---|")
    print(f"| dofs (pass 2) | {e['dofs']} |")
    print(f"| total (2 meshes + 4 solves) | {e['total_s']:.2f} s |")
    print(f"| meshing | {e['mesh_s']:.2f} s ({100 * e['mesh_s'] / e['total_s']:.0f} %) |")
    print(f"| Newton solves | {e['solve_s']:.2f} s |")
    print(f"| Newton iterations per solve | {', '.join(map(str, e['newton_iterations']))} |")
    c = _child(["--edge", "constant-dos"])
    print(f"| total with constant-DOS sheets, same run | {c['total_s']:.2f} s ({c['dofs']} dofs) |")
    t = _child(["--tables"])
    print("\n| 1D-table sheets, cold, fresh process | value |\n|---|---|")
    print(f"| 1D stage (zero bias) | {t['bands_s']:.2f} s |")
    print(
        f"| sheet tables ({t['solves']} gated 1D solves, one freeze-out) | {t['tables_s']:.2f} s |"
    )
    print(f"| laws (column rebuilds, isotonic fit) | {t['laws_s']:.3f} s |")
    print(f"| load average after | {os.getloadavg()[0]:.2f} |")
    print(
        "\n| refine | linear solver | dofs | mesh (s) | set-up (s) | cold solve (s) | Newton its "
        "| peak RSS (MB) |\n|---|---|---|---|---|---|---|---|"
    )
    rows = []
    for solver in ("lu", "gamg"):
        for refine in (1.0, 1.4142135623730951, 2.0):
            r = _child(["--scale", str(refine), solver])
            rows.append(r)
            print(
                f"| {refine:.2f} | {solver} | {r['dofs']} | {r['mesh_s']:.2f} | {r['setup_s']:.2f} "
                f"| {r['solve_s']:.2f} | {r['newton_iterations']} | {r['peak_rss_MB']:.0f} |"
            )
    for solver in ("lu", "gamg"):
        sub = [r for r in rows if r["linear_solver"] == solver]
        cost = [r["setup_s"] + r["solve_s"] for r in sub]
        print(
            f"{solver}: dofs x{sub[-1]['dofs'] / sub[0]['dofs']:.2f} -> "
            f"cost (set-up + solve) x{cost[-1] / cost[0]:.2f}"
        )


if __name__ == "__main__":
    main()
