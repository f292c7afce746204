"""Benchmark of start-up: what a command costs before any physics runs.

1. ``qhdesign --help``: wall and CPU time (user + sys of the child), median of 7 runs.
2. ``python -X importtime`` of ``qhdesign --help`` and of ``import qhdesign.stack`` (the stack
   model, which ``import qhdesign`` loaded eagerly before issue 15): cumulative import time of
   the slowest top-level imports.
3. ``qhdesign bands`` on the QL-2403 demo stack: wall time against the 1D solve itself
   (``solve_bands`` timed in-process), so the start-up share of a short command is visible.

Run: ``.venv/bin/python benchmarks/bench_startup.py``. On a loaded machine compare the ratios of
one run, not absolute times.
"""

from __future__ import annotations

import os
import re
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import machine_line  # noqa: E402  (one machine line for all benchmarks)

BIN = Path(sys.executable).parent
STACK = ROOT / "stacks" / "ql2403_heterojunction.toml"


def run(cmd: list[str]) -> tuple[float, float]:
    """(wall s, child CPU s) of one command."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, capture_output=True, cwd=ROOT)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def median_run(cmd: list[str], n: int = 7) -> tuple[float, float]:
    runs = [run(cmd) for _ in range(n)]
    return statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs)


def importtime(args: list[str], top: int = 6) -> list[tuple[str, float]]:
    """Slowest top-level imports (cumulative, s) of ``python -X importtime <args>``."""
    env = {**os.environ, "PYTHONDONTWRITEBYTECODE": "0"}
    res = subprocess.run(
        [sys.executable, "-X", "importtime", *args],
        capture_output=True,
        text=True,
        cwd=ROOT,
        env=env,
    )
    rows = []
    for line in res.stderr.splitlines():
        m = re.match(r"import time:\s+\d+ \|\s+(\d+) \| (\S.*)$", line)
        if m and not m.group(2).startswith(" "):
            rows.append((m.group(2).strip(), int(m.group(1)) * 1e-6))
    total = sum(t for _, t in rows)
    return [("total (top level)", total), *sorted(rows, key=lambda r: -r[1])[:top]]


def main() -> None:
    print(f"machine: {machine_line()}")
    print(f"load average before: {os.getloadavg()[0]:.1f}")
    qh = str(BIN / "qhdesign")
    run([qh, "--help"])  # warm the bytecode cache
    wall, cpu = median_run([qh, "--help"])
    print("\n| command | wall (s, median of 7) | CPU (s) |\n|---|---|---|")
    print(f"| `qhdesign --help` | {wall:.2f} | {cpu:.2f} |")
    wall0, cpu0 = median_run([sys.executable, "-c", "pass"])
    print(f"| `python -c pass` (interpreter alone) | {wall0:.2f} | {cpu0:.2f} |")
    wall1, cpu1 = median_run([sys.executable, "-c", "import qhdesign.stack"])
    print(f"| `python -c 'import qhdesign.stack'` | {wall1:.2f} | {cpu1:.2f} |")
    for label, args in (
        ("qhdesign --help", ["-m", "qhdesign", "--help"]),
        ("import qhdesign.stack", ["-c", "import qhdesign.stack"]),
    ):
        print(f"\n`python -X importtime` of {label} (cumulative s):")
        for name, t in importtime(args):
            print(f"  {name:40s} {t:.3f}")
    # bands: wall of the command vs the solve alone
    code = (
        "import time; from qhdesign.stack import load_stack; from qhdesign.sp1d import "
        f"solve_bands; s = load_stack({str(STACK)!r}); solve_bands(s); t0 = time.perf_counter(); "
        "solve_bands(s); print(time.perf_counter() - t0)"
    )
    solve = float(
        subprocess.run(
            [sys.executable, "-c", code], capture_output=True, text=True, check=True
        ).stdout
    )
    wall_b, cpu_b = median_run([qh, "bands", str(STACK)], n=3)
    print(
        f"\n`qhdesign bands` on {STACK.name}: wall {wall_b:.2f} s (median of 3), CPU {cpu_b:.2f} s;"
    )
    print(f"the 1D solve alone {solve:.3f} s: start-up and output are {1 - solve / wall_b:.0%}")
    print(f"load average after: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
