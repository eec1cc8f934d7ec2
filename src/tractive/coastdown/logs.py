"""Reading raw coast-down logs: CSV (time, speed, optional heading, wind, air,
elevation, labels) and GPX tracks, without resampling.

CSV columns (header names, case-insensitive; other columns are ignored):

==========================  =====================================================
column                      meaning [unit]
==========================  =====================================================
``time_s``                  time [s], strictly increasing; or
``timestamp`` / ``time``    seconds, clock times HH:MM:SS[.fff] (over midnight too)
                            or ISO 8601 date-times (seconds from the first)
``speed_kmh`` | ``speed_kph`` | ``speed_mph`` | ``speed_ms``   speed over ground
                            (exactly one; ``speed_column=`` names another)
``heading_deg``             direction of travel [°], clockwise from north (also
                            ``bearing`` or ``course``)
``direction``               direction label (any two values, e.g. ``N``/``S``)
``run``                     run label; coasting runs never span two labels
``wind_speed_ms``           wind speed [m/s] (needs ``wind_direction_deg`` and
                            ``heading_deg``)
``wind_direction_deg``      direction the wind blows from [°], clockwise from north
``air_temperature_c``       ambient air temperature [°C]
``air_pressure_pa``         ambient (station) air pressure [Pa]
``elevation_m``             elevation [m] (used for the mean grade of each run)
==========================  =====================================================

An empty speed cell (or ``nan``) is a missing sample; anything else that is not
a number is an error naming the line. Lines starting with ``#`` are comments.

A plain file is parsed by pandas' C parser; one with quotes, blank or comment
lines among its rows, or a cell that parser does not read, is read row by
row (the same numbers, and errors worded with their line).
"""

from __future__ import annotations

import csv
import itertools
import math
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import haversine_distance_m, initial_bearing_deg, read_gpx_track
from ..profiles.columns import choose_speed_column, choose_time_column, times_from_text
from ..readfiles import check_regular, note_read
from ..units import KMH_MS, MPH_MS

#: speed columns and their factor to m/s (exact, NIST SP 811)
SPEED_COLUMNS = {"speed_kmh": KMH_MS, "speed_kph": KMH_MS, "speed_mph": MPH_MS,
                 "speed_ms": 1.0}
_UNIT_FACTORS = {"kmh": KMH_MS, "mph": MPH_MS, "ms": 1.0}
TIME_COLUMNS = ("time_s", "timestamp", "time")
#: other names of the heading column (direction of travel, ° clockwise from north)
HEADING_ALIASES = ("bearing", "course", "bearing_deg", "course_deg")
#: cells read as a missing value (any letter case)
_MISSING = ["", *{"".join(c) for w in ("nan", "na", "null")
                  for c in itertools.product(*[(x, x.upper()) for x in w])}]
NUMBER_COLUMNS = ("heading_deg", "wind_speed_ms", "wind_direction_deg", "air_temperature_c",
                  "air_pressure_pa", "elevation_m")
LABEL_COLUMNS = ("direction", "run")
#: plausible ranges of the optional numeric columns (checked per value)
_RANGES = {"heading_deg": (-360.0, 360.0, "°"), "wind_speed_ms": (0.0, 40.0, "m/s"),
           "wind_direction_deg": (-360.0, 360.0, "°"),
           "air_temperature_c": (-60.0, 60.0, "°C"),
           "air_pressure_pa": (30000.0, 110000.0, "Pa"),
           "elevation_m": (-500.0, 9000.0, "m")}


