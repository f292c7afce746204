"""Benchmark of the 3D layout stage (paste the printed table into docs/performance.md).

The default layout (stacks/layouts/ql2417_fp_circle.toml on QL-2417) at two resolutions
(``refine`` 0.5 and 1), each on 1 and on 2 MPI ranks, each in its own process (``mpiexec -n N``)
so its peak memory per rank (max RSS) is its own: dofs, mesh time (plane mesh on rank 0,
extrusion, distribution, tags), Newton solve time, lever-arm solve, wall time of the stage, and
the speedup of the solve from 1 to 2 ranks. The load average is printed: on a shared machine the
figures are only comparable within one run.

Run: ``.venv/bin/python benchmarks/bench_layout.py [--edge-normal NM] [refine ...]``.
``--edge-normal 8`` meshes the anisotropic gate-edge band (``mesh.edge_normal`` = 8 nm, the
setting docs/layout3d.md recommends for edge positions and pinch-off voltages).
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import machine_line  # noqa: E402  (one machine line for all benchmarks)

STACK = ROOT / "stacks" / "ql2417_screened.toml"
LAYOUT = ROOT / "stacks" / "layouts" / "ql2417_fp_circle.toml"


def one(refine: float, edge_normal_nm: float | None = None) -> None:
    """One stage run in this process (under mpiexec: this rank); rank 0 prints JSON."""
    from mpi4py import MPI

    from qhdesign.layout import load_layout
    from qhdesign.layout.model3d import Layout3DOptions
    from qhdesign.layout.stage import solve_layout
    from qhdesign.stack import load_stack

    stack = load_stack(STACK)
    lay = load_layout(LAYOUT, stack)
    t0 = time.perf_counter()
    normal = None if edge_normal_nm is None else edge_normal_nm * 1e-9
    res = solve_layout(stack, lay, Layout3DOptions(refine=refine, edge_normal_m=normal))
    wall = time.perf_counter() - t0
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    rss_all = MPI.COMM_WORLD.gather(rss, root=0)
    if MPI.COMM_WORLD.rank == 0:
        t = res.info["timings_s"]
        mesh = sum(v for k, v in t.items() if k.startswith("mesh_"))
        print(
            json.dumps(
                {
                    "refine": refine,
                    "edge_normal_nm": edge_normal_nm,
                    "ranks": MPI.COMM_WORLD.size,
                    "dofs": res.info["dofs"],
                    "mesh_s": mesh,
                    "plane_s": t["mesh_plane"],
                    "distribute_s": t["mesh_distribute"],
                    "solve_s": t["solve"],
                    "analysis_s": t["analysis"],
                    "wall_s": wall,
                    "rss_MB": max(rss_all),
                    "area_um2": res.island_area_m2 * 1e12,
                    "load": os.getloadavg()[0],
                }
            )
        )


def main() -> None:
    args = sys.argv[1:]
    normal = None
    if "--edge-normal" in args:
        i = args.index("--edge-normal")
        normal = float(args[i + 1])
        del args[i : i + 2]
    if len(args) > 1 and args[0] == "--one":
        one(float(args[1]), normal)
        return
    refines = [float(a) for a in args] or [0.5, 1.0]
    bindir = Path(sys.executable).parent
    env = dict(os.environ, OMP_NUM_THREADS="1")
    rows = []
    for refine in refines:
        for n in (1, 2):
            cmd = [sys.executable, __file__, "--one", str(refine)]
            if normal is not None:
                cmd += ["--edge-normal", str(normal)]
            if n > 1:
                cmd = [str(bindir / "mpiexec"), "-n", str(n), *cmd]
            load0 = os.getloadavg()[0]
            out = subprocess.run(cmd, capture_output=True, text=True, check=True, env=env)
            row = json.loads(out.stdout.strip().splitlines()[-1])
            row["load_before"] = load0
            rows.append(row)
    print(f"machine: {machine_line()}")
    if normal is not None:
        print(f"gate-edge band: mesh.edge_normal = {normal:g} nm")
    print()
    print(
        "| refine | ranks | dofs | mesh (s) | of which plane / distribute (s) | Newton solve (s) | "
        "analysis + lever arm (s) | stage wall (s) | peak RSS per rank (MB) | load before/after |"
    )
    print("|---|---|---|---|---|---|---|---|---|---|")
    for r in rows:
        print(
            f"| {r['refine']:g} | {r['ranks']} | {r['dofs']} | {r['mesh_s']:.2f} | "
            f"{r['plane_s']:.2f} / {r['distribute_s']:.2f} | {r['solve_s']:.2f} | "
            f"{r['analysis_s']:.2f} | {r['wall_s']:.1f} | {r['rss_MB']:.0f} | "
            f"{r['load_before']:.1f} / {r['load']:.1f} |"
        )
    print()
    for refine in refines:
        one_r = [r for r in rows if r["refine"] == refine]
        s1 = next(r for r in one_r if r["ranks"] == 1)
        s2 = next(r for r in one_r if r["ranks"] == 2)
        print(
            f"refine {refine:g}: solve speedup 1 -> 2 ranks {s1['solve_s'] / s2['solve_s']:.2f}, "
            f"stage {s1['wall_s'] / s2['wall_s']:.2f}; island area {s1['area_um2']:.6f} / "
            f"{s2['area_um2']:.6f} um^2"
        )


if __name__ == "__main__":
    main()
