"""Speed profiles from CSV files.

Speed CSV files
---------------
A header row, then one row per sample. Columns (names are case-insensitive,
other columns are ignored, ``#`` comment lines and blank lines are skipped;
a header with ``;`` or tabs and no commas sets that delimiter):

* ``time_s`` - time [s], strictly increasing, need not start at 0 nor be
  evenly spaced;
* exactly one of ``speed_kmh``, ``speed_mph``, ``speed_ms`` - speed, >= 0;
* optionally ``grade_pct`` - grade [%, rise/run x 100, within +-100], or
  ``elevation_m`` - elevation [m] (not both).

The samples are shifted to start at 0 s and linearly interpolated onto a
uniform grid of ``dt_s`` (the last grid point is the last one not after the
last sample). Every problem raises an InputError naming the file, the column
and the 1-based line.

Plausibility: a speed above :data:`MAX_USER_SPEED_KMH` (500 km/h) in a
user's file (CSV row, or GPS speed from the track's positions) or a
``steady:`` term is refused, and so is a step on the final ``dt_s`` grid
whose acceleration exceeds :data:`MAX_USER_ACCEL_MS2` (100 m/s², about
10 g). The acceleration limit is far above what GPS noise gives after the
smoothing of tracks, or what a racing car brakes at (about 5 g); it catches a
glitch (0 to 200 km/h within 0.1 s) or a unit mistake, not rough data.

"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import read_text
from ..limits import MAX_GRADE_FRACTION, MAX_USER_SPEED_KMH
from .grade import GRADE_WINDOW_M, grade_from_elevation
from .model import (SPEED_UNITS, Profile, accel_message, first_implausible_step, positive,
                    uniform_grid)

__all__ = ["read_speed_csv"]

_SPEED_COLUMNS = {f"speed_{u}": u for u in SPEED_UNITS}
_UNITLESS_SPEED = ("speed", "velocity", "v", "vel", "spd")


def _column_floats(cells: list, lines: list, file: str, column: str) -> np.ndarray:
    """Cells of one column as floats; the first bad cell raises with its line."""
    try:
        values = np.array(cells, dtype=float)
    except ValueError:
        values = None
    if values is None:
        for cell, line in zip(cells, lines):
            text = cell.strip()
            if not text:
                raise InputError("empty cell", file=file, field=column, line=line)
            try:
                float(text)
            except ValueError:
                raise InputError(f"not a number: '{text}'", file=file, field=column,
                                 line=line) from None
        raise InputError("cannot read the numbers of this column", file=file, field=column)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        i = bad[0]
        raise InputError(f"must be a finite number, got '{cells[i].strip()}'", file=file,
                         field=column, line=lines[i])
    return values


def read_speed_csv(path, dt_s: float = 1.0, max_gap_s: float = 60.0, *,
                   grade_window_m: float = GRADE_WINDOW_M,
                   max_grade_fraction: float = MAX_GRADE_FRACTION,
                   name: str | None = None) -> Profile:
    """Read a speed trace from a CSV file (format in the module docstring).

    Parameters
    ----------
    path : str or path
        The CSV file.
    dt_s : float
        Time step [s] of the returned profile.
    max_gap_s : float
        Longest time gap between rows [s]; a longer gap is an error (the
        trace would be invented by interpolation across it).
    grade_window_m : float
        Distance window [m] for grade from an ``elevation_m`` column.
    max_grade_fraction : float
        Limit on |grade| from elevation [-].
    name : str, optional
        Profile name (default: the file name).

    Returns
    -------
    Profile
        Shifted to start at 0 s, linearly interpolated onto ``dt_s``.

    Raises
    ------
    InputError
        Naming the file, the column and the 1-based line of the problem.
    """
    path = Path(path)
    file = str(path)
    dt_s = positive(dt_s, "dt_s")
    max_gap_s = positive(max_gap_s, "max_gap_s")
    grade_window_m = positive(grade_window_m, "grade_window_m")
    max_grade_fraction = positive(max_grade_fraction, "max_grade_fraction")
    text = read_text(path, "CSV")

    first = next((ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")),
                 "")
    delimiter = ","
    if "," not in first:
        if ";" in first:
            delimiter = ";"
        elif "\t" in first:
            delimiter = "\t"
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    header = None
    header_line = None
    rows, lines = [], []
    try:
        for row in reader:
            if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
                continue
            if header is None:
                header, header_line = row, reader.line_num
                continue
            rows.append(row)
            lines.append(reader.line_num)
    except csv.Error as exc:
        raise InputError(f"malformed CSV: {exc}", file=file, line=reader.line_num) from None
    if header is None:
        raise InputError("no header row; the first row must name the columns, e.g. "
                         "time_s,speed_kmh", file=file, line=1)

    names = [h.strip().lower() for h in header]
    seen = {}
    for i, col in enumerate(names):
        if col in seen and col:
            raise InputError("column appears twice in the header", file=file, field=col,
                             line=header_line)
        seen[col] = i
    if "time_s" not in seen:
        raise InputError("no time_s column (time in seconds) in the header", file=file,
                         field="time_s", line=header_line)
    speed_cols = [c for c in names if c in _SPEED_COLUMNS]
    if len(speed_cols) > 1:
        raise InputError(f"two speed columns ({', '.join(speed_cols)}); keep only one",
                         file=file, field=speed_cols[1], line=header_line)
    if not speed_cols:
        vague = [c for c in names if c in _UNITLESS_SPEED or c.startswith(("speed", "velocity"))]
        if vague:
            raise InputError("speed column has no unit; name it speed_kmh, speed_mph or "
                             "speed_ms", file=file, field=vague[0], line=header_line)
        raise InputError("no speed column; add one named speed_kmh, speed_mph or speed_ms",
                         file=file, line=header_line)
    speed_col = speed_cols[0]
    if "grade_pct" in seen and "elevation_m" in seen:
        raise InputError("give grade_pct or elevation_m, not both", file=file,
                         field="elevation_m", line=header_line)
    grade_col = "grade_pct" if "grade_pct" in seen else (
        "elevation_m" if "elevation_m" in seen else None)

    width = len(header)
    for row, line in zip(rows, lines):
        if len(row) != width:
            raise InputError(f"malformed CSV: row has {len(row)} fields, the header has {width}",
                             file=file, line=line)
    if len(rows) < 2:
        raise InputError(f"needs at least 2 data rows, found {len(rows)}", file=file)

    def column(col):
        i = seen[col]
        return _column_floats([r[i] for r in rows], lines, file, col)

    t = column("time_s")
    v_raw = column(speed_col)
    neg = np.flatnonzero(v_raw < 0)
    if neg.size:
        raise InputError(f"speed must not be negative, got {v_raw[neg[0]]:g}", file=file,
                         field=speed_col, line=lines[neg[0]])
    steps = np.diff(t)
    back = np.flatnonzero(steps <= 0)
    if back.size:
        i = back[0] + 1
        raise InputError(f"time must increase from row to row: {t[i]:g} s follows {t[i - 1]:g} s",
                         file=file, field="time_s", line=lines[i])
    gaps = np.flatnonzero(steps > max_gap_s)
    if gaps.size:
        i = gaps[0] + 1
        raise InputError(f"time gap of {steps[i - 1]:g} s before this row is longer than "
                         f"max_gap_s = {max_gap_s:g} s: the speed in between is unknown; if "
                         "the vehicle stood still, add rows at speed 0 across the gap, or pass "
                         "a larger max_gap_s to read_speed_csv to interpolate straight across "
                         "it", file=file, field="time_s", line=lines[i])
    span = t[-1] - t[0]
    if span < dt_s * (1 - 1e-9):
        raise InputError(f"the rows span {span:g} s, less than one time step dt_s = {dt_s:g} s",
                         file=file, field="time_s")

    rel = t - t[0]
    v_raw_ms = SPEED_UNITS[_SPEED_COLUMNS[speed_col]](v_raw)
    fast = np.flatnonzero(v_raw_ms * 3.6 > MAX_USER_SPEED_KMH * (1 + 1e-12))
    if fast.size:
        raise InputError(f"speed {v_raw[fast[0]]:g} is {v_raw_ms[fast[0]] * 3.6:.0f} km/h, "
                         f"above the {MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds; "
                         "check the value and the column's unit", file=file,
                         field=speed_col, line=lines[fast[0]])
    grid = uniform_grid(span, dt_s)
    speed_ms = np.interp(grid, rel, v_raw_ms)
    jump = first_implausible_step(speed_ms, dt_s)
    if jump is not None:
        k, accel = jump
        row = min(int(np.searchsorted(rel, grid[k + 1] - 1e-9 * dt_s)), len(rel) - 1)
        raise InputError(accel_message(speed_ms, k, accel, dt_s, float(t[0] + grid[k + 1])),
                         file=file, field=speed_col, line=lines[row])
    if grade_col == "grade_pct":
        g_pct = column("grade_pct")
        steep = np.flatnonzero(np.abs(g_pct) > 100.0)
        if steep.size:
            raise InputError(f"grade must be within -100 % and 100 %, got {g_pct[steep[0]]:g}",
                             file=file, field="grade_pct", line=lines[steep[0]])
        grade = np.interp(grid, rel, g_pct / 100.0)
    elif grade_col == "elevation_m":
        z = np.interp(grid, rel, column("elevation_m"))
        s = np.concatenate([[0.0], np.cumsum(0.5 * (speed_ms[1:] + speed_ms[:-1]) * dt_s)])
        grade = grade_from_elevation(s, z, grade_window_m, max_grade_fraction)
    else:
        grade = np.zeros_like(grid)
    return Profile(name if name is not None else path.name, grid, speed_ms, grade, (),
                   f"speed file {file}")


