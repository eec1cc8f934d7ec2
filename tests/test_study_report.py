"""Report writing: atomic, never over an input, formula-like text stays text.

Reference for the formula guard: OWASP "CSV Injection" (cells starting with
=, +, -, @ are formulas to a spreadsheet); ECMA-376 cell type "s" (a string
cell is never evaluated), read back with openpyxl.
"""

from __future__ import annotations

import csv
import json
import os
import stat
from pathlib import Path

import openpyxl
import pytest

from tractive.cli import main
from tractive.errors import InputError
from tractive.report.common import (atomic_write, csv_text, is_formula_like, set_cell,
                                    set_text_cell, write_text_atomic)

CAR = """\
name: "=HYPERLINK(\\"http://x\\")"
mass_kg: 1500
road_load:
  cda_m2: 0.62
  crr: 0.010
"""

STUDY = """\
name: "@SUM(1+1)"
baseline:
  vehicle: car.yaml
modifications:
  - name: "=1+2"
    changes: {cda_m2: +0.1}
  - name: "-minus"
    changes: {crr: -5%}
  - name: "+plus"
    changes: {mass_kg: +50}
driving:
  profiles:
    - {name: "@cmd", profile: udds}
uncertainty:
  draws: 10
"""


@pytest.fixture()
def formula_study(tmp_path):
    (tmp_path / "car.yaml").write_text(CAR)
    (tmp_path / "study.yaml").write_text(STUDY)
    return tmp_path / "study.yaml"


def test_formula_like_text_in_csv_is_escaped(formula_study, tmp_path):
    out = tmp_path / "out.csv"
    with pytest.raises(SystemExit) as e:
        main(["compare", str(formula_study), "-o", str(out)])
    assert e.value.code == 0
    with open(out, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    cells = [c for row in rows for c in row]
    for text in ("=1+2", "-minus", "+plus", "@cmd"):
        assert "'" + text in cells
        assert text not in cells
    # numbers are not text: negative changes stay numbers
    header = rows[0]
    col = header.index("change_positive_energy_kwh")
    minus = [r for r in rows if r[0] == "'-minus"][0]
    assert float(minus[col]) < 0


def test_openpyxl_text_cells_stay_text(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    set_text_cell(ws["A1"], "=SUM(1,2)")
    set_cell(ws["A2"], "+cmd|' /C calc'!A0")
    set_cell(ws["A3"], -12.5)
    set_cell(ws["A4"], "@x")
    path = tmp_path / "t.xlsx"
    wb.save(path)
    back = openpyxl.load_workbook(path)["Sheet"]
    assert back["A1"].value == "=SUM(1,2)" and back["A1"].data_type == "s"
    assert back["A2"].data_type == "s"
    assert back["A3"].value == -12.5 and back["A3"].data_type == "n"
    assert back["A4"].value == "@x" and back["A4"].data_type == "s"


def test_workbook_keeps_formula_like_names_as_text(formula_study, tmp_path):
    pytest.importorskip("tractive.report.xlsx")
    out = tmp_path / "out.xlsx"
    with pytest.raises(SystemExit) as e:
        main(["compare", str(formula_study), "-o", str(out)])
    assert e.value.code == 0
    wb = openpyxl.load_workbook(out)
    seen = set()
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if isinstance(cell.value, str) and cell.value[:1] in "=+-@":
                    assert cell.data_type == "s", (ws.title, cell.coordinate, cell.value)
                    seen.add(cell.value)
    assert "=1+2" in seen


def test_helpers():
    assert is_formula_like("=A1") and is_formula_like("-x") and not is_formula_like("x=1")
    assert csv_text("@a") == "'@a" and csv_text("plain") == "plain" and csv_text(3.0) == 3.0


def test_atomic_write_replaces_whole_file_and_cleans_up(tmp_path):
    target = tmp_path / "sub" / "r.txt"
    target.parent.mkdir()
    write_text_atomic(target, "first")
    assert target.read_text() == "first"

    def broken(tmp: Path):
        tmp.write_text("half")
        raise RuntimeError("disk on fire")

    with pytest.raises(RuntimeError):
        atomic_write(target, broken)
    assert target.read_text() == "first"
    assert [p.name for p in target.parent.iterdir()] == ["r.txt"]


def test_atomic_write_refuses_inputs(tmp_path):
    src = tmp_path / "in.yaml"
    src.write_text("keep")
    with pytest.raises(InputError):
        write_text_atomic(src, "x", inputs=[src])
    link = tmp_path / "link.yaml"
    link.symlink_to(src)
    with pytest.raises(InputError):
        write_text_atomic(link, "x", inputs=[src])
    assert src.read_text() == "keep"
    with pytest.raises(InputError):
        write_text_atomic(tmp_path, "x")


def test_json_output_file_matches_stdout(formula_study, tmp_path, capsys):
    out = tmp_path / "r.json"
    with pytest.raises(SystemExit):
        main(["compare", str(formula_study), "--json", "-o", str(out), "--seed", "3"])
    printed = json.loads(capsys.readouterr().out)
    written = json.loads(out.read_text())
    assert printed["rows"] == written["rows"]
    assert printed["study"] == "@SUM(1+1)"
    assert printed["rows"][0]["variant"] == "baseline"


@pytest.fixture()
def umask():
    """Set the process umask for a test and restore it afterwards."""
    old = os.umask(0o022)
    os.umask(old)

    def set_mask(mask):
        os.umask(mask)
    yield set_mask
    os.umask(old)


@pytest.mark.parametrize("mask", [0o022, 0o002, 0o077, 0o027])
def test_new_files_get_the_mode_of_any_new_file(tmp_path, umask, mask):
    # POSIX open(2)/creat(2): a new file's permission bits are mode & ~umask; a plain
    # open(..., "w") in Python creates files with mode 0o666, the reference here
    umask(mask)
    plain = tmp_path / "plain.txt"
    plain.write_text("x")
    written = write_text_atomic(tmp_path / "out.csv", "x")
    assert stat.S_IMODE(written.stat().st_mode) == stat.S_IMODE(plain.stat().st_mode) \
        == 0o666 & ~mask


@pytest.mark.parametrize("mode", [0o600, 0o640, 0o664])
def test_replacing_a_file_keeps_its_permissions(tmp_path, umask, mode):
    umask(0o022)
    target = tmp_path / "out.json"
    target.write_text("old")
    os.chmod(target, mode)
    write_text_atomic(target, "new")
    assert target.read_text() == "new"
    assert stat.S_IMODE(target.stat().st_mode) == mode


def test_compare_outputs_are_readable_like_any_new_file(formula_study, tmp_path, umask):
    umask(0o022)
    outs = [tmp_path / "r.csv", tmp_path / "r.json"]
    args = ["compare", str(formula_study), "--draws", "0"]
    for out in outs:
        args += ["-o", str(out)]
    with pytest.raises(SystemExit) as e:
        main(args)
    assert e.value.code == 0
    for out in outs:
        assert stat.S_IMODE(out.stat().st_mode) == 0o644, out
    assert sorted(p.name for p in tmp_path.iterdir()) == ["car.yaml", "r.csv", "r.json",
                                                          "study.yaml"]