@dataclass(frozen=True)
class CoastdownLog:
    """One raw speed log, in SI, sample by sample as recorded.

    Attributes
    ----------
    source : str
        File name (for messages and reports).
    time_s : (n,) array
        Sample times [s], strictly increasing.
    speed_ms : (n,) array
        Speed over ground [m/s]; NaN for a missing sample.
    line : (n,) int array
        Line of each sample in the file (0 when not from a text file).
    speed_column : str
        The speed column that was read (``speed_kmh``, ``speed_mph``, ...).
    heading_deg, wind_speed_ms, wind_direction_deg, air_temperature_c,
    air_pressure_pa, elevation_m : (n,) arrays or None
        Optional columns (NaN where a cell is empty).
    direction, run : (n,) object arrays or None
        Optional labels ("" where a cell is empty).
    """

    source: str
    time_s: np.ndarray
    speed_ms: np.ndarray
    line: np.ndarray
    speed_column: str = "speed_ms"
    heading_deg: np.ndarray | None = None
    wind_speed_ms: np.ndarray | None = None
    wind_direction_deg: np.ndarray | None = None
    air_temperature_c: np.ndarray | None = None
    air_pressure_pa: np.ndarray | None = None
    elevation_m: np.ndarray | None = None
    direction: np.ndarray | None = None
    run: np.ndarray | None = None

    @property
    def n(self) -> int:
        return len(self.time_s)

    def headwind_ms(self):
        """Measured headwind component [m/s] per sample (positive against travel), or None.

        headwind = W · cos(wind_from − heading), with the wind direction in the
        meteorological sense (where it blows from).
        """
        if self.wind_speed_ms is None:
            return None
        rel = np.radians(self.wind_direction_deg - self.heading_deg)
        return np.nan_to_num(self.wind_speed_ms * np.cos(rel), nan=0.0)


def read_coastdown_log(path: str | os.PathLike, *, speed_column: str | None = None,
                       time_column: str | None = None, speed_unit: str | None = None
                       ) -> CoastdownLog:
    """Read a raw coast-down log (CSV or GPX) without resampling it.

    Parameters
    ----------
    path : str or path
        A ``.csv`` file (columns in the module docstring) or a ``.gpx`` track.
    speed_column : str, optional
        The speed column, as ``NAME`` (one of the ``speed_<unit>`` names, or
        with ``speed_unit``) or ``NAME:UNIT``; needed when the file has several.
    time_column : str, optional
        The time column (seconds, clock times ``HH:MM:SS[.fff]`` or ISO 8601
        date-times); default ``time_s``, ``timestamp`` or ``time``.
    speed_unit : str, optional
        Unit of ``speed_column``: ``kmh`` (or ``kph``), ``mph`` or ``ms``.

    Raises
    ------
    InputError
        Naming the file and the column or line: no time or speed column (with
        the columns seen and a proposed ``--time-column``/``--speed-column``),
        a value that is not a number, time that does not increase, fewer than
        ten samples.
    """
    path = Path(path)
    if path.suffix.lower() == ".gpx":
        return _read_gpx(path)
    return _read_csv(path, speed_column, time_column, speed_unit)


def _header(path: Path, src: str):
    """(header cells, its 1-based line): the first line that is neither blank nor ``#``."""
    check_regular(path, "CSV or GPX log")
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            for number, raw in enumerate(fh, start=1):
                text = raw.strip()
                if text and not text.startswith("#"):
                    return next(csv.reader([raw.rstrip("\r\n")])), number
    except FileNotFoundError:
        raise InputError("file not found", file=src) from None
    except IsADirectoryError:
        raise InputError("is a directory, expected a CSV or GPX log", file=src) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read file ({exc.__class__.__name__})", file=src) from None
    raise InputError("empty file: expected a header line and samples", file=src)


def _has_quote(path: Path) -> bool:
    """True when the file contains a double quote (its rows are then read one by one)."""
    with open(path, "rb") as fh:
        while True:
            block = fh.read(1 << 20)
            if not block:
                return False
            if b'"' in block:
                return True


def _fast_cells(path: Path, header_line: int, index: dict, numeric: list, text: list):
    """Columns read by pandas' C parser: {name: array}, with the line of each row, or
    None when the file is not plain (quotes, blank or comment lines among the rows,
    cells the parser does not read as the reader would)."""
    import pandas as pd

    if _has_quote(path):
        return None
    dtypes = {index[c]: np.float64 for c in numeric}
    dtypes.update({index[c]: str for c in text})
    try:
        frame = pd.read_csv(path, header=None, skiprows=header_line,
                            usecols=sorted(dtypes), dtype=dtypes, engine="c",
                            encoding="utf-8", skip_blank_lines=False,
                            keep_default_na=False, na_values=_MISSING)
    except Exception:  # any parser complaint: the row-by-row reading words it
        return None
    out = {}
    for c in numeric:
        values = frame[index[c]].to_numpy(dtype=float)
        if np.isinf(values).any():
            return None
        out[c] = values
    for c in text:
        out[c] = frame[index[c]].fillna("").str.strip().to_numpy(dtype=object)
    line_no = header_line + 1 + np.arange(len(frame))
    return out, line_no


