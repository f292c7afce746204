#!/usr/bin/env python3
"""Render the validation table of docs/validation.md from the checks a test run recorded.

Usage: ``python scripts/render_validation.py RECORDS.json [docs/validation.md]``

The tests record each check against an outside source through the ``record_check`` fixture
(tests/conftest.py) when ``QHDESIGN_VALIDATION_JSON`` names a file. This script replaces the part
of the page between the two ``validation:generated`` markers with one table per stage; the rest
of the page (checks kept by hand) stays as it is. It does not import qhdesign.
A record without a source, or a failed check, is refused (exit code 2): the table shows only
checks that name their source and hold.
"""

from __future__ import annotations

import json
import os
import sys
import tempfile
from pathlib import Path

BEGIN = "<!-- validation:generated:begin (make validation; do not edit by hand) -->"
END = "<!-- validation:generated:end -->"
STAGES = [  # (prefix of the test file name, heading)
    ("tests/reference/test_sp1d_", "1D Schrödinger–Poisson"),
    ("tests/reference/test_tf2d_island", "Island capacitances"),
    ("tests/reference/test_island_operating", "Island at the operating point"),
    ("tests/reference/test_landau", "Landau levels and exchange"),
    ("tests/reference/test_sheetxc", "Sheets' own exchange and correlation"),
    ("tests/reference/test_tf2d_", "2D Thomas–Fermi"),
    ("tests/reference/test_scattering", "Disorder estimate"),
    ("tests/reference/test_interferometer", "Interferometer figures"),
    ("tests/", "Other checks"),
]


def stage_of(test: str) -> str:
    for prefix, heading in STAGES:
        if test.startswith(prefix):
            return heading
    return "Other checks"


def fmt(x: float) -> str:
    if x == 0:
        return "0"
    return f"{x:.2g}" if abs(x) < 1e-2 or abs(x) >= 1e3 else f"{x:.3g}"


def tolerance_text(rec: dict) -> str:
    unit = f" {rec['unit']}" if rec.get("unit") else ""
    if rec["kind"] == "rel":
        return f"{fmt(rec['tolerance'])} rel"
    if rec["kind"] == "abs":
        return f"{fmt(rec['tolerance'])}{unit}"
    return "≤ bound" if rec["tolerance"] == 0 else f"≤ bound × (1 + {fmt(rec['tolerance'])})"


def measured_text(rec: dict) -> str:
    unit = f" {rec['unit']}" if rec.get("unit") else ""
    dev = rec["deviation"]
    if rec["kind"] == "rel":
        text = f"{fmt(dev)} rel"
    elif rec["kind"] == "abs":
        text = f"{fmt(dev)}{unit}"
    else:
        text = f"{fmt(abs(dev) * 100)} % {'below' if dev <= 0 else 'above'} the bound"
    if rec.get("count", 1) > 1:
        text += f" (max of {rec['count']})"
    return text


def check_records(records: list[dict]) -> list[str]:
    """Problems that keep the table from being rendered (no source, failed checks)."""
    problems = []
    for rec in records:
        src = str(rec.get("source") or "").strip()
        if len(src) < 8:
            problems.append(f"{rec.get('test')}: check '{rec.get('check')}' names no source")
        if not rec.get("passed", False):
            problems.append(f"{rec.get('test')}: check '{rec.get('check')}' did not hold")
    return problems


def render(records: list[dict]) -> str:
    lines = [BEGIN, ""]
    order = [h for _, h in STAGES]
    groups: dict[str, list[dict]] = {}
    for rec in records:
        groups.setdefault(stage_of(rec["test"]), []).append(rec)
    for heading in sorted(groups, key=order.index):
        lines += [
            f"### {heading} (generated)",
            "| check | source | tolerance | measured | test |",
            "|---|---|---|---|---|",
        ]
        seen = set()
        for rec in groups[heading]:
            key = (rec["test"], rec["check"])
            if key in seen:
                continue
            seen.add(key)
            test_file = rec["test"].split("::")[0]
            cells = [
                rec["check"],
                rec["source"],
                tolerance_text(rec),
                measured_text(rec),
                f"`{test_file}`",
            ]
            lines.append("| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |")
        lines.append("")
    lines.append(END)
    return "\n".join(lines)


def splice(page: str, table: str) -> str:
    if BEGIN in page and END in page:
        head, rest = page.split(BEGIN, 1)
        _, tail = rest.split(END, 1)
        return head + table + tail
    return page.rstrip("\n") + "\n\n" + table + "\n"


def main(argv: list[str]) -> int:
    if not 1 <= len(argv) <= 2:
        print("usage: render_validation.py RECORDS.json [docs/validation.md]", file=sys.stderr)
        return 2
    records = json.loads(Path(argv[0]).read_text(encoding="utf-8"))
    problems = check_records(records)
    if problems:
        print("error: " + "; ".join(problems), file=sys.stderr)
        return 2
    target = Path(argv[1] if len(argv) == 2 else "docs/validation.md")
    page = target.read_text(encoding="utf-8") if target.exists() else "# Validation\n"
    text = splice(page, render(records))
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.")
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, target)
    print(f"{len(records)} checks -> {target}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
