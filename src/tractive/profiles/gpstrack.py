"""Speed profiles from GPS tracks (GPX).

GPS tracks
----------
:func:`read_gpx` reads GPX 1.0/1.1 files with gpxpy: all track points of all
tracks and segments in file order, or all route points when there is no
track. Every point needs a time.

Speed from positions. Each point becomes east and north metres from the first
point: north = R (phi - phi_0), and each step east = R cos(phi_mid)
(lambda_i - lambda_(i-1)), on the sphere of radius
:data:`~tractive.geo.EARTH_RADIUS_M` [3]_; a step's length sqrt(de² + dn²) is
its haversine great-circle length [2]_ to within a relative (step/R)². East and north are linearly interpolated
onto the uniform time grid, and each is differentiated with a Savitzky-Golay
filter [1]_ over a centred window of ``speed_window_s`` (default 11 s; the
odd number of samples nearest to ``speed_window_s/dt_s``, at least 3): inside
the track the least-squares slope of the position over the window; in the
first and last half-window the slope, at each sample, of a quadratic fitted
to the first or last whole window, so a track that starts from rest at
constant acceleration reads 0, a dt, 2 a dt. Speed is the magnitude of that
velocity, and distance is its integral (the trapezoid rule of every profile),
so position noise no longer adds up: with 1 m of white noise on east and north
at 1 s, the least-squares slope over 11 s has a standard deviation of about
0.1 m/s on each axis. Speeds below ``stop_speed_ms`` (default 0.5 m/s = 1.8
km/h) are set to 0 (what remains of the jitter when the vehicle stands still).
The smoothing rounds each corner of the speed trace over the window: a
change from rest to an acceleration is spread over the window, and
at a track's first or last point, where the rounding has no counterpart, a
track that starts or ends in motion within a half-window of its end is about
a h²/8 short (3 m for a = 1 m/s² and h = 5 s, the half-window); inside the
track the gains and losses of the corners cancel.

Stated speeds. When every point states a speed (GPX 1.0 ``<speed>``, or an
element named ``speed`` in any namespace inside its ``<extensions>``, as
several loggers write the receiver's Doppler speed) [m/s], those speeds are
linearly interpolated onto the grid instead, without smoothing (Doppler speed
has no position jitter), and the stop threshold applies; distance is their
integral. ``use_point_speed=False`` uses the positions anyway.

Gaps and pauses. Successive points up to ``max_gap_s`` apart (default 60 s),
in one segment or across segments, are interpolated. A longer gap is a pause
when the points on either side of it are at most ``pause_radius_m`` apart
(default 50 m, a car park; haversine distance): the vehicle stands still for
the whole gap (its time is kept, the small move across it is dropped), which
is the honest reading of a café stop or an auto-paused logger for energy
(auxiliary loads keep running in a traffic jam) and idle share; split the
file where the vehicle was switched off and auxiliary power should not count.
A longer gap across which the position moved further is an error naming the
point and its line (the speed in between is unknown); pass a larger
``max_gap_s`` (``--max-gap-s``) to interpolate straight across it, or split the file. A step
between successive points faster than
:data:`~tractive.limits.MAX_USER_SPEED_KMH` (over at least 1 s) is refused
as a position jump.

Grade comes from the points' elevation (:mod:`tractive.profiles.grade`; zero
when the track has no elevation) along the distance of the speed trace. That distance is horizontal (speed from
positions on the map, or a receiver's speed over ground), so the slope of
elevation over it is rise over run, the tangent of the slope angle: the
grade as it is, with no conversion.

References
----------
.. [1] A. Savitzky and M. J. E. Golay, "Smoothing and Differentiation of Data
   by Simplified Least Squares Procedures", Analytical Chemistry 36(8),
   1627-1639, 1964.
.. [2] R. W. Sinnott, "Virtues of the Haversine", Sky and Telescope 68(2),
   159, 1984.
.. [3] H. Moritz, "Geodetic Reference System 1980", Journal of Geodesy 74,
   128-133, 2000 (mean Earth radius R1 = 6 371 008.7714 m).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import local_east_north_m, read_gpx_track
from ..limits import MAX_GRADE_FRACTION, MAX_USER_SPEED_KMH
from .grade import GRADE_WINDOW_M, grade_from_elevation
from .model import (Profile, accel_message, first_implausible_step, positive, uniform_grid,
                    whole)

__all__ = ["SPEED_WINDOW_S", "STOP_SPEED_MS", "PAUSE_RADIUS_M", "read_gpx",
           "smoothed_velocity", "smoothed"]

#: default window for GPS speed smoothing [s]
SPEED_WINDOW_S = 11.0
#: default largest displacement across a long time gap in a GPS track for the gap to
#: count as standing still [m] (a car park; a design choice)
PAUSE_RADIUS_M = 50.0
#: default speed below which a GPS track counts as standing still [m/s]
STOP_SPEED_MS = 0.5


def _window_samples(window_s: float, dt_s: float, n: int) -> int:
    """Odd number of samples nearest to ``window_s / dt_s``, at least 3, at most ``n``."""
    w = 2 * int(math.floor((window_s / dt_s - 1.0) / 2.0 + 0.5)) + 1
    w = max(w, 3)
    return min(w, n if n % 2 else n - 1)


def smoothed(values: np.ndarray, dt_s: float, window_s: float) -> np.ndarray:
    """Uniformly sampled values smoothed over ``window_s`` [s]: the Savitzky-Golay
    local quadratic [1]_ of :func:`smoothed_velocity`, its value instead of its slope
    (the same window; the first and last half-window from the quadratic of the first
    or last whole window)."""
    from scipy.signal import savgol_filter

    n = len(values)
    if n < 3:
        return np.asarray(values, float).copy()
    w = _window_samples(window_s, dt_s, n)
    return savgol_filter(values, w, 2, mode="interp")


def smoothed_velocity(values: np.ndarray, dt_s: float, window_s: float) -> np.ndarray:
    """Rate of change [unit/s] of uniformly sampled positions, smoothed over ``window_s``.

    Savitzky-Golay first derivative of a local quadratic [1]_: inside the
    trace it is the least-squares slope over a centred window (a quadratic
    and a straight line have the same slope at the centre of a symmetric
    window); in the first and last half-window it is the slope, at each
    sample, of the quadratic fitted to the first or last whole window, so a
    trace that starts from rest at constant acceleration gets 0, a dt, 2 a dt.
    """
    from scipy.signal import savgol_filter

    n = len(values)
    if n < 2:
        return np.zeros(n)
    if n == 2:
        return np.full(2, (values[1] - values[0]) / dt_s)
    w = _window_samples(window_s, dt_s, n)
    return savgol_filter(values, w, 2, deriv=1, delta=dt_s, mode="interp")



def read_gpx(path, dt_s: float = 1.0, *, speed_window_s: float = SPEED_WINDOW_S,
             stop_speed_ms: float = STOP_SPEED_MS, max_gap_s: float = 60.0,
             pause_radius_m: float = PAUSE_RADIUS_M, use_point_speed: bool = True,
             use_elevation: bool = True, grade_window_m: float = GRADE_WINDOW_M,
             max_grade_fraction: float = MAX_GRADE_FRACTION,
             name: str | None = None) -> Profile:
    """Read a GPS track (GPX) as a speed profile (method in the module docstring).

    Longer than 80 lines: the method's steps (points, pauses, smoothed velocity, stated
    speeds, grade) in order, each with its check.

    Parameters
    ----------
    path : str or path
        The GPX file.
    dt_s : float
        Time step [s] of the returned profile.
    speed_window_s : float
        Width of the centred smoothing window for speed from positions [s].
    stop_speed_ms : float
        Speeds below this [m/s] are set to 0 (GPS jitter at standstill);
        0 keeps every speed.
    max_gap_s : float
        Longest time between successive points [s] that is bridged by
        interpolation. A longer gap is a pause (standing still) when the
        position across it moved at most ``pause_radius_m``, else an error.
    pause_radius_m : float
        Largest distance [m] between the points on either side of a gap
        longer than ``max_gap_s`` for the gap to count as standing still.
    use_point_speed : bool
        Take the speed the points state (GPX 1.0 ``<speed>`` or a ``speed``
        extension) when every point states one, instead of the positions.
    use_elevation : bool
        Compute grade from the points' elevation (else level road).
    grade_window_m : float
        Distance window for grade from elevation [m].
    max_grade_fraction : float
        Limit on |grade| from elevation [-].
    name : str, optional
        Profile name (default: the file name).

    Returns
    -------
    Profile
        Time from the first point (0 s) to the last grid point not after the
        last point, step ``dt_s``.

    Raises
    ------
    InputError
        Unreadable or malformed file, no points, a point without time (its
        number and line), time not increasing, a gap over ``max_gap_s``
        across which the position moved more than ``pause_radius_m``, a
        position jump faster than :data:`~tractive.limits.MAX_USER_SPEED_KMH`.

    References
    ----------
    .. [1] A. Savitzky and M. J. E. Golay, Analytical Chemistry 36(8),
       1627-1639, 1964 (smoothing).
    .. [2] R. W. Sinnott, Sky and Telescope 68(2), 159, 1984 (haversine).
    """
    path = Path(path)
    file = str(path)
    dt_s = positive(dt_s, "dt_s")
    max_gap_s = positive(max_gap_s, "max_gap_s")
    speed_window_s = positive(speed_window_s, "speed_window_s")
    grade_window_m = positive(grade_window_m, "grade_window_m")
    max_grade_fraction = positive(max_grade_fraction, "max_grade_fraction")
    for value, what in ((stop_speed_ms, "stop_speed_ms"), (pause_radius_m, "pause_radius_m")):
        if not (math.isfinite(float(value)) and float(value) >= 0):
            raise InputError(f"must be a finite number >= 0, got {value!r}", field=what)
    track = read_gpx_track(path)
    kind, point_error, times = track.kind, track.point_error, track.times
    if len(track) < 2:
        raise InputError(f"needs at least 2 {kind}s with time, found 1", file=file)
    t, lat, lon, ele = track.time_s, track.lat_deg, track.lon_deg, track.elevation_m

    steps = np.diff(t)
    back = np.flatnonzero(steps <= 0)
    if back.size:
        i = back[0] + 1
        raise point_error(i, f"time must increase from point to point: {times[i]} follows "
                             f"{times[i - 1]}")
    if t[-1] < dt_s * (1 - 1e-9):
        raise InputError(f"the track spans {t[-1]:g} s, less than one time step "
                         f"dt_s = {dt_s:g} s", file=file)

    step_m = track.step_distance_m()
    max_ms = MAX_USER_SPEED_KMH / 3.6
    # a step between two points faster than any road vehicle (over at least 1 s, so that
    # the metre-scale noise of loggers that record many times a second does not count)
    leap = np.flatnonzero(step_m > max_ms * np.maximum(steps, 1.0))
    if leap.size:
        i = leap[0] + 1
        raise point_error(i, f"the position moves {step_m[i - 1]:.0f} m within "
                             f"{steps[i - 1]:g} s of the previous point "
                             f"({whole(step_m[i - 1] / steps[i - 1] * 3.6)} km/h), above the "
                             f"{MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds; a position "
                             "jump? check the coordinates of this point")
    long_gap = np.flatnonzero(steps > max_gap_s)
    moved = long_gap[step_m[long_gap] > pause_radius_m]
    if moved.size:
        i = moved[0] + 1
        raise point_error(i, f"time gap of {steps[i - 1]:.4g} s before this point is longer "
                             f"than the longest gap of {max_gap_s:g} s, and the position "
                             f"moved {step_m[i - 1]:.0f} m across it (more than the pause "
                             f"radius of {pause_radius_m:g} m, so not a pause): the speed in "
                             "between is unknown; split the track here, or pass a larger "
                             "--max-gap-s (or --pause-radius-m) to interpolate straight "
                             "across the gap")

    stated = None
    if use_point_speed and not np.isnan(track.speed_ms).any():
        stated = track.speed_ms
        bad = np.flatnonzero(~np.isfinite(stated) | (stated < 0))
        if bad.size:
            raise point_error(int(bad[0]), "its <speed> must be a finite number >= 0 [m/s]")

    # a pause holds the position: the small move across it is taken out (the points after
    # it shift by that offset), so the vehicle stands where it stopped for the whole gap
    try:
        grid = uniform_grid(t[-1], dt_s)
    except InputError as err:
        raise err.located(file=file, field="dt_s") from None
    paused = np.zeros_like(grid, dtype=bool)
    for i in long_gap:
        paused |= (grid > t[i]) & (grid < t[i + 1])
    if stated is not None:
        speed = np.interp(grid, t, stated)
        speed[paused] = 0.0
    else:
        east, north = local_east_north_m(lat, lon)
        d_east, d_north = np.diff(east), np.diff(north)
        d_east[long_gap] = 0.0
        d_north[long_gap] = 0.0
        east = np.concatenate([[0.0], np.cumsum(d_east)])
        north = np.concatenate([[0.0], np.cumsum(d_north)])
        vx = smoothed_velocity(np.interp(grid, t, east), dt_s, speed_window_s)
        vy = smoothed_velocity(np.interp(grid, t, north), dt_s, speed_window_s)
        speed = np.hypot(vx, vy)
    speed[speed < stop_speed_ms] = 0.0

    def nearest_point(time_s):
        """Index of the first point at or after ``time_s``."""
        return int(np.clip(np.searchsorted(t, time_s), 0, len(t) - 1))

    what = "the speed the points state" if stated is not None else "the speed from the positions"
    fast = np.flatnonzero(speed * 3.6 > MAX_USER_SPEED_KMH)
    if fast.size:
        j = fast[0]
        raise point_error(nearest_point(grid[j]),
                          f"{what} reaches {whole(speed[j] * 3.6)} km/h "
                          f"near {grid[j]:g} s, above the {MAX_USER_SPEED_KMH:g} km/h no road "
                          "vehicle exceeds; a position jump? check the coordinates near "
                          "this point")
    jump = first_implausible_step(speed, dt_s)
    if jump is not None:
        k, accel = jump
        raise point_error(nearest_point(grid[k + 1]),
                          accel_message(speed, k, accel, dt_s, float(grid[k + 1]), "points"))

    has_ele = np.isfinite(ele)
    if use_elevation and np.count_nonzero(has_ele) >= 2:
        s = np.concatenate([[0.0], np.cumsum(0.5 * (speed[1:] + speed[:-1]) * dt_s)])
        z = np.interp(grid, t[has_ele], ele[has_ele])
        grade = grade_from_elevation(s, z, grade_window_m, max_grade_fraction)
    else:
        grade = np.zeros_like(grid)
    return Profile(name if name is not None else path.name, grid, speed, grade, (),
                   f"GPS track {file}")


