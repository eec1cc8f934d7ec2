"""Which files a run has read, so that no output replaces one of them.

Every reader calls :func:`note_read` with the path it opens (study and
vehicle files, profile files at any depth of a profile expression, coast-down
logs and road-load blocks). A command runs inside :func:`tracking` and checks
each output path against the files read with :func:`is_input`, by resolved
path and by device and inode, so a symbolic or hard link to an input is
caught too.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError


@dataclass(frozen=True)
class ReadFile:
    """A file read by the run: resolved path and (device, inode) when it exists."""

    path: str
    identity: tuple | None


_TRACKERS: contextvars.ContextVar[tuple] = contextvars.ContextVar("tractive_read_files",
                                                                 default=())


def _identity(path: str) -> tuple | None:
    """(device, inode) of an existing file, or None."""
    try:
        st = os.stat(path)
    except OSError:
        return None
    return (st.st_dev, st.st_ino)


def note_read(path) -> None:
    """Record that the run reads ``path`` (no effect outside :func:`tracking`)."""
    trackers = _TRACKERS.get()
    if not trackers:
        return
    resolved = str(Path(path).expanduser().resolve())
    item = ReadFile(resolved, _identity(resolved))
    for t in trackers:
        t.add(item)


@contextlib.contextmanager
def tracking():
    """Collect every file noted while the block runs; yields the (growing) set."""
    seen: set = set()
    token = _TRACKERS.set(_TRACKERS.get() + (seen,))
    try:
        yield seen
    finally:
        _TRACKERS.reset(token)


def is_input(path, read) -> ReadFile | None:
    """The input that ``path`` would replace (same resolved path, or same device and
    inode through a link), or None.

    Parameters
    ----------
    path : str or path
        A planned output.
    read : iterable of ReadFile or str
        Files read by the run.
    """
    resolved = str(Path(path).expanduser().resolve())
    ident = _identity(resolved)
    for item in read:
        if not isinstance(item, ReadFile):
            item = ReadFile(str(Path(item).expanduser().resolve()), _identity(str(item)))
        if item.path == resolved or (ident is not None and item.identity == ident):
            return item
    return None


def check_regular(path, kind: str = "file") -> os.stat_result:
    """The ``os.stat`` of an input that is a regular file; a located InputError for a
    missing file, a folder, or what is not a regular file (a FIFO would block the
    read, a device such as /dev/zero would never end)."""
    import stat

    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise InputError("file not found", file=str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc.__class__.__name__})",
                         file=str(path)) from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(f"is a directory, expected a {kind}", file=str(path))
    if not stat.S_ISREG(st.st_mode):
        raise InputError(f"is not a regular file (a device, pipe or socket), expected a "
                         f"{kind}", file=str(path))
    return st
