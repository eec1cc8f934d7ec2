"""Safe output files: atomic writing, no overwriting of inputs, text cells kept as text.

Atomic writing
    The writer writes a temporary file in the target's own folder and then
    renames it over the target with :func:`os.replace` (atomic on POSIX and
    Windows when both are on the same file system). A failure leaves no
    half-written target and removes the temporary file. Every operating-system
    error on the way (creating the temporary file, writing, renaming) becomes
    an :class:`~tractive.errors.InputError` naming the output file
    ("cannot write: permission denied").

Several outputs: all or nothing
    Inside ``with all_or_nothing():`` every :func:`atomic_write` writes its
    whole temporary file but renames nothing; when the block ends without an
    error, the temporary files are renamed over their targets one after the
    other. Guarantee: **no output is created or replaced unless every output
    was written in full.** A failure while writing (or any exception in the
    block) removes all temporary files and leaves every target as it was. A
    failure of a rename (rare: the temporary file sits in the target's own
    folder) undoes the renames already done: a replaced target gets its
    previous content back (kept as a hard link, or a copy where links are not
    possible, until the end), a new one is removed.

Missing folders
    The folder of an output file must exist; it is never created (a typing
    mistake in a folder name would otherwise scatter files). A missing folder
    is refused with "folder does not exist" before any work is done, by
    :func:`check_target`.

Permissions
    The temporary file is created with mode 0o666, from which the operating
    system removes the process umask, exactly as for any new file (a umask of
    022 gives 0o644; a default ACL of the folder applies too). When the target
    exists, the new file takes the target's permission bits instead, so
    replacing a report keeps who may read it.

Inputs are never overwritten
    A target that is the same file as any input (same path after resolving
    links, or the same device and inode: a symbolic or hard link) is refused
    with an :class:`~tractive.errors.InputError`; inputs are paths or the
    :class:`~tractive.readfiles.ReadFile` items a run collected
    (:func:`tractive.readfiles.is_input`).

Read-only targets
    An existing target without write permission is refused, not replaced
    (renaming over it would succeed in a writable folder).

Stale temporary files
    A run killed while writing leaves its hidden temporary file
    ``.NAME.<12 hex digits>.tmp``; the next write of the same target removes
    such files first. An error never leaves one behind.

Formula injection
    A spreadsheet program treats a text cell that begins with ``=``, ``+``,
    ``-`` or ``@`` (and, in some programs, a tab or carriage return) as a
    formula, and a program importing text may split a cell on ``;``, ``,`` or
    a tab first, or strip a quote. Text cells are therefore written so that
    they stay text: in CSV quoted, and with a leading apostrophe (the usual
    spreadsheet escape) when the text or any such field would start with a
    formula character (:func:`is_formula_like`); in a workbook
    as an explicit string cell (openpyxl data type ``"s"``), whose value is
    never evaluated. Numbers are not text and are written as numbers.

References
----------
.. [1] OWASP, "CSV Injection" (formula-injection guidance for exported
   spreadsheets).
.. [2] ECMA-376 Part 1, 18.3.1.4 (cell data type ``s``, shared string, versus
   formula ``f``).
"""

from __future__ import annotations

import contextlib
import contextvars
import errno
import io
import os
import re
import secrets
import shutil
import stat
from pathlib import Path
from typing import Callable, Iterable

from ..errors import InputError
from ..readfiles import is_input

#: first characters that make a spreadsheet read text as a formula
FORMULA_PREFIXES = ("=", "+", "-", "@", "\t", "\r")
#: a formula character at the start, or after a field separator (``;``, ``,``, tab)
#: or a quote, with blanks between: where a spreadsheet splitting the text on
#: import would start a cell with it
_FORMULA_START = re.compile(r"(?:^|[;,\t\"'])[ ]*[=+\-@\t\r]")


