"""Atomic file output: a reader never sees a half-written result file."""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any

__all__ = ["atomic_write_bytes", "atomic_write_json", "atomic_write_text"]

# the process umask, read once at import (reading it means setting it, so not per call)
_UMASK = os.umask(0o022)
os.umask(_UMASK)


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (temp file in the same folder, fsync, rename)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        # mkstemp creates the file 0600; give it the mode an ordinary open() would (0666 minus
        # the umask), or keep the mode of the file it replaces
        try:
            mode = path.stat().st_mode & 0o777
        except OSError:
            mode = 0o666 & ~_UMASK
        os.chmod(tmp, mode)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def atomic_write_text(path: str | os.PathLike, text: str) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def _finite_or_null(obj: Any) -> Any:
    """``obj`` with every NaN or infinite float (numpy scalars included) replaced by ``None``."""
    if isinstance(obj, dict):
        return {k: _finite_or_null(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_finite_or_null(v) for v in obj]
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if hasattr(obj, "dtype") and hasattr(obj, "item") and getattr(obj, "ndim", 1) == 0:
        return _finite_or_null(obj.item())
    return obj


def atomic_write_json(path: str | os.PathLike, obj: Any) -> Path:
    """Write ``obj`` as indented, strict JSON atomically.

    NaN and infinities (not part of JSON; strict parsers reject them) are written as ``null``.
    """
    text = json.dumps(_finite_or_null(obj), indent=2, sort_keys=False, allow_nan=False)
    return atomic_write_text(path, text + "\n")
