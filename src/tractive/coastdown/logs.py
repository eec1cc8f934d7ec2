"""Reading raw coast-down logs: CSV (time, speed, optional heading, wind, air,
elevation, labels) and GPX tracks, without resampling.

CSV columns (header names, case-insensitive; other columns are ignored):

==========================  =====================================================
column                      meaning [unit]
==========================  =====================================================
``time_s``                  time [s], strictly increasing; or
``timestamp`` / ``time``    ISO 8601 date-time (converted to seconds from the first)
``speed_kmh`` | ``speed_mph`` | ``speed_ms``   speed over ground (exactly one)
``heading_deg``             direction of travel [°], clockwise from north
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
"""

from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import haversine_distance_m, initial_bearing_deg, read_gpx_track
from ..readfiles import note_read
from ..units import KMH_MS, MPH_MS

#: speed columns and their factor to m/s (exact, NIST SP 811)
SPEED_COLUMNS = {"speed_kmh": KMH_MS, "speed_mph": MPH_MS, "speed_ms": 1.0}
TIME_COLUMNS = ("time_s", "timestamp", "time")
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


def read_coastdown_log(path: str | os.PathLike, *, speed_column: str | None = None
                       ) -> CoastdownLog:
    """Read a raw coast-down log (CSV or GPX) without resampling it.

    Parameters
    ----------
    path : str or path
        A ``.csv`` file (columns in the module docstring) or a ``.gpx`` track.
    speed_column : str, optional
        Which speed column to use when the file has several.

    Raises
    ------
    InputError
        Naming the file and the column or line: no time or speed column, a
        value that is not a number, time that does not increase, fewer than
        ten samples.
    """
    path = Path(path)
    if path.suffix.lower() == ".gpx":
        return _read_gpx(path)
    return _read_csv(path, speed_column)


def _read_csv(path: Path, speed_column: str | None) -> CoastdownLog:
    src = str(path)
    note_read(path)
    try:
        with open(path, newline="", encoding="utf-8-sig") as fh:
            lines = fh.read().splitlines()
    except FileNotFoundError:
        raise InputError("file not found", file=src) from None
    except IsADirectoryError:
        raise InputError("is a directory, expected a CSV or GPX log", file=src) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read file ({exc.__class__.__name__})", file=src) from None
    numbered = [(i + 1, text) for i, text in enumerate(lines)
                if text.strip() and not text.lstrip().startswith("#")]
    if not numbered:
        raise InputError("empty file: expected a header line and samples", file=src)
    header_line, header_text = numbered[0]
    header = [h.strip().lower() for h in next(csv.reader([header_text]))]
    index = {}
    for pos, name in enumerate(header):
        if name in index:
            raise InputError(f"column '{name}' appears twice", file=src, field=name,
                             line=header_line)
        index[name] = pos
    time_col = next((c for c in TIME_COLUMNS if c in index), None)
    if time_col is None:
        raise InputError("no time column: expected time_s or an ISO timestamp column "
                         "(timestamp or time)", file=src, line=header_line)
    speeds = [c for c in SPEED_COLUMNS if c in index]
    if speed_column is not None:
        if speed_column not in SPEED_COLUMNS:
            raise InputError(f"unknown speed column '{speed_column}'; use one of "
                             f"{', '.join(SPEED_COLUMNS)}", field="speed_column")
        if speed_column not in index:
            raise InputError(f"no column '{speed_column}'", file=src, line=header_line)
        speeds = [speed_column]
    if not speeds:
        raise InputError("no speed column: expected one of speed_kmh, speed_mph, speed_ms",
                         file=src, line=header_line)
    if len(speeds) > 1:
        raise InputError(f"several speed columns ({', '.join(speeds)}); keep one or choose "
                         "one with --speed-column (speed_column= in Python)", file=src, line=header_line)
    speed_col = speeds[0]
    rows = list(csv.reader([t for _, t in numbered[1:]]))
    line_no = np.array([n for n, _ in numbered[1:]], dtype=int)
    if len(rows) < 10:
        raise InputError(f"only {len(rows)} samples; a coast-down log needs many more",
                         file=src)

    def column(name):
        pos = index[name]
        return [r[pos].strip() if pos < len(r) else "" for r in rows]

    # time
    if time_col == "time_s":
        time_s = _numbers(column("time_s"), line_no, src, "time_s", allow_empty=False)
    else:
        time_s = _timestamps(column(time_col), line_no, src, time_col)
    bad = np.flatnonzero(np.diff(time_s) <= 0)
    if bad.size:
        i = bad[0] + 1
        raise InputError(f"time must increase: {time_s[i]:g} s follows {time_s[i - 1]:g} s",
                         file=src, field=time_col, line=int(line_no[i]))
    speed = _numbers(column(speed_col), line_no, src, speed_col) * SPEED_COLUMNS[speed_col]
    neg = np.flatnonzero(speed < 0)
    if neg.size:
        raise InputError(f"speed must not be negative, got {speed[neg[0]] / SPEED_COLUMNS[speed_col]:g}",
                         file=src, field=speed_col, line=int(line_no[neg[0]]))
    optional = {}
    for name in NUMBER_COLUMNS:
        if name in index:
            values = _numbers(column(name), line_no, src, name)
            lo, hi, unit = _RANGES[name]
            out = np.flatnonzero((values < lo) | (values > hi))
            if out.size:
                raise InputError(f"{values[out[0]]:g} {unit} is outside {lo:g} to {hi:g} {unit}",
                                 file=src, field=name, line=int(line_no[out[0]]))
            optional[name] = values
    for name in LABEL_COLUMNS:
        if name in index:
            optional[name] = np.array(column(name), dtype=object)
    if "wind_speed_ms" in optional or "wind_direction_deg" in optional:
        for need in ("wind_speed_ms", "wind_direction_deg", "heading_deg"):
            if need not in optional:
                raise InputError(f"measured wind needs the column {need} (the headwind "
                                 "component comes from wind speed, wind direction and "
                                 "heading)", file=src, field=need, line=header_line)
    return CoastdownLog(source=src, time_s=time_s, speed_ms=speed, line=line_no,
                        speed_column=speed_col, **optional)


def _numbers(cells, line_no, src, name, allow_empty=True):
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


def _timestamps(cells, line_no, src, name):
    import pandas as pd

    for i, cell in enumerate(cells):
        if cell == "":
            raise InputError("missing timestamp", file=src, field=name, line=int(line_no[i]))
    try:
        stamps = pd.to_datetime(pd.Series(cells), format="ISO8601", utc=True)
    except (ValueError, TypeError):
        # find the first bad cell for the message
        for i, cell in enumerate(cells):
            try:
                pd.to_datetime(cell, format="ISO8601", utc=True)
            except (ValueError, TypeError):
                raise InputError(f"not an ISO 8601 date-time: '{cell[:40]}'", file=src,
                                 field=name, line=int(line_no[i])) from None
        raise InputError("cannot read the timestamps", file=src, field=name) from None
    # the resolution pandas picks (s, ms, us, ns) varies; timedeltas know their unit
    return (stamps - stamps.iloc[0]).dt.total_seconds().to_numpy(dtype=float)


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
