"""Columns of logged traces as they come: which column holds time and speed, in
which unit, and times written as seconds, clock times or ISO 8601 date-times.

Shared by the speed-file reader (:mod:`tractive.profiles.speedcsv`) and the
coast-down log reader (:mod:`tractive.coastdown.logs`). Hints in messages name
the command-line options (``--time-column NAME``, ``--speed-column NAME:UNIT``).
"""

from __future__ import annotations

import difflib
import re

import numpy as np

from ..errors import InputError

__all__ = ["SPEED_UNIT_NAMES", "SPEED_COLUMNS", "TIME_COLUMNS", "speed_unit",
           "choose_speed_column", "choose_time_column", "times_from_text"]

#: spellings of speed units a user may give, and the canonical unit
SPEED_UNIT_NAMES = {"kmh": "kmh", "kph": "kmh", "km/h": "kmh", "mph": "mph", "ms": "ms",
                    "m/s": "ms"}
#: speed columns recognised by name, and their unit (``speed_kph`` is the common
#: spelling of ``speed_kmh``)
SPEED_COLUMNS = {"speed_kmh": "kmh", "speed_kph": "kmh", "speed_mph": "mph", "speed_ms": "ms"}
#: time columns recognised by name, in order of preference
TIME_COLUMNS = ("time_s", "timestamp", "time")
_SPEEDISH = ("speed", "velocity", "vel", "spd", "v", "gps_speed", "ground_speed")
_TIMEISH = ("t", "secs", "seconds", "sec", "clock", "datetime", "date_time", "utc", "gps_time")
_CLOCK = re.compile(r"^\s*(\d{1,2}):([0-5]\d):([0-5]\d(?:\.\d*)?)\s*$")


def speed_unit(text, field: str = "speed_unit") -> str:
    """The canonical speed unit (``kmh``, ``mph``, ``ms``) of a user's spelling."""
    key = str(text).strip().lower()
    if key not in SPEED_UNIT_NAMES:
        raise InputError(f"unknown speed unit '{text}'; use kmh (or kph), mph or ms",
                         field=field)
    return SPEED_UNIT_NAMES[key]


def _seen(names) -> str:
    """The header's column names, for a message."""
    shown = [n for n in names if n]
    text = ", ".join(shown[:20])
    return text + (", ..." if len(shown) > 20 else "")


def _speedish(name: str) -> bool:
    """True for a column name that looks like a speed."""
    return name in _SPEEDISH or name.startswith(("speed", "velocity", "spd", "gps_speed"))


#: unit spellings seen after ``speed_`` in logs, and the unit they mean
_UNIT_SUFFIXES = {"kmph": "kmh", "km_h": "kmh", "kmhr": "kmh", "kmperh": "kmh", "kph": "kmh",
                  "mi_h": "mph", "miph": "mph", "mph": "mph", "m_s": "ms", "mps": "ms",
                  "meters_per_second": "ms", "km_per_h": "kmh", "kilometers_per_hour": "kmh",
                  "miles_per_hour": "mph"}


def _likely_unit(name: str):
    """The unit a speed column's name spells in an unusual way (``speed_kmph``), or None."""
    for head in ("speed_", "velocity_", "spd_", "gps_speed_", "v_"):
        if name.startswith(head):
            return _UNIT_SUFFIXES.get(name[len(head):].replace("/", "_").replace("-", "_"))
    return None


def choose_speed_column(names: list, speed_column=None, unit=None, *, file=None,
                        line=None) -> tuple[str, str]:
    """(column, unit) of the speed: the one named by ``speed_column`` (``NAME`` with
    ``unit``, or ``NAME:UNIT``), else the one ``speed_kmh``/``speed_kph``/``speed_mph``/
    ``speed_ms`` column of the header ``names`` (lowercase).

    Raises InputError listing the columns seen and proposing ``--speed-column``.
    """
    if speed_column is not None:
        col = str(speed_column).strip()
        if unit is None and ":" in col:
            col, _, unit = col.rpartition(":")
        col = col.strip().lower()
        if col not in names:
            raise InputError(f"no column '{col}'; columns seen: {_seen(names)}", file=file,
                             field=col, line=line)
        if unit is None:
            if col not in SPEED_COLUMNS:
                raise InputError(f"give the unit of column '{col}': e.g. --speed-column "
                                 f"{col}:kmh (units kmh, mph, ms)", file=file, field=col,
                                 line=line)
            return col, SPEED_COLUMNS[col]
        return col, speed_unit(unit)
    if unit is not None:
        unit = speed_unit(unit)
    found = [c for c in names if c in SPEED_COLUMNS]
    if len(found) > 1:
        raise InputError(f"two speed columns ({', '.join(found)}); keep only one or choose "
                         f"one with --speed-column", file=file, field=found[1], line=line)
    if found:
        return found[0], unit or SPEED_COLUMNS[found[0]]
    vague = [c for c in names if _speedish(c)]
    if vague and unit is not None:
        return vague[0], unit
    seen = f"columns seen: {_seen(names)}"
    if vague:
        col = vague[0]
        likely = _likely_unit(col)
        if likely is not None:
            raise InputError(f"unknown speed column '{col}'; {seen}; did you mean "
                             f"speed_{likely}? rename the column, or pass --speed-column "
                             f"{col}:{likely}", file=file, field=col, line=line)
        close = difflib.get_close_matches(col, list(SPEED_COLUMNS), n=1, cutoff=0.75)
        if close and col not in _SPEEDISH:
            hint = (f"did you mean {close[0]}? rename the column, or pass --speed-column "
                    f"{col}:{SPEED_COLUMNS[close[0]]}")
        else:
            hint = (f"if '{col}' is in km/h pass --speed-column {col}:kmh (or :mph, :ms), "
                    f"or name the column speed_kmh, speed_mph or speed_ms")
        raise InputError(f"no speed column with a unit; {seen}; {hint}", file=file, field=col,
                         line=line)
    raise InputError(f"no speed column; {seen}; name the column speed_kmh, speed_mph or "
                     "speed_ms, or pass --speed-column NAME:UNIT (UNIT kmh, mph or ms)",
                     file=file, line=line)


