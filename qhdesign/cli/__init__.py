"""Command-line interface (typer). ``qhdesign --help`` lists the commands."""

from __future__ import annotations

import io
import sys


class _PipeSafeStream(io.TextIOBase):
    """stdout that stops writing, silently, once the reader has gone (``qhdesign ... | head``).

    Without it the first write after the pipe closes raises BrokenPipeError, the command stops
    half-way and the files it was asked to write (which come after the printed tables) are never
    written. With it the command finishes, writes its files and exits normally.
    """

    def __init__(self, inner):
        self._inner = inner
        self._closed_pipe = False

    def write(self, text: str) -> int:
        if not self._closed_pipe:
            try:
                self._inner.write(text)
            except BrokenPipeError:
                self._closed_pipe = True
        return len(text)

    def flush(self) -> None:
        if not self._closed_pipe:
            try:
                self._inner.flush()
            except BrokenPipeError:
                self._closed_pipe = True

    def isatty(self) -> bool:
        return self._inner.isatty()

    def fileno(self) -> int:
        return self._inner.fileno()

    @property
    def encoding(self):  # type: ignore[override]
        return self._inner.encoding


def main() -> None:
    """Console-script entry point."""
    from .app import build_app

    sys.stdout = _PipeSafeStream(sys.stdout)
    try:
        build_app()()
    finally:
        out = sys.stdout
        if isinstance(out, _PipeSafeStream) and out._closed_pipe:
            # the interpreter's own final flush of the real stdout would fail again: point the
            # file descriptor at /dev/null so it succeeds
            import os

            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, out.fileno())
            os.close(devnull)