def _slow_cells(path: Path, src: str, index: dict, columns: list):
    """Columns as stripped text cells, row by row, with the line of each row."""
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            lines = fh.read().splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read file ({exc.__class__.__name__})", file=src) from None
    numbered = [(i + 1, text) for i, text in enumerate(lines)
                if text.strip() and not text.lstrip().startswith("#")][1:]
    rows = list(csv.reader([t for _, t in numbered]))
    line_no = np.array([n for n, _ in numbered], dtype=int)

    def column(name):
        """Stripped cells of one column ("" past a short row's end)."""
        pos = index[name]
        return [r[pos].strip() if pos < len(r) else "" for r in rows]

    return {c: column(c) for c in columns}, line_no


def _read_csv(path: Path, speed_column, time_column, speed_unit) -> CoastdownLog:
    """A coast-down log from a CSV file (columns in the module docstring).

    Read by pandas' C parser when the file is plain; row by row otherwise (and
    to word an error about a cell), with the same numbers either way.
    Longer than 80 lines: the column checks in file order.
    """
    src = str(path)
    note_read(path)
    header_cells, header_line = _header(path, src)
    header = [h.strip().lower() for h in header_cells]
    index = {}
    for pos, name in enumerate(header):
        if name in index:
            raise InputError(f"column '{name}' appears twice", file=src, field=name,
                             line=header_line)
        index[name] = pos
    for alias in HEADING_ALIASES:
        if alias in index and "heading_deg" not in index:
            index["heading_deg"] = index[alias]
    time_col = choose_time_column(header, time_column, file=src, line=header_line)
    speed_col, unit = choose_speed_column(header, speed_column, speed_unit, file=src,
                                          line=header_line)
    factor = _UNIT_FACTORS[unit]
    numbers = [c for c in NUMBER_COLUMNS if c in index]
    labels = [c for c in LABEL_COLUMNS if c in index]
    time_s = None
    fast = _fast_cells(path, header_line, index, [time_col, speed_col, *numbers], labels)
    if fast is None and time_col != "time_s":       # clock times or date-times
        fast = _fast_cells(path, header_line, index, [speed_col, *numbers],
                           [time_col, *labels])
        if fast is not None:
            try:
                time_s = times_from_text(fast[0][time_col], file=src, field=time_col)
            except InputError:
                fast = None                          # worded row by row below
    if fast is not None:
        cells, line_no = fast
        if time_s is None:
            time_s = cells[time_col]
            if not np.isfinite(time_s).all():
                fast = None
    if fast is None:
        cells, line_no = _slow_cells(path, src, index, [time_col, speed_col, *numbers, *labels])
        time_s = None
    if len(line_no) < 10:
        raise InputError(f"only {len(line_no)} samples; a coast-down log needs many more",
                         file=src)

    def numeric(name, allow_empty=True):
        """The column as floats (NaN where empty); a bad cell named with its line."""
        values = cells[name]
        if isinstance(values, np.ndarray) and values.dtype != object:
            if not allow_empty:
                miss = np.flatnonzero(np.isnan(values))
                if miss.size:
                    raise InputError("missing value", file=src, field=name,
                                     line=int(line_no[miss[0]]))
            return values
        return _numbers(values, line_no, src, name, allow_empty=allow_empty)

    if time_s is None and time_col == "time_s":
        time_s = _numbers(cells[time_col], line_no, src, "time_s", allow_empty=False)
    elif time_s is None:
        time_s = times_from_text(cells[time_col], file=src, field=time_col, lines=line_no)
    bad = np.flatnonzero(np.diff(time_s) <= 0)
    if bad.size:
        i = bad[0] + 1
        raise InputError(f"time must increase: {time_s[i]:.10g} s follows "
                         f"{time_s[i - 1]:.10g} s", file=src, field=time_col,
                         line=int(line_no[i]))
    speed = numeric(speed_col) * factor
    neg = np.flatnonzero(speed < 0)
    if neg.size:
        raise InputError(f"speed must not be negative, got {speed[neg[0]] / factor:.4g}",
                         file=src, field=speed_col, line=int(line_no[neg[0]]))
    optional = {}
    for name in numbers:
        values = numeric(name)
        lo, hi, unit_text = _RANGES[name]
        out = np.flatnonzero((values < lo) | (values > hi))
        if out.size:
            raise InputError(f"{values[out[0]]:.6g} {unit_text} is outside {lo:g} to {hi:g} "
                             f"{unit_text}", file=src, field=name, line=int(line_no[out[0]]))
        optional[name] = values
    for name in labels:
        optional[name] = np.array(cells[name], dtype=object)
    if "wind_speed_ms" in optional or "wind_direction_deg" in optional:
        for need in ("wind_speed_ms", "wind_direction_deg", "heading_deg"):
            if need not in optional:
                raise InputError(f"measured wind needs the column {need} (the headwind "
                                 "component comes from wind speed, wind direction and "
                                 "heading)", file=src, field=need, line=header_line)
    return CoastdownLog(source=src, time_s=np.asarray(time_s, float), speed_ms=speed,
                        line=np.asarray(line_no, dtype=int), speed_column=speed_col,
                        **optional)