def choose_time_column(names: list, time_column=None, *, file=None, line=None) -> str:
    """The time column: ``time_column`` when given, else the first of ``time_s``,
    ``timestamp``, ``time`` in the header ``names`` (lowercase).

    Raises InputError listing the columns seen and proposing ``--time-column``.
    """
    if time_column is not None:
        col = str(time_column).strip().lower()
        if col not in names:
            raise InputError(f"no column '{col}'; columns seen: {_seen(names)}", file=file,
                             field=col, line=line)
        return col
    col = next((c for c in TIME_COLUMNS if c in names), None)
    if col is not None:
        return col
    maybe = [c for c in names if c in _TIMEISH or "time" in c or c.endswith("_s")]
    hint = (f"if '{maybe[0]}' holds the time pass --time-column {maybe[0]}" if maybe else
            "name the column time_s, or pass --time-column NAME")
    raise InputError(f"no time column (time_s in seconds, or timestamp/time as clock times "
                     f"or ISO 8601 date-times); columns seen: {_seen(names)}; {hint}",
                     file=file, line=line)


def times_from_text(cells, *, file=None, field=None, lines=None) -> np.ndarray:
    """Seconds [s] from text cells: numbers of seconds (as written), clock times
    ``HH:MM:SS[.fff]`` (seconds from the first; a step back of more than 12 h is a
    midnight passed, so a log that runs over midnight keeps counting), or ISO 8601
    date-times (seconds from the first; zones converted to UTC).

    Raises InputError naming the first cell that none of these reads, with its line.
    """
    import pandas as pd

    series = pd.Series(np.asarray(cells, dtype=object)).astype(str).str.strip()

    def where(i):
        """The line of cell ``i``, when known."""
        return None if lines is None else int(lines[i])

    empty = np.flatnonzero((series == "").to_numpy())
    if empty.size:
        raise InputError("missing time", file=file, field=field, line=where(empty[0]))
    numbers = pd.to_numeric(series, errors="coerce").to_numpy(dtype=float)
    if np.isfinite(numbers).all():
        return numbers
    parts = series.str.extract(_CLOCK)
    if parts.notna().all(axis=None):
        h, m, s = (parts[i].astype(float).to_numpy() for i in range(3))
        bad = np.flatnonzero(h > 23)
        if bad.size:
            raise InputError(f"not a clock time: '{series.iloc[bad[0]]}'", file=file,
                             field=field, line=where(bad[0]))
        sec = h * 3600.0 + m * 60.0 + s
        rolled = np.concatenate([[0], np.cumsum(np.diff(sec) < -43200.0)])
        sec = sec + 86400.0 * rolled
        return sec - sec[0]
    try:
        stamps = pd.to_datetime(series, format="ISO8601", utc=True)
    except (ValueError, TypeError):
        for i, cell in enumerate(series):
            if _CLOCK.match(cell):
                continue
            try:
                float(cell)
                continue
            except ValueError:
                pass
            try:
                pd.to_datetime(cell, format="ISO8601", utc=True)
            except (ValueError, TypeError):
                raise InputError(f"not a time: '{cell[:40]}' (expected seconds, a clock time "
                                 "HH:MM:SS or an ISO 8601 date-time)", file=file, field=field,
                                 line=where(i)) from None
        raise InputError("mixes kinds of time (seconds, clock times, date-times); use one",
                         file=file, field=field) from None
    # the resolution pandas picks (s, ms, us, ns) varies; timedeltas know their unit
    return (stamps - stamps.iloc[0]).dt.total_seconds().to_numpy(dtype=float)
