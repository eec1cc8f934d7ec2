"""A progress bar on stderr for long runs, shown only to a person at a terminal.

``progress(total, desc)`` returns an object with ``update(n)`` and ``close()``
that is also a context manager. It draws a bar (tqdm) on stderr when stderr is
a terminal and ``quiet`` is false; otherwise (a pipe, a file, a test, ``--quiet``)
it does nothing, so output that is read by programs never carries bar text.
tqdm is imported only when a bar is drawn.
"""

from __future__ import annotations

import sys


class NoProgress:
    """The silent stand-in: same methods as a bar, does nothing."""

    def update(self, n: int = 1) -> None:
        """Count n more steps (ignored)."""

    def close(self) -> None:
        """Finish (nothing to clear)."""

    def __enter__(self):
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def shows_progress(stream=None, quiet: bool = False) -> bool:
    """True when a bar should be drawn: not quiet and ``stream`` (default stderr) is a terminal."""
    if quiet:
        return False
    stream = sys.stderr if stream is None else stream
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError, OSError):     # no isatty, or a closed stream
        return False


def progress(total: int | None, desc: str = "", quiet: bool = False, *, stream=None,
             unit: str = "it"):
    """A bar over ``total`` steps on stderr when it is a terminal and not quiet, else a no-op.

    Parameters
    ----------
    total : int or None
        Number of steps (None: unknown, the bar counts without a percentage).
    desc : str
        Text before the bar.
    quiet : bool
        Never draw.
    stream : file, optional
        Where to draw (default ``sys.stderr``); the terminal check is made on it.
    unit : str
        Name of one step in the rate shown.
    """
    stream = sys.stderr if stream is None else stream
    # the command line escapes control characters on its streams; a bar draws with
    # them, so it writes to the stream underneath
    stream = getattr(stream, "_stream", stream)
    if not shows_progress(stream, quiet):
        return NoProgress()
    from tqdm import tqdm

    return tqdm(total=total, desc=desc, unit=unit, file=stream, leave=False,
                dynamic_ncols=True)