def is_formula_like(text) -> bool:
    """True for text a spreadsheet could take as a formula: a formula character at the
    start, or at the start of any field after splitting on ``;``, ``,`` or tab, or
    after a quote (OWASP, "CSV Injection")."""
    return isinstance(text, str) and _FORMULA_START.search(text) is not None


def csv_text(value):
    """A CSV cell value: formula-like text gets a leading apostrophe; others unchanged."""
    if is_formula_like(value):
        return "'" + value
    return value


def set_text_cell(cell, text: str) -> None:
    """Store ``text`` in an openpyxl cell as a string, never as a formula.

    openpyxl turns a value starting with ``=`` into a formula; setting the data
    type to ``"s"`` after the value keeps it a plain string in the file.
    """
    cell.value = text
    if isinstance(text, str):
        cell.data_type = "s"


def set_cell(cell, value) -> None:
    """Store a value in an openpyxl cell: text as text (see :func:`set_text_cell`),
    numbers as numbers, None as empty."""
    if isinstance(value, str):
        set_text_cell(cell, value)
    else:
        cell.value = value


def _same_file(a: Path, b: Path) -> bool:
    """True when two paths name the same file (resolved path, or same inode)."""
    try:
        if a.resolve() == b.resolve():
            return True
    except OSError:
        pass
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _reason(exc: OSError, folder: Path) -> str:
    """An operating-system error in plain lower-case words ("permission denied")."""
    if exc.errno == errno.ENOENT:
        try:
            exists = folder.is_dir()
        except OSError:
            exists = True
        return "the folder does not accept new files" if exists else "folder does not exist"
    text = exc.strerror or str(exc) or exc.__class__.__name__
    return " ".join(text.split()).lower()


def check_target(path, inputs: Iterable = (), *, suffixes: Iterable[str] | None = None
                 ) -> Path:
    """Refuse an output path that cannot or must not be written, before any work is done.

    Parameters
    ----------
    path : str or path
        The output file.
    inputs : iterable of paths
        Files the result is computed from; the output must not be one of them.
    suffixes : iterable of str, optional
        Accepted file-name endings (lower case, with the dot, e.g. ``".yaml"``).

    Raises
    ------
    InputError
        Naming the output file: an input file, a folder, a folder that does
        not exist (it is not created), a folder that cannot be written, or an
        ending not in ``suffixes``.
    """
    if not str(path).strip():
        raise InputError("empty output file name", file=str(path))
    target = Path(path)
    read = [src for src in inputs if src]
    if read and is_input(target, read) is not None:
        raise InputError("refusing to overwrite an input file; choose another output "
                         "name", file=str(target))
    if suffixes is not None:
        allowed = tuple(suffixes)
        if target.suffix.lower() not in allowed:
            got = f"'{target.suffix}'" if target.suffix else "no ending"
            raise InputError(f"unsupported file type ({got}); use a name ending in "
                             f"{', '.join(allowed)}", file=str(target))
    folder = target.parent
    try:
        if target.is_dir():
            raise InputError("is a folder, expected a file name", file=str(target))
        if not folder.exists():
            raise InputError(f"cannot write: folder does not exist ({folder}); create it "
                             "first", file=str(target))
        if not folder.is_dir():
            raise InputError(f"cannot write: {folder} is not a folder", file=str(target))
    except OSError as exc:
        raise InputError(f"cannot write: {_reason(exc, folder)}", file=str(target)) from None
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError("cannot write: permission denied (the folder is not writable)",
                         file=str(target))
    if target.is_file() and not os.access(target, os.W_OK):
        raise InputError("cannot write: permission denied (the file is read-only)",
                         file=str(target))
    return target


