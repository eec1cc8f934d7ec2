"""Speed profiles from CSV files.

Speed CSV files
---------------
A header row, then one row per sample. Columns (names are case-insensitive,
other columns are ignored, ``#`` comment lines and blank lines are skipped;
a header with ``;`` or tabs and no commas sets that delimiter):

* ``time_s`` - time [s], strictly increasing, need not start at 0 nor be
  evenly spaced; or ``timestamp`` / ``time`` holding seconds, clock times
  ``HH:MM:SS[.fff]`` (a log may run over midnight) or ISO 8601 date-times;
  ``time_column=`` names another column;
* exactly one of ``speed_kmh`` (also spelled ``speed_kph``), ``speed_mph``,
  ``speed_ms`` - speed, >= 0; ``speed_column=`` with ``speed_unit=`` (kmh,
  kph, mph, ms) names another column, as logs come;
* optionally ``grade_pct`` - grade [%, rise/run x 100, within +-100], or
  ``elevation_m`` - elevation [m] (not both).

The samples are shifted to start at 0 s and linearly interpolated onto a
uniform grid of ``dt_s`` (the last grid point is the last one not after the
last sample). Every problem raises an InputError naming the file, the column
and the 1-based line.

``smooth_s`` smooths the speed on the final grid with the Savitzky-Golay
filter of GPS tracks [1]_ (local quadratic over a centred window of that many
seconds; negative results set to 0), for noisy logged traces.

Plausibility: a speed above :data:`~tractive.limits.MAX_USER_SPEED_KMH`
(500 km/h) is refused, and so is a step on the final ``dt_s`` grid whose
acceleration exceeds :data:`~tractive.limits.MAX_USER_ACCEL_MS2` (49 m/s²,
about 5 g, the hardest braking of race cars): it catches a glitch (0 to 300
km/h within 1 s) or a unit mistake, not rough data.

Elevation. The speed of a speed file is the vehicle's speed along the road,
so an ``elevation_m`` column read against the distance travelled gives
dz/ds = sin(theta) of the slope angle theta; it is turned into the grade
tan(theta) = sin / sqrt(1 - sin²) (see :mod:`tractive.profiles.grade`).

Speed. The columns are parsed by pandas' C parser; only a file that it
cannot read cleanly, or whose values fail a check, is read again row by row
to word the error with its line and column.

References
----------
.. [1] A. Savitzky and M. J. E. Golay, "Smoothing and Differentiation of Data
   by Simplified Least Squares Procedures", Analytical Chemistry 36(8),
   1627-1639, 1964.

"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import read_text
from ..limits import MAX_GRADE_FRACTION, MAX_USER_SPEED_KMH
from ..readfiles import check_regular, note_read
from .columns import choose_speed_column, choose_time_column, times_from_text
from .gpstrack import smoothed
from .grade import GRADE_WINDOW_M, grade_from_elevation
from .model import (SPEED_UNITS, Profile, accel_message, first_implausible_step, grid_length,
                    positive, uniform_grid, whole)

__all__ = ["read_speed_csv"]


class _NeedLine(Exception):
    """A check failed on columns read without line numbers: read again row by row."""


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
                raise InputError(f"not a number: '{text[:40]}'", file=file, field=column,
                                 line=line) from None
        raise InputError("cannot read the numbers of this column", file=file, field=column)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        i = bad[0]
        raise InputError(f"must be a finite number, got '{cells[i].strip()[:40]}'", file=file,
                         field=column, line=lines[i])
    return values


def _delimiter(first: str) -> str:
    """``,`` unless the header has none and has ``;`` or a tab."""
    if "," not in first:
        if ";" in first:
            return ";"
        if "\t" in first:
            return "\t"
    return ","


def _sniff(path: Path):
    """(header cells, physical line of the header, delimiter, first data line or None).

    Reads only the start of the file; raises the errors of an unreadable file.
    """
    file = str(path)
    check_regular(path, "CSV file")
    try:
        with open(path, encoding="utf-8-sig", newline="") as fh:
            header, number = None, 0
            for raw in fh:
                number += 1
                text = raw.strip()
                if not text or text.startswith("#"):
                    continue
                if header is None:
                    header = (raw.rstrip("\r\n"), number)
                    continue
                return header[0], header[1], raw.rstrip("\r\n")
            return (None, None, None) if header is None else (header[0], header[1], None)
    except FileNotFoundError:
        raise InputError("file not found", file=file) from None
    except IsADirectoryError:
        raise InputError("is a directory, expected a CSV file", file=file) from None
    except UnicodeDecodeError:
        raise InputError("cannot read file: not UTF-8 text, expected a CSV file",
                         file=file) from None
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc.__class__.__name__})",
                         file=file) from None


def _header_columns(header: list, header_line, file, time_column, speed_column, speed_unit):
    """(time column, speed column, speed unit, grade column or None, {name: index})."""
    names = [h.strip().lower() for h in header]
    seen = {}
    for i, col in enumerate(names):
        if col in seen and col:
            raise InputError("column appears twice in the header", file=file, field=col,
                             line=header_line)
        seen[col] = i
    time_col = choose_time_column(names, time_column, file=file, line=header_line)
    speed_col, unit = choose_speed_column(names, speed_column, speed_unit, file=file,
                                          line=header_line)
    if "grade_pct" in seen and "elevation_m" in seen:
        raise InputError("give grade_pct or elevation_m, not both", file=file,
                         field="elevation_m", line=header_line)
    grade_col = "grade_pct" if "grade_pct" in seen else (
        "elevation_m" if "elevation_m" in seen else None)
    return time_col, speed_col, unit, grade_col, seen


def _is_number(text: str) -> bool:
    """True when Python reads ``text`` as a float."""
    try:
        float(text)
    except ValueError:
        return False
    return True


def _rows_of_header_width(path: Path, header_line: int, delimiter: str, width: int) -> bool:
    """True when every non-empty line after the header has the header's number of fields
    and the file has no quote character (else the row-by-row reading decides).

    Counts delimiters per line on the raw bytes, block by block (the C parser,
    reading only the wanted columns, would not see a row with too many fields).
    Counts are kept modulo 256 (one byte per line), which only a row off by a
    multiple of 256 fields could pass.
    """
    want = (width - 1) % 256
    sep = ord(delimiter)

    def block_ok(raw: np.ndarray) -> bool:
        """The check on whole lines, each ending in a newline."""
        if np.any(raw == ord('"')):
            return False
        newline = np.flatnonzero(raw == 10)
        starts = np.concatenate([[0], newline[:-1] + 1])
        counts = np.add.reduceat((raw == sep).view(np.uint8), starts)
        length = newline - starts - (raw[newline - 1] == 13)
        return bool(np.all((counts == want) | (length <= 0)))

    with open(path, "rb") as fh:
        for _ in range(header_line):
            fh.readline()
        carry = b""
        while True:
            block = fh.read(1 << 20)
            if not block:
                break
            buf = carry + block
            cut = buf.rfind(b"\n") + 1
            carry = buf[cut:]
            if cut and not block_ok(np.frombuffer(buf, np.uint8, count=cut)):
                return False
        if carry.strip() and not block_ok(np.frombuffer(carry + b"\n", np.uint8)):
            return False
    return True


def _no_quotes(path: Path, header_line: int) -> bool:
    """True when no line after the header holds a quote character."""
    with open(path, "rb") as fh:
        for _ in range(header_line):
            fh.readline()
        while True:
            block = fh.read(1 << 22)
            if not block:
                return True
            if b'"' in block:
                return False


def _fast_columns(path: Path, header_line: int, delimiter: str, first_row, wanted: dict,
                  width: int):
    """The wanted columns read by pandas' C parser, or None when the file is not plain.

    ``wanted`` maps column name → index in the header. Floats are read as
    Python's float reads them (correctly rounded).
    A time column whose first cell is not a number is read as text.
    When every column is wanted the parser itself refuses a row with too many
    fields (a missing or empty cell fails the float conversion or reads as NaN),
    so only quotes are looked for; else :func:`_rows_of_header_width` checks the rows.
    """
    import pandas as pd

    every = len(wanted) == width
    if first_row is None or not (_no_quotes(path, header_line) if every else
                                 _rows_of_header_width(path, header_line, delimiter, width)):
        return None
    cells = next(csv.reader([first_row], delimiter=delimiter))
    dtypes = {}
    for col, i in wanted.items():
        text = cells[i].strip() if i < len(cells) else ""
        dtypes[i] = np.float64 if _is_number(text) else object
    # pandas 3 parses floats exactly like Python; pandas 2 needs the round-trip parser
    exact = {} if int(pd.__version__.split(".")[0]) >= 3 else {"float_precision": "round_trip"}
    # no NaN markers: in a float column a marker fails the conversion, and a NaN or an
    # infinity read fails the finite check; a text column keeps its cells as text (an
    # empty one included); either way the row-by-row reading words the problem
    try:
        frame = pd.read_csv(path, sep=delimiter, header=None, skiprows=header_line,
                            usecols=None if every else sorted(wanted.values()), dtype=dtypes,
                            engine="c", encoding="utf-8", skip_blank_lines=True,
                            na_filter=False, **exact)
    except Exception:  # any parser complaint: the row-by-row reading words it
        return None
    return {col: frame[i].to_numpy() for col, i in wanted.items()}


def _slow_columns(path: Path, file: str, delimiter: str, wanted: dict):
    """The wanted columns read row by row with their 1-based lines, every problem worded."""
    text = read_text(path, "CSV")
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    header_seen = False
    width = None
    rows, lines = [], []
    try:
        for row in reader:
            if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
                continue
            if not header_seen:
                header_seen, width = True, len(row)
                continue
            rows.append(row)
            lines.append(reader.line_num)
    except csv.Error as exc:
        raise InputError(f"malformed CSV: {exc}", file=file, line=reader.line_num) from None
    for row, line in zip(rows, lines):
        if len(row) != width:
            raise InputError(f"malformed CSV: row has {len(row)} fields, the header has {width}",
                             file=file, line=line)
    if len(rows) < 2:
        raise InputError(f"needs at least 2 data rows, found {len(rows)}", file=file)
    return {col: [r[i] for r in rows] for col, i in wanted.items()}, lines


def read_speed_csv(path, dt_s: float = 1.0, max_gap_s: float = 60.0, *,
                   grade_window_m: float = GRADE_WINDOW_M,
                   max_grade_fraction: float = MAX_GRADE_FRACTION,
                   name: str | None = None, time_column: str | None = None,
                   speed_column: str | None = None, speed_unit: str | None = None,
                   smooth_s: float | None = None) -> Profile:
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
    time_column : str, optional
        The column that holds the time (seconds, clock times or ISO 8601
        date-times); default ``time_s``, ``timestamp`` or ``time``.
    speed_column : str, optional
        The column that holds the speed, as ``NAME`` (with ``speed_unit``,
        unless it is one of the recognised ``speed_<unit>`` names) or
        ``NAME:UNIT``.
    speed_unit : str, optional
        Unit of the speed column: ``kmh`` (or ``kph``), ``mph`` or ``ms``.
    smooth_s : float, optional
        Smooth the speed over a centred window of this many seconds [s]
        (Savitzky-Golay, as for GPS tracks); default no smoothing.

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
    if smooth_s is not None:
        smooth_s = positive(smooth_s, "smooth_s")
    note_read(path)
    header_text, header_line, first_row = _sniff(path)
    if header_text is None:
        raise InputError("no header row; the first row must name the columns, e.g. "
                         "time_s,speed_kmh", file=file, line=1)
    delimiter = _delimiter(header_text)
    try:
        header = next(csv.reader([header_text], delimiter=delimiter, strict=True))
    except csv.Error as exc:
        raise InputError(f"malformed CSV: {exc}", file=file, line=header_line) from None
    time_col, speed_col, unit, grade_col, seen = _header_columns(
        header, header_line, file, time_column, speed_column, speed_unit)
    wanted = {c: seen[c] for c in (time_col, speed_col, grade_col) if c is not None}
    settings = dict(file=file, dt_s=dt_s, max_gap_s=max_gap_s, grade_window_m=grade_window_m,
                    max_grade_fraction=max_grade_fraction, smooth_s=smooth_s)
    cols = _fast_columns(path, header_line, delimiter, first_row, wanted, len(header))
    if cols is not None and len(cols[time_col]) >= 2:
        try:
            grid, speed_ms, grade = _build(cols, None, time_col, speed_col, unit, grade_col,
                                           **settings)
        except (_NeedLine, InputError):
            grid = None
        if grid is not None:
            return Profile(name if name is not None else path.name, grid, speed_ms, grade,
                           (), f"speed file {file}")
    cols, lines = _slow_columns(path, file, delimiter, wanted)
    grid, speed_ms, grade = _build(cols, lines, time_col, speed_col, unit, grade_col,
                                   **settings)
    return Profile(name if name is not None else path.name, grid, speed_ms, grade, (),
                   f"speed file {file}")


#: samples per block of the checks along long traces: the checks' temporaries stay
#: small instead of being allocated (and first touched) at the size of the trace
_BLOCK = 1 << 18


def _on_grid(rel: np.ndarray, dt_s: float, n: int) -> bool:
    """True when ``rel`` is, bit for bit, :func:`uniform_grid` with ``n`` points
    (k · dt_s for k = 0, 1, ...); checked block by block."""
    if len(rel) != n or np.signbit(rel[0]):
        return False
    for a in range(0, n, _BLOCK):
        block = np.arange(a, min(n, a + _BLOCK), dtype=float)
        block *= dt_s                    # as uniform_grid computes each point
        if not np.array_equal(rel[a:a + _BLOCK], block):
            return False
    return True


def _first_steps(t: np.ndarray, max_gap_s: float) -> tuple:
    """(first i with t[i+1] <= t[i], first i with t[i+1] - t[i] > max_gap_s), each
    None when there is none; block by block (:data:`_BLOCK`)."""
    back = gap = None
    for a in range(0, len(t) - 1, _BLOCK):
        steps = np.diff(t[a:a + _BLOCK + 1])
        if back is None:
            k = np.flatnonzero(steps <= 0)
            back = a + int(k[0]) if k.size else None
        if gap is None:
            k = np.flatnonzero(steps > max_gap_s)
            gap = a + int(k[0]) if k.size else None
        if back is not None:
            break
    return back, gap


def _build(cols: dict, lines, time_col, speed_col, unit, grade_col, *, file, dt_s, max_gap_s,
           grade_window_m, max_grade_fraction, smooth_s):
    """(grid, speed [m/s], grade [-]: an array, or 0.0 without a grade column) from the
    columns, every check made.

    ``lines`` is the 1-based line of each row, or None for columns read by the
    C parser: then a failed check raises :class:`_NeedLine` (the caller reads
    the file again row by row to name the line). The checks and the numbers are
    the same either way. Longer than 80 lines: one pass of checks in file order.
    """
    def line(i):
        """The line of row ``i`` (or _NeedLine when unknown)."""
        if lines is None:
            raise _NeedLine
        return lines[int(i)]

    def column(col):
        """Finite floats of a column (row by row: bad cells named with their line)."""
        if lines is None:
            values = np.asarray(cols[col], dtype=float)
            if not np.isfinite(values).all():
                raise _NeedLine
            return values
        return _column_floats(cols[col], lines, file, col)

    if lines is None and cols[time_col].dtype == object:
        if time_col == "time_s":
            raise _NeedLine
        t = times_from_text(cols[time_col], file=file, field=time_col)
    elif lines is not None and not all(_is_number(c.strip() or "x") for c in cols[time_col]) \
            and time_col != "time_s":
        t = times_from_text(cols[time_col], file=file, field=time_col, lines=lines)
    else:
        t = column(time_col)
    v_raw = column(speed_col)
    neg = np.flatnonzero(v_raw < 0)
    if neg.size:
        raise InputError(f"speed must not be negative, got {v_raw[neg[0]]:.4g}", file=file,
                         field=speed_col, line=line(neg[0]))
    back, gap = _first_steps(t, max_gap_s)
    if back is not None:
        i = back + 1
        raise InputError(f"time must increase from row to row: {t[i]:.10g} s follows "
                         f"{t[i - 1]:.10g} s", file=file, field=time_col, line=line(i))
    if gap is not None:
        i = gap + 1
        raise InputError(f"time gap of {t[i] - t[i - 1]:.4g} s before this row is longer than "
                         f"the longest gap of {max_gap_s:g} s: the speed in between is "
                         "unknown; if the vehicle stood still, add rows at speed 0 across "
                         "the gap, or pass a larger --max-gap-s to interpolate straight "
                         "across it", file=file, field=time_col, line=line(i))
    span = t[-1] - t[0]
    if span < dt_s * (1 - 1e-9):
        raise InputError(f"the rows span {span:.4g} s, less than one time step "
                         f"dt_s = {dt_s:g} s", file=file, field=time_col)

    t0 = float(t[0])
    rel = t - t0 if t0 != 0.0 else t       # no copy for a file that starts at 0 s
    v_raw_ms = SPEED_UNITS[unit](v_raw)
    fast = np.flatnonzero(v_raw_ms > MAX_USER_SPEED_KMH / 3.6 * (1 + 1e-12))
    if fast.size:
        raise InputError(f"speed {v_raw[fast[0]]:.4g} is {whole(v_raw_ms[fast[0]] * 3.6)} km/h, "
                         f"above the {MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds; "
                         "check the value and the column's unit", file=file,
                         field=speed_col, line=line(fast[0]))
    # rows already on the grid (a 1 Hz log from 0 s): the grid is the rows' times and
    # np.interp would return the samples themselves, bit for bit, so they are taken as
    # they are; a grid beyond the memory budget is refused first (profiles.model)
    try:
        on_grid = _on_grid(rel, dt_s, grid_length(span, dt_s))
        grid = rel if on_grid else uniform_grid(span, dt_s)
    except InputError as err:
        raise err.located(file=file, field="dt_s") from None
    speed_ms = v_raw_ms if on_grid else np.interp(grid, rel, v_raw_ms)
    if smooth_s is not None:
        speed_ms = np.maximum(smoothed(speed_ms, dt_s, smooth_s), 0.0)
    jump = None
    for a in range(0, len(speed_ms) - 1, _BLOCK):    # blocks overlap by one sample
        jump = first_implausible_step(speed_ms[a:a + _BLOCK + 1], dt_s)
        if jump is not None:
            jump = (a + jump[0], jump[1])
            break
    if jump is not None:
        k, accel = jump
        row = min(int(np.searchsorted(rel, grid[k + 1] - 1e-9 * dt_s)), len(rel) - 1)
        raise InputError(accel_message(speed_ms, k, accel, dt_s, float(t0 + grid[k + 1])),
                         file=file, field=speed_col, line=line(row))
    if grade_col == "grade_pct":
        g_pct = column("grade_pct")
        steep = np.flatnonzero(np.abs(g_pct) > 100.0)
        if steep.size:
            raise InputError(f"grade must be within -100 % and 100 %, got "
                             f"{g_pct[steep[0]]:.4g}", file=file, field="grade_pct",
                             line=line(steep[0]))
        grade = g_pct / 100.0 if on_grid else np.interp(grid, rel, g_pct / 100.0)
    elif grade_col == "elevation_m":
        z = column("elevation_m")
        z = z if on_grid else np.interp(grid, rel, z)
        s = np.concatenate([[0.0], np.cumsum(0.5 * (speed_ms[1:] + speed_ms[:-1]) * dt_s)])
        # distance along the road: dz/ds is the sine of the slope angle
        grade = grade_from_elevation(s, z, grade_window_m, max_grade_fraction,
                                     along="road")
    else:
        grade = 0.0                      # the profile repeats it on every sample
    return grid, speed_ms, grade
