"""The ring of tests/consistency/test_layout3d_island.py at the resolution of the heavy check
(tests/convergence/test_layout3d_island_fine.py): run under ``mpiexec -n 2``; writes the 3D
island's K_IL/K_I, E_C, strip radii, dofs and wall time as JSON (rank 0, atomically).

Usage: mpiexec -n 2 python tests/convergence/ring3d_fine.py OUT.json
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path[:0] = [str(HERE.parent / "consistency"), str(HERE.parent)]

#: The heavy check's mesh (docs/layout3d.md, "Resolution study"): 40 nm cells and strip rows,
#: an 8 nm gate-edge band 60 nm wide on the exposed side (first row 1 nm from the edge), 1.5 nm
#: levels at the sheets, strip rows adapted to the curvature (chord shift 0.1 nm).
FINE = {
    "edge_normal_m": 8e-9,
    "edge_band_m": 60e-9,
    "h_sheet_m": 1.5e-9,
    "strip_chord_m": 0.1e-9,
}


def main(out: Path) -> None:
    from mpi4py import MPI
    from test_layout3d_island import ring_layout

    from qhdesign.io import atomic_write_text
    from qhdesign.island.stage import OperatingSettings
    from qhdesign.layout.model3d import Layout3DOptions, LayoutSolver
    from qhdesign.layout.response3d import island_response
    from qhdesign.pipeline import section_from_stack
    from qhdesign.stack import load_stack

    t0 = time.perf_counter()
    root = HERE.parent.parent
    section = section_from_stack(
        load_stack(root / "stacks" / "ql2417_screened.toml"), sheets="constant-dos"
    )
    solver = LayoutSolver(section, ring_layout(), Layout3DOptions(**FINE))
    solver.solve()
    r = island_response(solver, OperatingSettings(quantum_lifetime_s=1e-12))
    p = r.point
    record = {
        "ratio": p.ratio,
        "charging_energy_J": p.forms["charging_energy_J"],
        "inner_radius_m": p.strip.inner_radius_m,
        "outer_radius_m": p.strip.outer_radius_m,
        "dofs_first_mesh": int(solver.num_dofs),
        "ranks": MPI.COMM_WORLD.size,
        "wall_s": time.perf_counter() - t0,
    }
    if MPI.COMM_WORLD.rank == 0:
        atomic_write_text(out, json.dumps(record, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]))
