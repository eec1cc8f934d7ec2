"""Options for reading speed files, shared by every command that reads a profile."""

from __future__ import annotations

import click

from ._checks import Number, ranged

GAP = Number(0.0, 3600.0, low_open=True, unit="s")
RADIUS = Number(0.0, 10000.0, low_open=True, unit="m")
SMOOTH = Number(0.0, 600.0, low_open=True, unit="s")

#: option name → ReadOptions field
FIELDS = ("time_column", "speed_column", "max_gap_s", "pause_radius_m", "smooth_s")


def reading_options(func):
    """--time-column, --speed-column, --max-gap-s, --pause-radius-m, --smooth-s."""
    opts = [
        click.option("--time-column", default=None, metavar="NAME",
                     help="CSV column with the time: seconds, clock times HH:MM:SS[.fff] or "
                          "ISO 8601 date-times (default: time_s, timestamp or time)."),
        click.option("--speed-column", default=None, metavar="NAME:UNIT",
                     help="CSV column with the speed and its unit (kmh, kph, mph or ms), "
                          "e.g. speed:kmh (default: speed_kmh, speed_mph or speed_ms)."),
        click.option("--max-gap-s", type=GAP, default=None,
                     help=ranged("Longest time gap between samples of a speed file or GPS "
                                 "track [s] (default 60).", GAP)),
        click.option("--pause-radius-m", type=RADIUS, default=None,
                     help=ranged("Largest move across a long gap of a GPS track for the gap "
                                 "to count as standing still [m] (default 50).", RADIUS)),
        click.option("--smooth-s", type=SMOOTH, default=None,
                     help=ranged("Smoothing window of speed files and GPS tracks [s] "
                                 "(Savitzky-Golay; default: none for CSV, 11 s for GPS).",
                                 SMOOTH)),
    ]
    for opt in reversed(opts):
        func = opt(func)
    return func


def read_options_from(kwargs: dict):
    """Pop the reading options out of a command's keyword arguments; the api's
    ReadOptions, or None when none was given."""
    from ..api import ReadOptions

    values = {k: kwargs.pop(k, None) for k in FIELDS}
    if all(v is None for v in values.values()):
        return None
    return ReadOptions(**values)
