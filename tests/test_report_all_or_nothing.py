"""Several outputs of one command: either every output is written or none changes.

The operating-system message "permission denied" is the POSIX strerror text of
EACCES (IEEE Std 1003.1, <errno.h>), lower-cased.
"""

from __future__ import annotations

import errno
import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from tractive.cli import cli
from tractive.errors import InputError
from tractive.report import common
from tractive.report.common import all_or_nothing, write_text_atomic

ROOT = Path(__file__).resolve().parents[1]
STUDY = ROOT / "examples" / "fleet-tyres" / "study.yaml"


def leftovers(folder: Path) -> list:
    return sorted(p.name for p in folder.iterdir())


def _refuse_second(monkeypatch, calls: list):
    """Make the second rename into a target fail with EACCES."""
    real = os.replace

    def replace(src, dst):
        calls.append(Path(dst).name)
        if len(calls) == 2:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))
        return real(src, dst)

    monkeypatch.setattr(common.os, "replace", replace)


def test_all_outputs_appear_together(tmp_path):
    with all_or_nothing():
        write_text_atomic(tmp_path / "a.csv", "a")
        write_text_atomic(tmp_path / "b.json", "b")
        # nothing is renamed before the block ends
        assert not (tmp_path / "a.csv").exists()
    assert (tmp_path / "a.csv").read_text() == "a"
    assert (tmp_path / "b.json").read_text() == "b"
    assert leftovers(tmp_path) == ["a.csv", "b.json"]


def test_a_failure_writing_the_second_output_leaves_the_first_unwritten(tmp_path):
    (tmp_path / "old.csv").write_text("old")

    def broken(tmp):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    with pytest.raises(InputError, match="no space left on device"):
        with all_or_nothing():
            write_text_atomic(tmp_path / "new.csv", "new")
            write_text_atomic(tmp_path / "old.csv", "replaced")
            common.atomic_write(tmp_path / "third.json", broken)
    assert leftovers(tmp_path) == ["old.csv"]
    assert (tmp_path / "old.csv").read_text() == "old"


def test_a_failed_rename_undoes_the_renames_already_done(tmp_path, monkeypatch):
    (tmp_path / "first.csv").write_text("previous first")
    (tmp_path / "second.json").write_text("previous second")
    calls = []
    _refuse_second(monkeypatch, calls)
    with pytest.raises(InputError) as err:
        with all_or_nothing():
            write_text_atomic(tmp_path / "first.csv", "new first")
            write_text_atomic(tmp_path / "second.json", "new second")
    assert str(err.value) == (f"{tmp_path / 'second.json'}: cannot write: permission denied; "
                              f"no output was written")
    assert calls[:2] == ["first.csv", "second.json"]
    assert (tmp_path / "first.csv").read_text() == "previous first"
    assert (tmp_path / "second.json").read_text() == "previous second"
    assert leftovers(tmp_path) == ["first.csv", "second.json"]


def test_a_failed_rename_removes_a_new_first_output(tmp_path, monkeypatch):
    calls = []
    _refuse_second(monkeypatch, calls)
    with pytest.raises(InputError):
        with all_or_nothing():
            write_text_atomic(tmp_path / "first.csv", "new first")
            write_text_atomic(tmp_path / "second.json", "new second")
    assert leftovers(tmp_path) == []


def test_the_same_target_twice_keeps_the_last_content(tmp_path):
    with all_or_nothing():
        write_text_atomic(tmp_path / "a.csv", "one")
        write_text_atomic(tmp_path / "a.csv", "two")
    assert (tmp_path / "a.csv").read_text() == "two"
    assert leftovers(tmp_path) == ["a.csv"]


def test_compare_with_a_failing_second_output_writes_nothing(tmp_path, monkeypatch):
    # the first output (CSV) is written in full, the second (workbook) fails on its rename:
    # the command exits 2 with one line and the CSV does not appear
    calls = []
    _refuse_second(monkeypatch, calls)
    good, bad = tmp_path / "good.csv", tmp_path / "second.xlsx"
    res = CliRunner().invoke(cli, ["compare", str(STUDY), "--draws", "0", "-o", str(good),
                                   "-o", str(bad)])
    assert res.exit_code == 2, res.output
    assert "cannot write: permission denied" in res.output
    assert calls[:2] == ["good.csv", "second.xlsx"]
    assert leftovers(tmp_path) == []


def test_compare_with_a_failing_second_output_keeps_the_first_unchanged(tmp_path,
                                                                      monkeypatch):
    good = tmp_path / "good.json"
    good.write_text("earlier result")
    calls = []
    _refuse_second(monkeypatch, calls)
    res = CliRunner().invoke(cli, ["compare", str(STUDY), "--draws", "0", "-o", str(good),
                                   "-o", str(tmp_path / "second.csv")])
    assert res.exit_code == 2, res.output
    assert good.read_text() == "earlier result"
    assert leftovers(tmp_path) == ["good.json"]


def test_compare_writes_every_output_when_nothing_fails(tmp_path):
    outs = [tmp_path / "r.csv", tmp_path / "r.json"]
    res = CliRunner().invoke(cli, ["compare", str(STUDY), "--draws", "0",
                                   *sum((["-o", str(o)] for o in outs), [])])
    assert res.exit_code == 0, res.output
    assert all(o.stat().st_size > 0 for o in outs)
    assert leftovers(tmp_path) == ["r.csv", "r.json"]
