"""Progress on stderr while a long fleet run streams its trips.

A small local helper behind one function, :func:`progress`, so that a shared
progress module can replace it without touching the callers. It writes only
when asked and when stderr is a terminal; otherwise it does nothing.
"""

from __future__ import annotations

import sys
import time


class _Silent:
    """A progress display that shows nothing."""

    def update(self, n: int) -> None:
        """Count ``n`` more items (ignored)."""

    def close(self) -> None:
        """End the display (nothing to end)."""


class _Line(_Silent):
    """One line on stderr, rewritten at most twice a second."""

    def __init__(self, what: str):
        self.what = what
        self.count = 0
        self.start = time.monotonic()
        self.shown = 0.0

    def update(self, n: int) -> None:
        """Count ``n`` more rows and refresh the line now and then."""
        self.count += n
        now = time.monotonic()
        if now - self.shown >= 0.5:
            self.shown = now
            sys.stderr.write(f"\r{self.what}: {self.count:,} rows, "
                             f"{now - self.start:.0f} s")
            sys.stderr.flush()

    def close(self) -> None:
        """Clear the line."""
        sys.stderr.write("\r" + " " * 60 + "\r")
        sys.stderr.flush()


def progress(enabled: bool, what: str):
    """A progress display with ``update(n)`` and ``close()``: a line on stderr when
    ``enabled`` and stderr is a terminal, else one that shows nothing."""
    if enabled and sys.stderr.isatty():
        return _Line(what)
    return _Silent()
