"""No file in the repository cites a document that is not in the repository.

The team's working notes live outside the repository; a reader of the code or the docs cannot open
them, so every derivation is in docs/derivations.md instead (project rule, DEVELOPERS.md). The
names are assembled from pieces so that this file does not match itself.
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
# Documents that exist only outside the repository (assembled so this file does not cite them).
OUTSIDE = ["PHYS" + "ICS.md", "DES" + "IGN.md", "STY" + "LE.md", "DOLFINX-" + "NOTES.md"]
PATTERN = re.compile(
    "|".join([re.escape(n) for n in OUTSIDE] + [r"\.\./" + "shared", r"\bPHYS" + r"ICS (?:§|sec)"])
)
TEXT_SUFFIXES = {".py", ".md", ".toml", ".txt", ".cfg", ".ini", ".html", ".j2", ".yml", ".yaml", ""}


def _tracked_files() -> list[Path]:
    try:
        out = subprocess.run(
            ["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True, text=True
        ).stdout
        names = [n for n in out.split("\0") if n]
    except (OSError, subprocess.CalledProcessError):  # not a git checkout: walk the tree
        names = [
            str(p.relative_to(ROOT))
            for p in ROOT.rglob("*")
            if p.is_file() and not any(part.startswith(".") for part in p.relative_to(ROOT).parts)
        ]
    return [ROOT / n for n in names]


def test_no_file_cites_a_document_outside_the_repository():
    hits = []
    for path in _tracked_files():
        if path.suffix not in TEXT_SUFFIXES and path.name not in {"Makefile"}:
            continue
        if not path.is_file():  # deleted in the work tree, still in the index
            continue
        try:
            text = path.read_text(encoding="utf-8")
        except (UnicodeDecodeError, OSError):
            continue
        for no, line in enumerate(text.splitlines(), 1):
            if PATTERN.search(line):
                hits.append(f"{path.relative_to(ROOT)}:{no}: {line.strip()[:100]}")
    assert not hits, "citations of documents not in the repository:\n" + "\n".join(hits)


def test_the_pattern_catches_a_citation():
    # the check must be able to fail: a line citing one of the outside documents is caught
    assert PATTERN.search("see " + OUTSIDE[0] + " section 4")
    assert PATTERN.search("(" + ".." + "/shared/notes)")
    assert not PATTERN.search("see docs/derivations.md section 4")
