"""Safe output files with real faults: a full disk while writing, links to inputs, stale
temporaries of a killed run, read-only targets; CSV cells that could become formulas;
long time series thinned on the workbook's profile sheets.

"no space left on device" and "permission denied" are the POSIX strerror texts of ENOSPC
and EACCES (IEEE Std 1003.1, <errno.h>), lower-cased. Formula characters and field
splitting: OWASP "CSV Injection". Quoting: RFC 4180.
"""

from __future__ import annotations

import csv
import errno
import gc
import io
import os
import sys

import numpy as np
import openpyxl
import pytest

from tractive.errors import InputError
from tractive.readfiles import note_read, tracking
from tractive.report import common
from tractive.report.common import all_or_nothing, check_target, write_text_atomic
from tractive.report.csv import summary_csv_text
from tractive.report.workbook import profiles as wb_profiles
from tractive.report.xlsx import series_step, series_steps, write_workbook
from tractive.study.results import ResultRow, StudyResult, TimeSeries

KEY = "positive_energy_wh_per_km"


def _result(names=("baseline", "v"), series=()):
    """A small study result with one metric per row."""
    rows = tuple(ResultRow(n, "baseline" if i == 0 else "modification", "p", "profile",
                           {KEY: 100.0 + i}, change={} if i == 0 else {KEY: float(i)})
                 for i, n in enumerate(names))
    return StudyResult("s", "s.yaml", "metric", "EUR", rows, series=tuple(series))


def _fill_disk_after(monkeypatch, n_ok: int):
    """os.write fails with ENOSPC after ``n_ok`` successful calls (a disk filling up)."""
    real, calls = os.write, [0]

    def write(fd, data):
        calls[0] += 1
        if calls[0] > n_ok:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real(fd, data)

    monkeypatch.setattr(common.os, "write", write)


@pytest.fixture
def unraisable(monkeypatch):
    """Messages Python would print as "Exception ignored in ..."."""
    seen = []
    monkeypatch.setattr(sys, "unraisablehook", lambda u: seen.append(u))
    yield seen


# -- full disk ------------------------------------------------------------------------------

@pytest.mark.parametrize("n_ok", [0, 2])
def test_full_disk_while_writing_the_workbook_is_one_error_and_no_noise(tmp_path, monkeypatch,
                                                                      unraisable, n_ok):
    target = tmp_path / "r.xlsx"
    target.write_bytes(b"old")
    _fill_disk_after(monkeypatch, n_ok)
    with pytest.raises(InputError) as err:
        write_workbook(_result(), target)
    assert str(err.value) == f"{target}: cannot write: no space left on device"
    gc.collect()
    assert unraisable == []
    assert target.read_bytes() == b"old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.xlsx"]


def test_full_disk_while_writing_text_is_one_error(tmp_path, monkeypatch):
    _fill_disk_after(monkeypatch, 0)
    with pytest.raises(InputError, match="no space left on device"):
        write_text_atomic(tmp_path / "r.csv", "a,b\n" * 10000)
    assert list(tmp_path.iterdir()) == []


def test_full_disk_on_the_second_output_writes_nothing(tmp_path, monkeypatch):
    (tmp_path / "a.json").write_text("old a")
    real, calls = os.write, []

    def write(fd, data):
        calls.append(fd)
        if len(set(calls)) > 1:          # the second file's descriptor
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        return real(fd, data)

    monkeypatch.setattr(common.os, "write", write)
    with pytest.raises(InputError, match="no space left on device"):
        with all_or_nothing():
            write_text_atomic(tmp_path / "a.json", "new a")
            write_workbook(_result(), tmp_path / "b.xlsx")
    assert (tmp_path / "a.json").read_text() == "old a"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.json"]


# -- inputs reached through links -------------------------------------------------------------

def test_a_hard_link_to_an_input_is_refused(tmp_path):
    src = tmp_path / "study.yaml"
    src.write_text("keep")
    link = tmp_path / "out.csv"
    os.link(src, link)
    with tracking() as read:
        note_read(src)
    for inputs in (read, [src], [str(src)]):
        with pytest.raises(InputError, match="input file"):
            write_text_atomic(link, "x", inputs=inputs)
    assert src.read_text() == "keep"


def test_a_symlink_to_an_input_and_an_input_through_a_symlinked_folder(tmp_path):
    src = tmp_path / "data" / "ev.yaml"
    src.parent.mkdir()
    src.write_text("keep")
    (tmp_path / "out.xlsx").symlink_to(src)
    (tmp_path / "alias").symlink_to(tmp_path / "data")
    with tracking() as read:
        note_read(tmp_path / "alias" / "ev.yaml")
    with pytest.raises(InputError, match="input file"):
        check_target(tmp_path / "out.xlsx", read)
    with pytest.raises(InputError, match="input file"):
        write_workbook(_result(), src, inputs=read)
    assert src.read_text() == "keep"
    check_target(tmp_path / "other.xlsx", read)          # a new name is fine


# -- stale temporaries and read-only targets ---------------------------------------------------

