"""Safe output files: atomic writing, no overwriting of inputs, text cells kept as text.

Atomic writing
    The writer writes a temporary file in the target's own folder and then
    renames it over the target with :func:`os.replace` (atomic on POSIX and
    Windows when both are on the same file system). A failure leaves no
    half-written target and removes the temporary file. Every operating-system
    error on the way (creating the temporary file, writing, renaming) becomes
    an :class:`~tractive.errors.InputError` naming the output file
    ("cannot write: permission denied").

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
    links, or the same inode) is refused with an
    :class:`~tractive.errors.InputError`.

Formula injection
    A spreadsheet program treats a text cell that begins with ``=``, ``+``,
    ``-`` or ``@`` (and, in some programs, a tab or carriage return) as a
    formula. Text cells are therefore written so that they stay text: in CSV
    with a leading apostrophe (the usual spreadsheet escape), in a workbook
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
import errno
import os
import secrets
import stat
from pathlib import Path
from typing import Callable, Iterable

from ..errors import InputError

#: first characters that make a spreadsheet read text as a formula
FORMULA_PREFIXES = ("=", "+", "-", "@", "\t", "\r")


def is_formula_like(text) -> bool:
    """True for text a spreadsheet would take as a formula."""
    return isinstance(text, str) and text.startswith(FORMULA_PREFIXES)


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
    for src in inputs:
        if src and _same_file(target, Path(src)):
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
        tmp = _new_temp_file(folder, target)
        write(tmp)
        _keep_target_mode(tmp, target)
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
        tmp.write_text(text, encoding="utf-8")
    return atomic_write(path, _write, inputs=inputs)