def atomic_write(path, write: Callable[[Path], None], *, inputs: Iterable = ()) -> Path:
    """Write a file atomically.

    Parameters
    ----------
    path : str or path
        Target file. Its folder must exist (it is never created).
    write : callable
        ``write(tmp_path)`` writes the whole content to ``tmp_path``.
    inputs : iterable of paths
        Files the result was computed from; the target must not be one of them.

    Returns
    -------
    Path of the written file.

    Raises
    ------
    InputError
        When the target is an input or a folder, its folder is missing, or
        any step of creating, writing or renaming fails (an :class:`OSError`
        such as "permission denied", "read-only file system" or "no space
        left on device", named in the message). No temporary or partial file
        is left behind.
    """
    target = check_target(path, inputs)
    folder = target.parent
    tmp = None
    try:
        remove_stale_temporaries(target)
        tmp = _new_temp_file(folder, target)
        write(tmp)
        _keep_target_mode(tmp, target)
        batch = _BATCH.get()
        if batch is not None:
            batch.add(tmp, target)
            return target
        os.replace(tmp, target)
    except OSError as exc:
        if tmp is not None:
            with contextlib.suppress(OSError):
                tmp.unlink()
        raise InputError(f"cannot write: {_reason(exc, folder)}",
                         file=str(target)) from None
    except BaseException:
        if tmp is not None:
            with contextlib.suppress(OSError):
                tmp.unlink()
        raise
    return target


class _Batch:
    """Temporary files written inside :func:`all_or_nothing`, waiting for their rename."""

    def __init__(self):
        """No file written yet."""
        self.pending: list = []         # (temporary file, target), in writing order

    def add(self, tmp: Path, target: Path) -> None:
        """A written temporary file waiting to be renamed over ``target``."""
        for i, (old_tmp, old_target) in enumerate(self.pending):
            if _same_file(old_target, target) or old_target == target:
                # the same target twice: the later content wins, as without a batch
                with contextlib.suppress(OSError):
                    old_tmp.unlink()
                del self.pending[i]
                break
        self.pending.append((tmp, target))

    def discard(self) -> None:
        """Remove every waiting temporary file."""
        for tmp, _ in self.pending:
            with contextlib.suppress(OSError):
                tmp.unlink()
        self.pending = []

    def commit(self) -> None:
        """Rename every temporary file over its target; on a failure undo those done."""
        done = []                       # (target, backup or None) renamed so far
        backups = []
        current = None
        try:
            for tmp, target in self.pending:
                current = target
                backup = _backup(target)
                if backup is not None:
                    backups.append(backup)
                os.replace(tmp, target)
                done.append((target, backup))
        except OSError as exc:
            for target, backup in reversed(done):
                with contextlib.suppress(OSError):
                    if backup is not None:
                        os.replace(backup, target)
                    else:
                        target.unlink()
            self.discard()
            for b in backups:
                with contextlib.suppress(OSError):
                    b.unlink()
            raise InputError(f"cannot write: {_reason(exc, current.parent)}; no output "
                             f"was written", file=str(current)) from None
        for b in backups:
            with contextlib.suppress(OSError):
                b.unlink()
        self.pending = []


def _backup(target: Path) -> Path | None:
    """Keep the present content of ``target`` under a new name next to it (None: no file).

    A hard link when the file system allows it (no copying), else a copy.
    """
    try:
        if not target.is_file():
            return None
    except OSError:
        return None
    for _ in range(100):
        bak = target.parent / f".{target.name}.{secrets.token_hex(6)}.bak"
        try:
            os.link(target, bak)
            return bak
        except FileExistsError:
            continue
        except OSError:
            if bak.exists():
                continue
            shutil.copy2(target, bak)
            return bak
    raise OSError(errno.EEXIST, "no free backup file name in the output folder")


_BATCH: contextvars.ContextVar = contextvars.ContextVar("tractive_output_batch",
                                                        default=None)