def _numbers(cells, line_no, src, name, allow_empty=True):
    """Text cells as floats: empty, nan, na, null are NaN (unless ``allow_empty`` is
    false); anything else that is not a finite number raises with its line."""
    out = np.empty(len(cells))
    for i, cell in enumerate(cells):
        if cell == "" or cell.lower() in ("nan", "na", "null"):
            if not allow_empty:
                raise InputError("missing value", file=src, field=name, line=int(line_no[i]))
            out[i] = np.nan
            continue
        try:
            v = float(cell)
        except ValueError:
            raise InputError(f"must be a number, got '{cell[:30]}'", file=src, field=name,
                             line=int(line_no[i])) from None
        if not math.isfinite(v):
            raise InputError("must be finite", file=src, field=name, line=int(line_no[i]))
        out[i] = v
    return out


def _read_gpx(path: Path) -> CoastdownLog:
    """A coast-down log from a GPX track (:func:`tractive.geo.read_gpx_track`).

    Speed at each point is the speed the point states (GPX 1.0 ``<speed>`` or a
    ``speed`` extension), else the haversine distance between its neighbours
    over their time difference (central difference; one-sided at the ends);
    heading is the initial great-circle bearing between the same neighbours.
    """
    track = read_gpx_track(path, routes=False)
    src = track.source
    if len(track) < 10:
        raise InputError(f"only {len(track)} track points; a coast-down log needs many more",
                         file=src)
    time_s = track.time_s
    bad = np.flatnonzero(np.diff(time_s) <= 0)
    if bad.size:
        raise track.point_error(int(bad[0]) + 1, f"time must increase: point {bad[0] + 2} is "
                                f"not later than point {bad[0] + 1}")
    lat, lon, n = track.lat_deg, track.lon_deg, len(track)
    # central differences on the sphere (haversine distance, initial bearing)
    i0 = np.r_[0, np.arange(n - 2), n - 2]
    i1 = np.r_[1, np.arange(2, n), n - 1]
    dist = haversine_distance_m(lat[i0], lon[i0], lat[i1], lon[i1])
    speed = dist / (time_s[i1] - time_s[i0])
    given = track.speed_ms
    speed = np.where(np.isfinite(given), given, speed)
    neg = np.flatnonzero(speed < 0)
    if neg.size:
        raise track.point_error(int(neg[0]), "its <speed> must not be negative [m/s]")
    heading = initial_bearing_deg(lat[i0], lon[i0], lat[i1], lon[i1])
    elev = track.elevation_m
    return CoastdownLog(source=src, time_s=time_s, speed_ms=speed, line=track.line,
                        speed_column="gpx", heading_deg=heading,
                        elevation_m=elev if np.isfinite(elev).any() else None)