def test_stale_temporaries_of_the_same_target_are_removed(tmp_path):
    stale = [tmp_path / ".r.csv.0123456789ab.tmp", tmp_path / ".r.csv.ba9876543210.tmp"]
    keep = [tmp_path / ".other.csv.0123456789ab.tmp", tmp_path / ".r.csv.notahexname.tmp"]
    for p in stale + keep:
        p.write_text("left by a killed run")
    write_text_atomic(tmp_path / "r.csv", "new")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        [p.name for p in keep] + ["r.csv"])


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="root ignores file permissions (see the os.access test)")
def test_a_read_only_target_is_refused_not_replaced(tmp_path):
    target = tmp_path / "r.json"
    target.write_text("protected")
    target.chmod(0o444)
    with pytest.raises(InputError, match="read-only"):
        write_text_atomic(target, "new")
    assert target.read_text() == "protected"


def test_a_target_without_write_permission_is_refused(tmp_path, monkeypatch):
    # as root every file is writable, so the permission answer is simulated
    target = tmp_path / "r.json"
    target.write_text("protected")
    real = os.access
    monkeypatch.setattr(common.os, "access",
                        lambda p, mode: False if str(p) == str(target) else real(p, mode))
    with pytest.raises(InputError) as err:
        write_text_atomic(target, "new")
    assert str(err.value) == f"{target}: cannot write: permission denied (the file is " \
                             "read-only)"
    assert target.read_text() == "protected"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.json"]


# -- formula guard in the CSV -----------------------------------------------------------------

@pytest.mark.parametrize("name,guarded", [
    ("=1+1", True), ("+roof", True), ("-mass", True), ("@tyres", True), ("\tx", True),
    ("\rx", True), ("roof;=cmd()", True), ("a,+b", True), ("a, -b", True),
    ("tab\t@x", True), ('say "=1+2"', True), ("it's '@x", True),
    ("roof box", False), ("x=1", False), ("well-known", False), ("a+b", False),
    ("e-mail@home", False),
])
def test_csv_text_cells_that_could_become_formulas_get_an_apostrophe(name, guarded):
    text = summary_csv_text(_result(("baseline", name)))
    rows = list(csv.reader(io.StringIO(text)))
    variants = [r[0] for r in rows[1:]]
    assert variants[1] == ("'" + name if guarded else name)
    # every text field is quoted, numbers are not (RFC 4180 quoting, QUOTE_NONNUMERIC)
    lines = text.splitlines()
    assert lines[1].startswith('"baseline","baseline","p","profile",100.0,')
    back = list(csv.reader(io.StringIO(text), quoting=csv.QUOTE_NONNUMERIC))
    assert back[2][4] == 101.0 and back[2][5] == 1.0


# -- long time series ---------------------------------------------------------------------------

def test_series_step_keeps_every_sheet_within_its_rows():
    assert series_step(10, 10) == 1 and series_step(11, 10) == 2
    for n in (10_001, 360_000, 5_000_000, 10 ** 8):
        k = series_step(n)
        assert (n - 1) // k + 1 <= wb_profiles.MAX_SERIES_ROWS       # rows kept
        assert k == 1 or (n - 1) // (k - 1) + 1 > wb_profiles.MAX_SERIES_ROWS  # smallest
    # Excel's sheet limit is 1,048,576 rows (Excel specifications and limits, from memory)
    assert wb_profiles.MAX_SERIES_ROWS + 2 <= 1_048_576 == wb_profiles.SHEET_ROW_LIMIT
    assert series_steps({"udds": 1369, "long": 360_000}) == {
        "udds": 1, "long": series_step(360_000)}


def test_a_long_series_is_thinned_with_a_note(tmp_path, monkeypatch):
    monkeypatch.setattr(wb_profiles, "MAX_SERIES_ROWS", 40)
    n = 1001
    t = np.arange(1.0, n + 1.0)
    v = 50.0 + 10.0 * np.sin(t / 30.0)
    f = 300.0 + t
    series = [TimeSeries(name, "p", t, v, f, f * v / 3.6 / 1000.0,
                         np.cumsum(f * v / 3.6) / 3.6e6) for name in ("baseline", "v")]
    out = write_workbook(_result(series=series), tmp_path / "r.xlsx")
    ws = openpyxl.load_workbook(out)["Profile p"]
    times = [c for c in next(ws.iter_cols(min_col=1, max_col=1, min_row=3, values_only=True))
             if c is not None]
    step = series_step(n, 40)
    assert step == 26 and len(times) == (n - 1) // step + 1 <= 40
    # every step-th interval counted back from the last: the last row is the end
    want = np.arange(n - 1, -1, -step)[::-1]
    assert times == t[want].tolist()
    energy = [ws.cell(row=3 + i, column=5).value for i in range(len(times))]
    assert energy == series[1].cumulative_energy_kwh[want].tolist()
    notes = [c.value for row in ws.iter_rows() for c in row
             if isinstance(c.value, str) and c.value.startswith("Thinned")]
    assert len(notes) == 1 and f"every {step}th of the 1,001 intervals" in notes[0]
