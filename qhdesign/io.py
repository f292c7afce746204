"""Safe file input and output.

Output: a reader never sees a half-written result file, and writing never replaces what is not
an ordinary file. A regular file (or a name that does not exist yet) is written atomically (temp
file in the same folder, fsync, rename). A character device or a FIFO (``/dev/null``, a pipe) is
written straight into, never replaced. A symbolic link is followed: its target is written by the
same rules, the link itself stays. A folder, a dangling link or another kind of file is refused.
Every ``OSError`` on output becomes an :class:`~qhdesign.errors.InputError` naming the file (one
line, exit code 2 on the command line).

Input: :func:`read_input_bytes` reads only regular files, and at most a size limit plus one byte.
"""

from __future__ import annotations

import json
import math
import os
import stat
import tempfile
from pathlib import Path
from typing import Any

from .errors import InputError

__all__ = [
    "atomic_write_bytes",
    "atomic_write_json",
    "atomic_write_text",
    "check_writable",
    "decode_text",
    "read_input_bytes",
]

# the process umask, read once at import (reading it means setting it, so not per call)
_UMASK = os.umask(0o022)
os.umask(_UMASK)


def _os_message(exc: OSError) -> str:
    return exc.strerror or type(exc).__name__


def _target(path: Path, source: str) -> tuple[Path, os.stat_result | None]:
    """Where writing ``path`` lands: the resolved target of a link, and its stat (or None)."""
    if str(path) in ("", "."):
        raise InputError("empty file name", source=source)
    try:
        st = os.stat(path)  # follows links
    except FileNotFoundError:
        if path.is_symlink():
            raise InputError(
                "is a symbolic link to nothing (dangling); give a file name", source=source
            ) from None
        return path, None
    except OSError as exc:
        raise InputError(f"cannot write: {_os_message(exc)}", source=source) from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError("is a folder; give a file name", source=source)
    if path.is_symlink() and stat.S_ISREG(st.st_mode):
        return Path(os.path.realpath(path)), st
    return path, st


def check_writable(path: str | os.PathLike, source: str | None = None) -> None:
    """Refuse, before any work, an output ``path`` that cannot be written (one line each).

    Checks: a non-empty name, not a folder, the folder exists and is writable, and an existing
    target is a regular file, a character device or a FIFO (and writable).
    """
    src = source or str(path)
    p = Path(path)
    target, st = _target(p, src)
    if st is not None and not (
        stat.S_ISREG(st.st_mode) or stat.S_ISCHR(st.st_mode) or stat.S_ISFIFO(st.st_mode)
    ):
        raise InputError(
            "is neither a regular file, a character device nor a FIFO; refusing to write it",
            source=src,
        )
    if st is not None and not stat.S_ISREG(st.st_mode):
        if not os.access(target, os.W_OK):
            raise InputError("cannot write: permission denied", source=src)
        return
    parent = target.parent
    if not parent.is_dir():
        raise InputError(f"folder '{parent}' does not exist (create it first)", source=src)
    if not os.access(parent, os.W_OK | os.X_OK):
        raise InputError(f"folder '{parent}' is not writable", source=src)


def atomic_write_bytes(path: str | os.PathLike, data: bytes, *, source: str | None = None) -> Path:
    """Write ``data`` to ``path`` safely (see the module docstring).

    Raises
    ------
    InputError
        The path cannot be written (a folder, a dangling link, a socket or block device, a
        read-only folder, a full disk, ...): one line naming the path (or ``source``).
    """
    src = source or str(path)
    path = Path(path)
    target, st = _target(path, src)
    try:
        if st is not None and (stat.S_ISCHR(st.st_mode) or stat.S_ISFIFO(st.st_mode)):
            # a device or a pipe: write into it, never replace it
            with open(target, "wb") as fh:
                fh.write(data)
                fh.flush()
            return path
        if st is not None and not stat.S_ISREG(st.st_mode):
            raise InputError(
                "is neither a regular file, a character device nor a FIFO; refusing to write it",
                source=src,
            )
        target.parent.mkdir(parents=True, exist_ok=True)
        _replace_atomically(target, data, st)
    except OSError as exc:
        raise InputError(f"cannot write: {_os_message(exc)}", source=src) from None
    return path


def _replace_atomically(path: Path, data: bytes, st: os.stat_result | None) -> None:
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        # mkstemp creates the file 0600; give it the mode an ordinary open() would (0666 minus
        # the umask), or keep the mode of the file it replaces
        mode = stat.S_IMODE(st.st_mode) if st is not None else 0o666 & ~_UMASK
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


def atomic_write_text(path: str | os.PathLike, text: str, *, source: str | None = None) -> Path:
    """Write UTF-8 ``text`` to ``path`` safely (see :func:`atomic_write_bytes`)."""
    return atomic_write_bytes(path, text.encode("utf-8"), source=source)


def read_input_bytes(path: str | os.PathLike, limit: int, what: str = "file") -> bytes:
    """The bytes of an input file: a regular file of at most ``limit`` bytes.

    A FIFO or a device (``/dev/zero``) would read forever: only regular files are read, and at
    most ``limit + 1`` bytes, so a file that grows while it is read is refused too.

    Raises
    ------
    InputError
        Missing, a folder, not a regular file, larger than ``limit``, or unreadable.
    """
    src = str(path)
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise InputError("file not found", source=src) from None
    except OSError as exc:
        raise InputError(f"cannot read: {_os_message(exc)}", source=src) from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(f"is a folder, expected a {what}", source=src)
    if not stat.S_ISREG(st.st_mode):
        raise InputError(
            f"is not a regular file (a device, FIFO or socket); expected a {what}", source=src
        )
    too_big = f"a {what} is at most {limit / 1e6:g} MB"
    if st.st_size > limit:
        raise InputError(f"file is {st.st_size / 1e6:.1f} MB; {too_big}", source=src)
    try:
        with open(p, "rb") as fh:
            data = fh.read(limit + 1)
    except OSError as exc:
        raise InputError(f"cannot read: {_os_message(exc)}", source=src) from None
    if len(data) > limit:
        raise InputError(f"file is larger than {limit / 1e6:g} MB; {too_big}", source=src)
    return data


def decode_text(data: bytes, source: str, what: str = "TOML") -> str:
    """UTF-8 text of ``data``; a leading byte-order mark is accepted and dropped."""
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if b"\x00" in data:
        raise InputError(f"binary file (NUL bytes); expected {what} text", source=source)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(
            f"not UTF-8 text (byte {exc.start}); expected {what} text", source=source
        ) from None


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


def atomic_write_json(path: str | os.PathLike, obj: Any, *, source: str | None = None) -> Path:
    """Write ``obj`` as indented, strict JSON atomically.

    NaN and infinities (not part of JSON; strict parsers reject them) are written as ``null``.
    """
    text = json.dumps(_finite_or_null(obj), indent=2, sort_keys=False, allow_nan=False)
    return atomic_write_text(path, text + "\n", source=source)
