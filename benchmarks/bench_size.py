"""Benchmark of interferometer sizing and of a growth-tolerance run through the island stage
(paste the printed table into docs/performance.md).

1. ``qhdesign size`` on the demo stack (QL-2417) with five targets, as a user runs it (one
   process: imports, the 1D stage once, then one island solve per radius visited): wall time and
   the number of island solves.
2. ``qhdesign tolerance --stage island`` (1D stage plus island solve per sample, R = 0.8 um) on 2
   local workers: wall time for N samples (default 1000; ``--samples N`` for fewer on a busy
   machine, then the per-sample rate is extrapolated to 1000 and labelled so).

Run: ``.venv/bin/python benchmarks/bench_size.py [--samples N]``.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import machine_line  # noqa: E402  (one machine line for all benchmarks)

STACK = ROOT / "stacks" / "ql2417_screened.toml"
TARGETS = [
    "K_IL/K_I < 0.1",
    "E_C > 10 ueV",
    "window > 50 mT",
    "visibility > 0.3",
    "period_B > 1 mT",
]


def run(args: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "qhdesign", *args], check=True, capture_output=True)
    return time.perf_counter() - t0


def main() -> None:
    samples = 1000
    if "--samples" in sys.argv:
        samples = int(sys.argv[sys.argv.index("--samples") + 1])
    load0 = os.getloadavg()[0]
    with tempfile.TemporaryDirectory() as tmp:
        js = Path(tmp) / "size.json"
        args = ["size", str(STACK), "--gap", "60 ueV", "--json", str(js)]
        for t in TARGETS:
            args += ["--target", t]
        t_size = run(args)
        d = json.loads(js.read_text())
        csv = Path(tmp) / "tol.csv"
        t_tol = run(
            [
                "tolerance",
                str(STACK),
                "--stage",
                "island",
                "--option",
                "radius=0.8 um",
                "--samples",
                str(samples),
                "--workers",
                "2",
                "--csv",
                str(csv),
                "--quiet",
            ]
        )
        import csv as csvmod
        import statistics

        with open(csv, newline="") as fh:
            table = list(csvmod.DictReader(fh))
        rows = len(table)
        ok = sum(r["status"] == "ok" for r in table)
        per = statistics.median(float(r["solve_time_s"]) for r in table)
    load1 = os.getloadavg()[0]
    print(f"machine: {machine_line()}")
    print(f"load average at the start / end: {load0:.2f} / {load1:.2f} ({os.cpu_count()} CPUs)")
    print()
    lo, hi = d["radius_range_m"] or (float("nan"), float("nan"))
    print(
        f"size (5 targets): {t_size:.1f} s wall, {d['island_solves']} island solves, "
        f"feasible {lo * 1e9:.0f}..{hi * 1e9:.0f} nm (in-process search {d['wall_time_s']:.1f} s)"
    )
    rate = t_tol / samples
    line = (
        f"tolerance 1D + island, 2 workers: {samples} samples ({rows} rows, {ok} ok) in "
        f"{t_tol:.1f} s; median stage time per sample {per:.2f} s"
    )
    if samples != 1000:
        line += f"; extrapolated to 1000 samples: {1000 * rate / 60:.1f} min (linear, labelled)"
    print(line)


if __name__ == "__main__":
    main()
