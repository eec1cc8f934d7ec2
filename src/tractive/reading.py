"""How user speed files are read: the options a command line gives once for every file.

Speed CSV files and GPS tracks take a few reading options (which column holds
the time and the speed, the longest gap, the pause radius of a GPS track, a
smoothing window). A command sets them once with :func:`reading`; every file
named in a profile expression at any depth, also inside a study, is then read
with them. Library users may pass a :class:`ReadOptions` to
:func:`~tractive.profiles.resolve_profile` instead.
"""

from __future__ import annotations

import contextlib
import contextvars
from dataclasses import dataclass

from .errors import InputError


@dataclass(frozen=True)
class ReadOptions:
    """Reading options of user speed files (None: the reader's default).

    Attributes
    ----------
    time_column : str, optional
        CSV column holding the time (seconds, clock times HH:MM:SS[.fff] or
        ISO 8601 date-times).
    speed_column : str, optional
        CSV column holding the speed, ``NAME`` or ``NAME:UNIT`` (unit kmh, kph,
        mph or ms).
    max_gap_s : float, optional
        Longest time gap between samples [s] (CSV and GPX).
    pause_radius_m : float, optional
        Largest displacement across a long gap of a GPS track for the gap to
        count as standing still [m].
    smooth_s : float, optional
        Smoothing window [s]: Savitzky-Golay of a CSV speed trace, and the
        velocity window of a GPS track.
    """

    time_column: str | None = None
    speed_column: str | None = None
    max_gap_s: float | None = None
    pause_radius_m: float | None = None
    smooth_s: float | None = None

    def csv_kwargs(self) -> dict:
        """Keyword arguments of :func:`~tractive.profiles.read_speed_csv`."""
        out = {}
        if self.time_column:
            out["time_column"] = self.time_column
        if self.speed_column:
            out["speed_column"] = self.speed_column
        if self.max_gap_s is not None:
            out["max_gap_s"] = self.max_gap_s
        if self.smooth_s is not None:
            out["smooth_s"] = self.smooth_s
        return out

    def gpx_kwargs(self) -> dict:
        """Keyword arguments of :func:`~tractive.profiles.read_gpx`."""
        out = {}
        if self.max_gap_s is not None:
            out["max_gap_s"] = self.max_gap_s
        if self.pause_radius_m is not None:
            out["pause_radius_m"] = self.pause_radius_m
        if self.smooth_s is not None:
            out["speed_window_s"] = self.smooth_s
        return out


_CURRENT: contextvars.ContextVar[ReadOptions] = contextvars.ContextVar(
    "tractive_read_options", default=ReadOptions())


def current_options() -> ReadOptions:
    """The reading options in force (set by :func:`reading`)."""
    return _CURRENT.get()


@contextlib.contextmanager
def reading(options: ReadOptions | None):
    """Read every user speed file inside the block with ``options``."""
    if options is None:
        yield
        return
    if not isinstance(options, ReadOptions):
        raise InputError("reading options must be a ReadOptions")
    token = _CURRENT.set(options)
    try:
        yield
    finally:
        _CURRENT.reset(token)