@contextlib.contextmanager
def all_or_nothing():
    """Write several outputs so that either all of them appear or none changes.

    Every :func:`atomic_write` (and the writers built on it) inside the block
    writes its temporary file only; the renames happen together when the
    block ends without an error (see the module doc for the guarantee).

    Examples
    --------
    >>> with all_or_nothing():                       # doctest: +SKIP
    ...     write_text_atomic("a.csv", text_a)
    ...     write_text_atomic("b.json", text_b)

    Raises
    ------
    InputError
        When a rename fails (naming that output); nothing is then changed.
    """
    batch = _Batch()
    token = _BATCH.set(batch)
    try:
        yield batch
    except BaseException:
        _BATCH.reset(token)
        batch.discard()
        raise
    _BATCH.reset(token)
    batch.commit()


def _new_temp_file(folder: Path, target: Path) -> Path:
    """Create an empty, new temporary file next to ``target`` with the usual permissions.

    ``os.open`` with ``O_CREAT | O_EXCL`` and mode 0o666 lets the operating system
    apply the umask (and a default ACL), as for any newly created file; a name
    that exists already is never reused. Other :class:`OSError` propagate.
    """
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)
    for _ in range(100):
        tmp = folder / f".{target.name}.{secrets.token_hex(6)}.tmp"
        try:
            fd = os.open(tmp, flags, 0o666)
        except FileExistsError:
            continue
        os.close(fd)
        return tmp
    raise InputError("cannot write: no free temporary file name in the output folder",
                     file=str(target))


def remove_stale_temporaries(target: Path) -> list:
    """Remove the hidden temporary files ``.NAME.<12 hex>.tmp`` a killed run left next
    to ``target``; returns the names removed."""
    pattern = re.compile(re.escape(f".{target.name}.") + r"[0-9a-f]{12}\.tmp")
    removed = []
    try:
        names = os.listdir(target.parent)
    except OSError:
        return removed
    for name in names:
        if pattern.fullmatch(name):
            with contextlib.suppress(OSError):
                os.unlink(target.parent / name)
                removed.append(name)
    return removed


class _RawFile(io.RawIOBase):
    """An unbuffered binary file written with :func:`os.write` (so a failing system
    call, such as a full disk, surfaces as the :class:`OSError` it is)."""

    def __init__(self, path: Path):
        """Open ``path`` for writing, truncated."""
        self.fd = os.open(path, os.O_WRONLY | os.O_TRUNC | getattr(os, "O_CLOEXEC", 0))

    def writable(self) -> bool:
        """Always True."""
        return True

    def seekable(self) -> bool:
        """Always True (a regular file)."""
        return True

    def write(self, data) -> int:
        """Write ``data``; returns the bytes written (the buffer above retries the rest)."""
        return os.write(self.fd, data)

    def seek(self, offset: int, whence: int = 0) -> int:
        """Move the file position."""
        return os.lseek(self.fd, offset, whence)

    def tell(self) -> int:
        """The file position."""
        return os.lseek(self.fd, 0, os.SEEK_CUR)

    def close(self) -> None:
        """Close the descriptor (once)."""
        if not self.closed:
            fd, self.fd = self.fd, -1
            super().close()
            os.close(fd)


def open_binary(path) -> io.BufferedWriter:
    """A buffered binary file for writing a temporary file made by :func:`atomic_write`."""
    return io.BufferedWriter(_RawFile(Path(path)))


def _keep_target_mode(tmp: Path, target: Path) -> None:
    """Give the new file the permission bits of the file it replaces (if any)."""
    try:
        st = os.stat(target)
    except OSError:
        return                      # a new target: keep the mode the file was created with
    if stat.S_ISREG(st.st_mode):
        os.chmod(tmp, stat.S_IMODE(st.st_mode))


def write_text_atomic(path, text: str, *, inputs: Iterable = ()) -> Path:
    """Write UTF-8 text atomically (see :func:`atomic_write`)."""
    def _write(tmp: Path):
        """The text as UTF-8 into the temporary file."""
        fh = open_binary(tmp)
        try:
            fh.write(text.encode("utf-8"))
            fh.flush()
        finally:
            with contextlib.suppress(OSError):
                fh.close()
    return atomic_write(path, _write, inputs=inputs)
