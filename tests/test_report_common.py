"""Safe output files: every failure to write is one error naming the file, nothing is
left half-written, and a missing folder is refused instead of created.

The operating-system messages ("permission denied", "no space left on device")
are the POSIX strerror texts of EACCES and ENOSPC (IEEE Std 1003.1, <errno.h>),
lower-cased.
"""

from __future__ import annotations

import errno
import os
import subprocess
import sys
from pathlib import Path

import pytest

from tractive.errors import InputError
from tractive.report import common
from tractive.report.common import atomic_write, check_target, write_text_atomic
from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "examples" / "fleet-tyres" / "study.yaml"
LINUX_PROC = Path("/proc/self").is_dir()


def run_process(*args, cwd=None):
    """The installed command as its own process (end-to-end smoke test only)."""
    return subprocess.run([sys.executable, "-m", "tractive", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


def one_line(r, *needles):
    assert r.returncode == 2, (r.stdout, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr, r.stderr
    for n in needles:
        assert n in lines[0], lines[0]


def leftovers(folder: Path) -> list:
    return sorted(p.name for p in folder.iterdir())


# -- library -------------------------------------------------------------------------------

def test_missing_folder_is_refused_and_not_created(tmp_path):
    target = tmp_path / "nodir" / "x.json"
    with pytest.raises(InputError, match="folder does not exist") as err:
        write_text_atomic(target, "{}")
    assert err.value.file == str(target)
    assert not (tmp_path / "nodir").exists()
    with pytest.raises(InputError, match="folder does not exist"):
        check_target(target)


def test_a_file_as_folder_is_refused(tmp_path):
    (tmp_path / "plain").write_text("x")
    with pytest.raises(InputError, match="cannot write"):
        write_text_atomic(tmp_path / "plain" / "x.json", "{}")


def test_rename_failure_keeps_the_old_file_and_leaves_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "report.csv"
    target.write_text("old")

    def refuse(src, dst):
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(common.os, "replace", refuse)
    with pytest.raises(InputError) as err:
        write_text_atomic(target, "new")
    assert str(err.value) == f"{target}: cannot write: permission denied"
    assert target.read_text() == "old"
    assert leftovers(tmp_path) == ["report.csv"]


def test_full_disk_while_writing_is_one_error(tmp_path):
    def full(tmp):
        tmp.write_text("partial")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    with pytest.raises(InputError, match="cannot write: no space left on device"):
        atomic_write(tmp_path / "x.xlsx", full)
    assert leftovers(tmp_path) == []


def test_temporary_file_creation_failure_is_one_error(tmp_path, monkeypatch):
    real_open = os.open

    def no_create(path, flags, mode=0o777, *a, **k):
        if str(path).endswith(".tmp"):
            raise OSError(errno.EROFS, os.strerror(errno.EROFS))
        return real_open(path, flags, mode, *a, **k)

    monkeypatch.setattr(common.os, "open", no_create)
    with pytest.raises(InputError, match="cannot write: read-only file system"):
        write_text_atomic(tmp_path / "x.json", "{}")
    assert leftovers(tmp_path) == []


def test_a_program_error_in_the_writer_is_not_hidden_but_cleans_up(tmp_path):
    def broken(tmp):
        tmp.write_text("partial")
        raise ValueError("bug")

    with pytest.raises(ValueError, match="bug"):
        atomic_write(tmp_path / "x.json", broken)
    assert leftovers(tmp_path) == []


def test_endings_are_checked_when_asked(tmp_path):
    with pytest.raises(InputError, match=r"unsupported file type \('\.txt'\)"):
        check_target(tmp_path / "fit.txt", suffixes=(".png", ".pdf", ".svg"))
    with pytest.raises(InputError, match="no ending"):
        check_target(tmp_path / "fit", suffixes=(".png",))
    assert check_target(tmp_path / "FIT.PNG", suffixes=(".png",)) == tmp_path / "FIT.PNG"


@pytest.mark.skipif(not LINUX_PROC, reason="needs Linux /proc")
def test_proc_is_refused_in_one_line():
    with pytest.raises(InputError, match="cannot write") as err:
        write_text_atomic("/proc/x.json", "{}")
    assert err.value.file == "/proc/x.json"


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="needs a non-root POSIX user (root writes anywhere)")
def test_read_only_folder_is_refused(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        with pytest.raises(InputError, match="permission denied"):
            write_text_atomic(ro / "x.json", "{}")
        assert leftovers(ro) == []
    finally:
        ro.chmod(0o755)


# -- through the commands --------------------------------------------------------------------

@pytest.mark.skipif(not LINUX_PROC, reason="needs Linux /proc and /sys")
@pytest.mark.parametrize("name", ["/proc/x.xlsx", "/sys/x.json", "/proc/x.csv"])
def test_compare_to_a_system_folder_is_one_line(name):
    one_line(run_cli("compare", STUDY, "--draws", "0", "-o", name), name, "cannot write")


def test_compare_to_a_missing_folder_is_refused_without_creating_it(tmp_path):
    one_line(run_cli("compare", STUDY, "--draws", "0", "-o", "nodir/x.xlsx", cwd=tmp_path),
             "nodir/x.xlsx", "folder does not exist")
    assert leftovers(tmp_path) == []


def test_end_to_end_process_writes_outputs_and_refuses_a_missing_folder(tmp_path):
    # the command as its own process: one line on stderr, exit 2, nothing created
    one_line(run_process("compare", STUDY, "--draws", "0", "-o", "nodir/x.csv",
                         cwd=tmp_path), "nodir/x.csv", "folder does not exist")
    done = run_process("compare", STUDY, "--draws", "0", "-o", "r.csv", "-o", "r.xlsx",
                       cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert leftovers(tmp_path) == ["r.csv", "r.xlsx"]


def test_unwritable_folder_is_refused_before_any_work(tmp_path, monkeypatch):
    # as the root user every folder is writable, so the access check is simulated
    monkeypatch.setattr(common.os, "access", lambda path, mode: False)
    with pytest.raises(InputError, match="cannot write: permission denied") as err:
        check_target(tmp_path / "x.xlsx")
    assert err.value.file == str(tmp_path / "x.xlsx")
