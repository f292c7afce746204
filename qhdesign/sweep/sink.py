"""The streamed, resumable CSV sink: one row per design, written as the design finishes.

Crash safety
------------
Every row is one ``write`` of a complete line followed by ``flush`` (so a SIGKILL of the sweep
loses at most the line being written), and the file is ``fsync``-ed at least once a second and at
the end (so an OS crash loses at most the last second). Error text is folded onto one line, so a
row is always exactly one text line.

On restart the sink reads the file back: a last line without its newline is a row torn by the
kill and is cut off; every complete row must have the header's number of fields and a key. The
keys found are the designs already done, and the runner skips them, so every design ends up in
the file exactly once. A sidecar ``<csv>.sweep.json`` (written atomically before the first row)
holds the fingerprint of the sweep; resuming into a CSV of a different sweep is refused.
"""

from __future__ import annotations

import csv
import fcntl
import io
import json
import math
import os
import time
from collections.abc import Sequence
from pathlib import Path

from qhdesign.errors import InputError
from qhdesign.io import atomic_write_json

__all__ = ["CsvSink", "format_value", "sidecar_path"]

FSYNC_INTERVAL_S = 1.0


def sidecar_path(csv_path: str | os.PathLike) -> Path:
    p = Path(csv_path)
    return p.with_name(p.name + ".sweep.json")


def format_value(v: object) -> str:
    """CSV text of one cell: floats as their shortest round-trip repr, None as empty."""
    if v is None:
        return ""
    if isinstance(v, bool):
        return "1" if v else "0"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        f = float(v)
        if math.isnan(f):
            return "nan"
        return repr(f)
    return " ".join(str(v).split())


def _line(values: Sequence[object]) -> str:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerow([format_value(v) for v in values])
    return buf.getvalue()


class CsvSink:
    """Append-only CSV writer with resume by row key.

    Parameters
    ----------
    path
        The CSV file.
    header
        Column names; must contain ``"key"``.
    fingerprint
        Identifies the sweep (spec, stack, stage, options); stored in the sidecar.
    meta
        Extra JSON-ready information for the sidecar.
    """

    def __init__(self, path, header: Sequence[str], fingerprint: str, meta: dict | None = None):
        self.path = Path(path)
        self.header = list(header)
        self.fingerprint = fingerprint
        self.meta = dict(meta or {})
        self._key_col = self.header.index("key")
        self._fh = None
        self._last_sync = 0.0
        #: keys of the rows found in the file when it was opened (resume)
        self.done_keys: set[str] = set()
        self.torn_bytes = 0

    # ------------------------------------------------------------------ open
    def open(self) -> CsvSink:
        side = sidecar_path(self.path)
        if self.path.is_dir():
            raise InputError("is a folder; --out needs a CSV file name", source=str(self.path))
        if self.path.exists() and not self.path.is_file():
            # a device or a FIFO: appending rows, resuming and the sidecar need a regular file
            raise InputError(
                "is not a regular file (a device or FIFO); sweep results go to a regular CSV file",
                source=str(self.path),
            )
        if self.path.suffix.lower() not in (".csv", ".txt", ""):
            raise InputError(
                f"has suffix '{self.path.suffix}'; sweep results are CSV (use a .csv name)",
                source=str(self.path),
            )
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fh = open(self.path, "a", encoding="utf-8", newline="")  # closed in close()
        try:
            # one writer per CSV: a second sweep on the same file would duplicate rows
            fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            fh.close()
            raise InputError(
                "is being written by another running sweep; wait for it to finish or choose "
                "another --out",
                source=str(self.path),
            ) from None
        self._fh = fh
        try:
            self._open_locked(side)
        except BaseException:
            self._fh = None
            fh.close()
            raise
        return self

    def _open_locked(self, side: Path) -> None:
        if self.path.stat().st_size > 0:
            if side.exists():
                try:
                    doc = json.loads(side.read_bytes().decode("utf-8"))
                    stored = doc.get("fingerprint") if isinstance(doc, dict) else None
                except (ValueError, UnicodeDecodeError):
                    doc, stored = None, None
                if not isinstance(stored, str):
                    raise InputError(
                        f"its sidecar {side.name} is corrupt (not the JSON qhdesign writes); "
                        "delete the sidecar to resume (the rows are checked on reading), or "
                        "choose another --out",
                        source=str(self.path),
                    )
                if stored != self.fingerprint:
                    raise InputError(
                        "holds rows of a different sweep (spec, stack, stage or options changed); "
                        "choose another --out or delete the file and its .sweep.json",
                        source=str(self.path),
                    )
            self._read_existing()
            if not side.exists():
                self._write_sidecar()
        else:
            self._write_sidecar()
            self._fh.write(_line(self.header))
            self._sync()

    def _write_sidecar(self) -> None:
        atomic_write_json(
            sidecar_path(self.path),
            {"fingerprint": self.fingerprint, "columns": self.header, **self.meta},
        )

    def _read_existing(self) -> None:
        data = self.path.read_bytes()
        if not data.endswith(b"\n"):
            # torn last line (killed mid-write): cut it off
            cut = data.rfind(b"\n") + 1
            self.torn_bytes = len(data) - cut
            with open(self.path, "r+b") as fh:
                fh.truncate(cut)
                fh.flush()
                os.fsync(fh.fileno())
            data = data[:cut]
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = data[: exc.start].count(b"\n") + 1
            raise InputError(
                f"line {line} is not UTF-8 text; the file was edited or corrupted outside "
                "qhdesign (choose another --out)",
                source=str(self.path),
            ) from None
        reader = csv.reader(io.StringIO(text))
        try:
            header = next(reader)
        except StopIteration:
            header = []
        if not header:
            # killed before the header line was complete: start the file again
            with open(self.path, "w", encoding="utf-8", newline="") as fh:
                fh.write(_line(self.header))
            return
        if header != self.header:
            raise InputError(
                f"its columns differ from this sweep's ({len(header)} vs {len(self.header)} "
                "columns); choose another --out",
                source=str(self.path),
            )
        n = len(self.header)
        for lineno, row in enumerate(reader, start=2):
            if len(row) != n or not row[self._key_col]:
                raise InputError(
                    f"line {lineno} is malformed ({len(row)} fields, expected {n}); "
                    "the file was edited or corrupted outside qhdesign",
                    source=str(self.path),
                )
            key = row[self._key_col]
            if key in self.done_keys:
                raise InputError(
                    f"line {lineno} repeats the design key {key} of an earlier row; the file "
                    "was edited or merged outside qhdesign (choose another --out)",
                    source=str(self.path),
                )
            self.done_keys.add(key)

    # ------------------------------------------------------------------ write
    def write(self, values: Sequence[object]) -> None:
        """Append one complete row (one line) and flush it to the OS."""
        assert self._fh is not None
        self._fh.write(_line(values))
        self._fh.flush()
        now = time.monotonic()
        if now - self._last_sync >= FSYNC_INTERVAL_S:
            self._sync()

    def _sync(self) -> None:
        assert self._fh is not None
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._last_sync = time.monotonic()

    def close(self) -> None:
        if self._fh is not None:
            self._sync()
            self._fh.close()
            self._fh = None

    def __enter__(self) -> CsvSink:
        return self.open()

    def __exit__(self, *exc) -> None:
        self.close()
