"""Cost of building the sheet tables (qhdesign.sp1d.sheet_tables) on the demo stack QL-2417.

Measures, back to back in every repeat: the tables on a 10 mV grid from 0 V until every well is
empty (one freeze-out included), and a 200-point gate sweep over the same range
(``gate_response``, thresholds included) as the yardstick; reports medians (wall and CPU time of
this process), the number of 1D solves in the tables and the ratio tables / sweep per repeat.

Prints a Markdown table for docs/performance.md (section "1D", "Sheet tables").

Run: ``.venv/bin/python benchmarks/bench_sheet_tables.py [--repeat 5]``.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_sp1d import STACK, machine_line


def run(fn):
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return time.perf_counter() - w0, time.process_time() - c0, out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args()
    from qhdesign.sp1d import gate_response
    from qhdesign.sp1d.sheet_tables import sheet_tables
    from qhdesign.stack import load_stack

    stack = load_stack(STACK)
    sheet_tables(stack, 0.0, -2.0, 0.01)  # warm-up (imports, caches)
    tw, tc, sw, sc_, ratio = [], [], [], [], []
    points = 0
    for _ in range(args.repeat):
        w, c, tab = run(lambda: sheet_tables(stack, 0.0, -2.0, 0.01))
        points = len(tab.gate_voltage_V)
        v_end = float(tab.gate_voltage_V[-1])
        w2, c2, _ = run(lambda v_end=v_end: gate_response(stack, 0.0, v_end, v_end / 199))
        tw.append(w)
        tc.append(c)
        sw.append(w2)
        sc_.append(c2)
        ratio.append(w / w2)
    print(f"machine: {machine_line()}")
    print(f"load average at the end: {os.getloadavg()[0]:.2f} ({os.cpu_count()} CPUs)")
    print()
    print("| quantity | measured |")
    print("|---|---|")
    print(
        f"| sheet tables, 10 mV grid, 0 V to the last well's emptying ({points} 1D solves, one "
        f"freeze-out), median wall (CPU) | {statistics.median(tw):.2f} s "
        f"({statistics.median(tc):.2f} s) |"
    )
    print(
        f"| 200-point gate sweep over the same range, median wall (CPU) | "
        f"{statistics.median(sw):.2f} s ({statistics.median(sc_):.2f} s) |"
    )
    print(
        f"| ratio tables / sweep, median of {args.repeat} back-to-back repeats [min-max] | "
        f"{statistics.median(ratio):.2f} [{min(ratio):.2f}-{max(ratio):.2f}] |"
    )


if __name__ == "__main__":
    main()
