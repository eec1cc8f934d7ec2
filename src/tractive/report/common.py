"""Safe output files: atomic writing, no overwriting of inputs, text cells kept as text.

Atomic writing
    The writer writes a temporary file in the target's own folder and then
    renames it over the target with :func:`os.replace` (atomic on POSIX and
    Windows when both are on the same file system). A failure leaves no
    half-written target and removes the temporary file.

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


def check_target(path, inputs: Iterable = ()) -> Path:
    """Refuse an output path that is one of the input files or a folder."""
    target = Path(path)
    for src in inputs:
        if src and _same_file(target, Path(src)):
            raise InputError("refusing to overwrite an input file; choose another output "
                             "name", file=str(target))
    if target.is_dir():
        raise InputError("is a folder, expected a file name", file=str(target))
    return target


def atomic_write(path, write: Callable[[Path], None], *, inputs: Iterable = ()) -> Path:
    """Write a file atomically.

    Parameters
    ----------
    path : str or path
        Target file. Its folder is created when missing.
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
        When the target is an input or a folder, or cannot be written.
    """
    target = check_target(path, inputs)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder ({exc.strerror})",
                         file=str(target)) from None
    tmp = _new_temp_file(folder, target)
    try:
        write(tmp)
        _keep_target_mode(tmp, target)
        os.replace(tmp, target)
    except OSError as exc:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise InputError(f"cannot write the file ({exc.strerror or exc})",
                         file=str(target)) from None
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    return target


def _new_temp_file(folder: Path, target: Path) -> Path:
    """Create an empty, new temporary file next to ``target`` with the usual permissions.

    ``os.open`` with ``O_CREAT | O_EXCL`` and mode 0o666 lets the operating system
    apply the umask (and a default ACL), as for any newly created file; a name
    that exists already is never reused.
    """
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)
    for _ in range(100):
        tmp = folder / f".{target.name}.{secrets.token_hex(6)}.tmp"
        try:
            fd = os.open(tmp, flags, 0o666)
        except FileExistsError:
            continue
        except OSError as exc:
            raise InputError(f"cannot write in the output folder ({exc.strerror or exc})",
                             file=str(target)) from None
        os.close(fd)
        return tmp
    raise InputError("cannot create a temporary file in the output folder",
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
