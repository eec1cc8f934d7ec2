"""The coast-down text report fits the terminal; --wide shows every column."""

from __future__ import annotations

from pathlib import Path

import pytest

from conftest import run_cli

LOG = Path(__file__).resolve().parents[1] / "examples" / "coastdown" / "coastdown_log.csv"


def _report(*extra, env=None):
    done = run_cli("coastdown", LOG, "--mass-kg", "1380", *extra, env=env)
    assert done.returncode == 0, done.stderr
    return done.stdout


@pytest.mark.parametrize("columns, width", [(None, 100), ("80", 80)])
def test_text_fits_the_width(columns, width):
    # not a terminal (CliRunner): COLUMNS when set, else 100 characters
    text = _report(env={"COLUMNS": columns})          # None: unset
    table = text[text.index("run  dir"):]
    assert "reason / notes" in table and "brake event" in table
    for line in text.splitlines():
        assert len(line) <= width, (len(line), line)


def test_wide_table_has_every_column_and_whole_reasons():
    text = _report("--wide", env={"COLUMNS": "80"})
    head = next(line for line in text.splitlines() if line.startswith("run  log"))
    for name in ("log", "direction", "start s", "end s", "f1", "off N", "reason / notes"):
        assert name in head
    brake = next(line for line in text.splitlines() if "brake event" in line)
    assert brake.rstrip().endswith("km/h")          # the reason on one line


def test_numbers_keep_sensible_digits():
    text = _report(env={"COLUMNS": "100"})
    row = next(line for line in text.splitlines() if line.startswith("  1  "))
    cells = row.split()
    # run 1: f0 in N to 0.1 N, f2 to three significant digits
    f0, f2 = cells[5], cells[6]
    assert len(f0.split(".")[1]) == 1
    assert len(f2.rstrip("0").lstrip("0.").replace(".", "")) <= 3
