"""Benchmark of the operating-point island (paste the printed lines into docs/performance.md).

On the demo stack (QL-2417, opening 1.25 um, -1.0 V, nu = 1/3, Delta_qp = 120 ueV, default mesh):

1. one operating-point solve (nonlinear two-pass solve + dA/dV solves + linear response at the
   operating field), after a warm-up run so the form cache is warm; median of 3; the 1D stage and
   its disorder estimate once, outside the timing (a CrossSection input with those lifetimes);
2. the same with 20 fields across the plateau (11.5-14 T).

Wall and CPU time of this process are both printed: on a shared machine the CPU time is the
steadier figure. Run: ``.venv/bin/python benchmarks/bench_island_operating.py``.
"""

from __future__ import annotations

import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import machine_line  # noqa: E402

STACK = ROOT / "stacks" / "ql2417_screened.toml"


def main() -> None:
    from mpi4py import MPI  # noqa: F401  (before dolfinx)

    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings, solve_island_operating
    from qhdesign.section.model import cross_section_from_sheet_model
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.scattering import scattering
    from qhdesign.sp1d.sheets import sheet_model
    from qhdesign.stack import load_stack

    stack = load_stack(STACK)
    t0 = time.perf_counter()
    bands = solve_bands(stack)
    section = cross_section_from_sheet_model(sheet_model(stack, bands))
    t_1d = time.perf_counter() - t0
    t0 = time.perf_counter()
    tau = {w.name: w.quantum_lifetime_s for w in scattering(bands).wells}
    t_dis = time.perf_counter() - t0
    st = OperatingSettings()
    dev = IslandDevice(-1.0, gate_radius_m=1.25e-6)
    fields = tuple(np.linspace(11.5, 14.0, 20))

    def run(f=()):
        t0, c0 = time.perf_counter(), time.process_time()
        res = solve_island_operating(section, dev, st, fields_T=f, lifetimes_s=tau)
        return time.perf_counter() - t0, time.process_time() - c0, res

    run()  # warm-up: forms into the cache
    one = [run() for _ in range(3)]
    wall = statistics.median(x[0] for x in one)
    cpu = statistics.median(x[1] for x in one)
    res = one[-1][2]
    many_wall, many_cpu, many = run(fields)
    print("machine:", machine_line())
    print(f"load average at the end: {os.getloadavg()[0]:.2f} ({os.cpu_count()} CPUs)")
    print(f"1D stage {t_1d:.2f} s and disorder estimate {t_dis:.2f} s once (outside the timings)")
    info = res.info | res.operating.info
    print(
        f"one operating point ({info['dofs']} dofs): wall {wall:.2f} s, CPU {cpu:.2f} s "
        f"(operating point {info['operating_point_s']:.2f} s, linear response "
        f"{info['linear_response_s']:.2f} s); K_IL/K_I = {res.point.ratio:.4f}"
    )
    print(
        f"20 fields 11.5-14 T: wall {many_wall:.2f} s, CPU {many_cpu:.2f} s "
        f"(linear responses {many.info['linear_response_s']:.2f} s)"
    )


if __name__ == "__main__":
    main()
