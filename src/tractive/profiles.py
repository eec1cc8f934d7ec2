"""Speed profiles: bundled drive cycles, user CSV files, GPS tracks, statistics.

A :class:`Profile` is a speed trace on a uniform time grid that starts at
0 s: time [s], speed [m/s] (never negative) and road grade [rise/run] per
sample, with optional named phases and a note on where it came from. Every
source is turned into that one shape at the edge, in SI units.

Profile strings
---------------
:func:`resolve_profile` turns the text a user writes on the command line or
in a study file into a profile::

    udds                    a bundled cycle (see list_cycles(); case-insensitive)
    wltc3b:low              one phase of a bundled cycle, on its own, time from 0 s
                            (phase names are case-insensitive)
    trips/commute.csv       a speed file (see "Speed CSV files" below)
    ride.gpx                a GPS track (see "GPS tracks" below)
    steady:90kmh            constant speed for 3600 s; units kmh, mph or ms
    steady:55mph:600s       ... for 600 s (units s, min or h); the speed holds
                            from t = 0, without a run-up
    udds+hwfet              one after the other
    wltc3b*3                three times in a row
    udds*2+hwfet            ``*`` binds tighter than ``+``: (udds*2)+hwfet

Bundled cycles keep their native 1 s step whatever ``dt_s`` is (the
regulations define them second by second; resampling would change their
distance and energy); ``dt_s`` applies to files and ``steady:`` terms only,
and in a joined string that contains a bundled cycle every part is read at
1 s.

File paths are relative to ``base_dir`` when it is given (the folder of the
study file), else to the working directory. A path that contains ``+`` or
``*`` can be quoted with ``'...'`` or ``"..."``; a whole string that names an
existing ``.csv`` or ``.gpx`` file is always read as that file. A name that is
not bundled raises :class:`~tractive.errors.InputError` listing the bundled
cycles, with a did-you-mean hint.

Joining profiles
----------------
:func:`concatenate` (and :func:`repeat`) put profiles end to end. When a part
starts with exactly the speed and grade at which the previous part ends (true
of every bundled cycle, which start and end at standstill) the two instants
are the same sample: this is how the FTP-75 table joins the UDDS and its
first 505 s. Otherwise the next part starts one time step later, and the
speed changes from one value to the other over that step. All parts must
have the same time step.

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

Grade from elevation
--------------------
Where elevation is given instead of grade (``elevation_m`` columns, GPS
tracks), elevation is first taken as a function of distance travelled, then
smoothed: the grade at a distance is the slope of a least-squares straight
line fitted to the elevation over a centred window of ``grade_window_m``
metres (default 100 m) on a 1 %-of-window distance grid, which is a first-
derivative Savitzky-Golay filter of order 1 [1]_; near the ends of the trip
the window is the first or last ``grade_window_m`` of road. Samples taken
while the vehicle stands still share one distance; their elevations are
averaged, and a stopped vehicle keeps the grade of the spot where it stands
(there is no division by a zero distance). The result is clipped to
+-``max_grade_fraction`` (default 0.30: public roads steeper than about 30 %
are rare, common practice) to stop elevation noise turning into impossible
grades. A trip with no distance at all has zero grade.

GPS tracks
----------
:func:`read_gpx` reads GPX 1.0/1.1 files with gpxpy: all track points of all
tracks and segments in file order, or all route points when there is no
track. Every point needs a time.

Speed from positions. Each point becomes east and north metres from the first
point: north = R (phi - phi_0), and each step east = R cos(phi_mid)
(lambda_i - lambda_(i-1)), on the sphere of radius :data:`EARTH_RADIUS_M`
[3]_; a step's length sqrt(de² + dn²) is its haversine great-circle length
[2]_ to within a relative (step/R)². East and north are linearly interpolated
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
``max_gap_s`` to interpolate straight across it, or split the file. A step
between successive points faster than :data:`MAX_USER_SPEED_KMH` (over at
least 1 s) is refused as a position jump.

Grade comes from the points' elevation as described above, along the
distance of the speed trace (zero when the track has no elevation).

Statistics
----------
:func:`profile_statistics` gives duration, distance, mean speed (distance /
duration), top speed, idle share, mean moving speed, positive kinetic energy
(PKE) [4]_ and the largest acceleration and deceleration. A time step counts
as idle when the speed at both its ends is at most :data:`IDLE_SPEED_MS`
(0.01 m/s = 0.036 km/h); every other step is moving. The threshold is below
the smallest step of the bundled tables (0.1 km/h = 0.028 m/s), so on them
idle means standing still at exactly 0; pass a higher ``idle_speed_ms`` for
noisy logged data.

References
----------
.. [1] A. Savitzky and M. J. E. Golay, "Smoothing and Differentiation of Data
   by Simplified Least Squares Procedures", Analytical Chemistry 36(8),
   1627-1639, 1964.
.. [2] R. W. Sinnott, "Virtues of the Haversine", Sky and Telescope 68(2),
   159, 1984.
.. [3] H. Moritz, "Geodetic Reference System 1980", Journal of Geodesy 74,
   128-133, 2000 (mean Earth radius R1 = 6 371 008.7714 m).
.. [4] E. Ericsson, "Independent driving pattern factors and their influence
   on fuel-use and exhaust emission factors", Transportation Research Part D
   6(5), 325-345, 2001 (PKE as a driving-pattern factor; from memory).
"""

from __future__ import annotations

import csv
import difflib
import functools
import io
import math
import os
import re
from dataclasses import dataclass
from datetime import timezone
from importlib import resources
from pathlib import Path
from typing import Iterable

import numpy as np

from .errors import InputError
from .units import kmh_to_ms, mph_to_ms

__all__ = [
    "EARTH_RADIUS_M", "IDLE_SPEED_MS", "GRADE_WINDOW_M", "MAX_GRADE_FRACTION",
    "SPEED_WINDOW_S", "STOP_SPEED_MS", "PAUSE_RADIUS_M", "MAX_REPEAT", "MAX_USER_SPEED_KMH",
    "MAX_USER_ACCEL_MS2", "BUNDLED_STEP_S",
    "Phase", "Profile", "CycleInfo", "ProfileStats",
    "list_cycles", "cycle_info", "load_cycle", "read_speed_csv", "read_gpx",
    "constant_speed", "resample", "repeat", "concatenate", "profile_statistics",
    "resolve_profile", "haversine_distance_m",
]

#: mean Earth radius [m] (IUGG R1 of GRS 80, Moritz 2000, rounded to 0.1 m)
EARTH_RADIUS_M = 6_371_008.8
#: a time step is idle when the speed at both its ends is at most this [m/s]
IDLE_SPEED_MS = 0.01
#: default window for grade from elevation [m]
GRADE_WINDOW_M = 100.0
#: default limit on |grade| computed from elevation [-] (common practice)
MAX_GRADE_FRACTION = 0.30
#: default window for GPS speed smoothing [s]
SPEED_WINDOW_S = 11.0
#: default largest displacement across a long time gap in a GPS track for the gap to
#: count as standing still [m] (a car park; a design choice)
PAUSE_RADIUS_M = 50.0
#: default speed below which a GPS track counts as standing still [m/s]
STOP_SPEED_MS = 0.5
#: largest repetition count accepted by :func:`repeat` and ``A*n``
MAX_REPEAT = 1000
#: highest speed accepted from a user's speed file, GPS track or steady:<speed> [km/h]:
#: above the top speed of any road vehicle (common practice: the fastest road cars
#: reach about 490 km/h, from memory)
MAX_USER_SPEED_KMH = 500.0
#: largest |acceleration| accepted in a user's trace on its final time grid [m/s²]:
#: about 10 g, twice what tyres give the fastest-braking race cars (about 5 g, from
#: memory); only a logging glitch or a unit mistake gets there
MAX_USER_ACCEL_MS2 = 100.0
#: time step of every bundled cycle [s]: the regulations define them second by second
BUNDLED_STEP_S = 1.0

_PACKAGE = "tractive.drive_cycles"
_SPEED_UNITS = {"kmh": kmh_to_ms, "mph": mph_to_ms, "ms": lambda v: np.asarray(v, float)}
_SPEED_COLUMNS = {f"speed_{u}": u for u in _SPEED_UNITS}
_UNITLESS_SPEED = ("speed", "velocity", "v", "vel", "spd")
_STEP_RTOL = 1e-6


# ---------------------------------------------------------------------------
# data classes
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Phase:
    """A named part of a profile, from ``start_s`` to ``end_s`` [s] (both samples included)."""

    name: str
    start_s: float
    end_s: float

    @property
    def duration_s(self) -> float:
        """Phase duration [s]."""
        return self.end_s - self.start_s

    def to_dict(self) -> dict:
        return {"name": self.name, "start_s": float(self.start_s), "end_s": float(self.end_s)}


def _frozen(values, what: str, n: int | None = None) -> np.ndarray:
    arr = np.array(values, dtype=float)  # always a copy
    if n is not None and arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.ndim != 1:
        raise InputError(f"must be a one-dimensional array, got shape {arr.shape}", field=what)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True, eq=False)
class Profile:
    """A speed trace on a uniform time grid starting at 0 s.

    Parameters
    ----------
    name : str
        Short name (``udds``, ``wltc3b:low``, ``commute.csv``).
    time_s : (T,) array
        Sample times [s]: 0, dt, 2 dt, ... (T >= 2).
    speed_ms : (T,) array
        Speed [m/s], finite and >= 0.
    grade_fraction : (T,) array or float
        Road grade [rise/run] at each sample (0.05 = 5 % uphill); a number is
        used for every sample.
    phases : tuple of Phase
        Named parts, within the profile's time span.
    source : str
        Where the profile came from, in words.

    Notes
    -----
    The arrays are copied and made read-only. Profiles compare by identity.
    """

    name: str
    time_s: np.ndarray
    speed_ms: np.ndarray
    grade_fraction: np.ndarray
    phases: tuple = ()
    source: str = ""

    def __post_init__(self):
        where = f"profile '{self.name}'"
        t = _frozen(self.time_s, "time_s")
        v = _frozen(self.speed_ms, "speed_ms")
        g = _frozen(self.grade_fraction, "grade_fraction", n=len(v))
        if not (len(t) == len(v) == len(g)):
            raise InputError(f"{where}: time_s, speed_ms and grade_fraction must have the same "
                             f"length, got {len(t)}, {len(v)}, {len(g)}")
        if len(t) < 2:
            raise InputError(f"{where}: needs at least 2 samples, got {len(t)}", field="time_s")
        for arr, what in ((t, "time_s"), (v, "speed_ms"), (g, "grade_fraction")):
            if not np.all(np.isfinite(arr)):
                raise InputError(f"{where}: values must be finite", field=what)
        if t[0] != 0.0:
            raise InputError(f"{where}: must start at 0 s, starts at {t[0]:g} s", field="time_s")
        steps = np.diff(t)
        dt = steps[0]
        if dt <= 0 or np.any(np.abs(steps - dt) > _STEP_RTOL * dt):
            raise InputError(f"{where}: time steps must be equal and positive", field="time_s")
        if np.any(v < 0):
            raise InputError(f"{where}: speed must not be negative (min {v.min():g} m/s)",
                             field="speed_ms")
        phases = tuple(self.phases)
        end = t[-1] * (1 + _STEP_RTOL)
        for ph in phases:
            if not isinstance(ph, Phase):
                raise InputError(f"{where}: phases must be Phase objects", field="phases")
            if not (0 <= ph.start_s < ph.end_s <= end):
                raise InputError(f"{where}: phase '{ph.name}' ({ph.start_s:g}-{ph.end_s:g} s) "
                                 f"is outside 0-{t[-1]:g} s", field="phases")
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "speed_ms", v)
        object.__setattr__(self, "grade_fraction", g)
        object.__setattr__(self, "phases", phases)

    @property
    def dt_s(self) -> float:
        """Time step [s]."""
        return float(self.time_s[1] - self.time_s[0])

    @property
    def duration_s(self) -> float:
        """Duration [s] = last sample time."""
        return float(self.time_s[-1])

    @property
    def distance_m(self) -> float:
        """Distance [m]: sum over steps of the mean of the two end speeds times dt (trapezoid)."""
        v = self.speed_ms
        return float(np.sum(0.5 * (v[1:] + v[:-1])) * self.dt_s)

    @property
    def speed_kmh(self) -> np.ndarray:
        """Speed [km/h] (a new array)."""
        return self.speed_ms * 3.6

    def __len__(self) -> int:
        return len(self.time_s)

    def to_dict(self) -> dict:
        """The whole trace as JSON-ready data."""
        return {"name": self.name, "source": self.source, "dt_s": self.dt_s,
                "duration_s": self.duration_s, "distance_m": self.distance_m,
                "phases": [p.to_dict() for p in self.phases],
                "time_s": self.time_s.tolist(), "speed_ms": self.speed_ms.tolist(),
                "grade_fraction": self.grade_fraction.tolist()}


def _plain(obj):
    """YAML data (with line-tracking containers) as plain dicts, lists and scalars."""
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [_plain(v) for v in obj]
    return obj


@dataclass(frozen=True)
class CycleInfo:
    """What the bundle says about one drive cycle.

    Attributes
    ----------
    name : str
        Name to load it by (``udds``).
    title : str
        Full title.
    body : str
        Issuing body.
    document : str
        Regulation that defines it.
    file : str
        Table file inside the bundle.
    speed_unit : str
        Unit of the table's speed column: ``mph`` or ``kmh``.
    phases : tuple of Phase
        Named phases (may be empty).
    published : dict
        The regulator's published figures (``duration_s``, ``distance_mi`` or
        ``distance_km``, ``max_speed_mph`` or ``max_speed_kmh``, ...), and a
        ``basis`` text saying how firm they are.
    notes : str
        Remarks on the cycle and its table.
    sha256 : str
        Fingerprint of the table file as bundled.
    """

    name: str
    title: str
    body: str
    document: str
    file: str
    speed_unit: str
    phases: tuple
    published: dict
    notes: str = ""
    sha256: str = ""

    def to_dict(self) -> dict:
        return {"name": self.name, "title": self.title, "body": self.body,
                "document": self.document, "file": self.file, "speed_unit": self.speed_unit,
                "phases": [p.to_dict() for p in self.phases],
                "published": _plain(self.published), "notes": self.notes,
                "sha256": self.sha256}


@dataclass(frozen=True)
class ProfileStats:
    """Summary statistics of a profile (see :func:`profile_statistics`).

    Attributes
    ----------
    duration_s : float
        Duration [s].
    distance_km : float
        Distance [km] (trapezoid).
    mean_speed_kmh : float
        Distance / duration [km/h].
    max_speed_kmh : float
        Top speed [km/h].
    mean_moving_speed_kmh : float
        Distance covered in moving steps / time of moving steps [km/h]
        (0 when nothing moves).
    idle_share : float
        Fraction of the duration in idle steps [-]: steps with the speed at
        both ends at most the idle threshold.
    positive_kinetic_energy_m_per_s2 : float
        PKE [m/s²] = sum over steps of max(v_i² - v_(i-1)², 0) / distance
        (0 when the distance is 0).
    max_accel_ms2 : float
        Largest step acceleration [m/s²] (0 if the speed never rises).
    max_decel_ms2 : float
        Largest step deceleration as a positive number [m/s²] (0 if the
        speed never falls).
    name : str
        Profile name.
    """

    duration_s: float
    distance_km: float
    mean_speed_kmh: float
    max_speed_kmh: float
    mean_moving_speed_kmh: float
    idle_share: float
    positive_kinetic_energy_m_per_s2: float
    max_accel_ms2: float
    max_decel_ms2: float
    name: str = ""

    def to_dict(self) -> dict:
        return {"name": self.name, "duration_s": self.duration_s,
                "distance_km": self.distance_km, "mean_speed_kmh": self.mean_speed_kmh,
                "max_speed_kmh": self.max_speed_kmh,
                "mean_moving_speed_kmh": self.mean_moving_speed_kmh,
                "idle_share": self.idle_share,
                "positive_kinetic_energy_m_per_s2": self.positive_kinetic_energy_m_per_s2,
                "max_accel_ms2": self.max_accel_ms2, "max_decel_ms2": self.max_decel_ms2}


# ---------------------------------------------------------------------------
# checks shared by the readers
# ---------------------------------------------------------------------------

def _positive(value, what: str) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"must be a number, got {value!r}", field=what) from None
    if not math.isfinite(x) or x <= 0:
        raise InputError(f"must be a positive finite number, got {value!r}", field=what)
    return x


def _uniform_grid(span_s: float, dt_s: float) -> np.ndarray:
    """0, dt, 2 dt, ... up to the last point not after ``span_s`` (within rounding)."""
    n = int(math.floor(span_s / dt_s + 1e-9)) + 1
    return np.arange(n) * dt_s


def _first_implausible_step(speed_ms: np.ndarray, dt_s: float):
    """Index k of the first step k → k+1 whose |acceleration| exceeds
    :data:`MAX_USER_ACCEL_MS2`, with that acceleration [m/s²]; None when there is none."""
    accel = np.diff(speed_ms) / dt_s
    bad = np.flatnonzero(np.abs(accel) > MAX_USER_ACCEL_MS2)
    if not bad.size:
        return None
    return int(bad[0]), float(accel[bad[0]])


def _accel_message(speed_ms, k: int, accel: float, dt_s: float, t_s: float) -> str:
    dv_kmh = (speed_ms[k + 1] - speed_ms[k]) * 3.6
    return (f"speed changes by {dv_kmh:+.1f} km/h within {dt_s:g} s near {t_s:g} s "
            f"({accel:+.0f} m/s², about {abs(accel) / 9.80665:.0f} g), more than the "
            f"{MAX_USER_ACCEL_MS2:g} m/s² any road vehicle can reach; a logging glitch or a "
            "unit mistake? check the rows near here")


# ---------------------------------------------------------------------------
# bundled cycles
# ---------------------------------------------------------------------------

@functools.lru_cache(maxsize=None)
def _index() -> tuple:
    from .spec import load_section

    with resources.as_file(resources.files(_PACKAGE) / "index.yaml") as path:
        top = load_section(path)
        out = []
        for sec in top.sections("cycles"):
            phases = tuple(Phase(p.string("name"), p.number("start_s", min=0.0, unit="s"),
                                 p.number("end_s", min=0.0, unit="s"))
                           for p in (sec.sections("phases", required=False) or []))
            published = _plain(sec.raw("published", {}))
            info = CycleInfo(
                name=sec.string("name"), title=sec.string("title"), body=sec.string("body"),
                document=sec.string("document"), file=sec.string("file"),
                speed_unit=sec.string("speed_unit", choices=("mph", "kmh")),
                phases=phases, published=published,
                notes=" ".join(sec.string("notes", default="").split()),
                sha256=sec.string("sha256", default=""))
            sec.finish()
            out.append(info)
        top.finish()
    return tuple(out)


def list_cycles() -> list[CycleInfo]:
    """The bundled drive cycles, in the order of the bundle's index."""
    return list(_index())


def _cycle_names() -> list[str]:
    return [c.name for c in _index()]


def _unknown_cycle(name: str, extra: str = "") -> InputError:
    names = _cycle_names()
    hint = difflib.get_close_matches(name.lower(), names, n=1, cutoff=0.5)
    did = f"did you mean '{hint[0]}'? " if hint else ""
    return InputError(f"unknown drive cycle '{name}'; {did}bundled cycles: {', '.join(names)}"
                      f"{extra}")


def cycle_info(name: str) -> CycleInfo:
    """The :class:`CycleInfo` of a bundled cycle (name case-insensitive)."""
    key = str(name).strip().lower()
    for info in _index():
        if info.name == key:
            return info
    raise _unknown_cycle(str(name).strip())


@functools.lru_cache(maxsize=None)
def _bundled_profile(name: str) -> Profile:
    info = cycle_info(name)
    where = f"{_PACKAGE}/{info.file}"
    text = (resources.files(_PACKAGE) / info.file).read_text(encoding="utf-8")
    header = [h.strip() for h in text.split("\n", 1)[0].split(",")]
    if header != ["time_s", f"speed_{info.speed_unit}"]:
        raise InputError(f"header must be time_s,speed_{info.speed_unit}", file=where, line=1)
    data = np.loadtxt(io.StringIO(text), delimiter=",", skiprows=1, ndmin=2)
    t, v = data[:, 0], data[:, 1]
    if not np.array_equal(t, np.arange(len(t), dtype=float)):
        raise InputError("time_s must be 0, 1, 2, ... s", file=where, field="time_s")
    speed_ms = _SPEED_UNITS[info.speed_unit](v)
    return Profile(info.name, t, speed_ms, np.zeros_like(t), info.phases,
                   f"{info.title}; {info.document}; {info.body}")


def load_cycle(name: str) -> Profile:
    """A bundled drive cycle, or one of its phases on its own.

    Parameters
    ----------
    name : str
        ``wltc3b`` for the whole cycle, ``wltc3b:low`` for one phase (time
        restarting at 0 s, samples from the phase start to the phase end
        inclusive). Cycle and phase names are case-insensitive.

    Returns
    -------
    Profile
        1 s time step, level road, speed converted exactly to m/s from the
        table's unit.

    Raises
    ------
    InputError
        Unknown cycle (listing the bundled ones) or unknown phase (listing
        the cycle's phases).
    """
    text = str(name).strip()
    cycle, sep, phase_name = text.partition(":")
    prof = _bundled_profile(cycle_info(cycle).name)
    if not sep:
        return prof
    info = cycle_info(cycle)
    wanted = phase_name.strip().lower()
    match = [p for p in info.phases if p.name.lower() == wanted]
    if not match:
        listing = ", ".join(p.name for p in info.phases) or "none"
        hint = difflib.get_close_matches(wanted, [p.name for p in info.phases], n=1, cutoff=0.5)
        did = f"did you mean '{hint[0]}'? " if hint else ""
        raise InputError(f"unknown phase '{phase_name.strip()}' of drive cycle '{info.name}'; "
                         f"{did}its phases: {listing}")
    return _bundled_phase(info.name, match[0].name)


@functools.lru_cache(maxsize=None)
def _bundled_phase(cycle: str, phase: str) -> Profile:
    info = cycle_info(cycle)
    prof = _bundled_profile(cycle)
    ph = next(p for p in info.phases if p.name == phase)
    i0, i1 = int(round(ph.start_s / prof.dt_s)), int(round(ph.end_s / prof.dt_s))
    n = i1 - i0 + 1
    return Profile(f"{info.name}:{ph.name}", np.arange(n) * prof.dt_s,
                   prof.speed_ms[i0:i1 + 1], prof.grade_fraction[i0:i1 + 1], (),
                   f"{info.title}, phase {ph.name} ({ph.start_s:g}-{ph.end_s:g} s); "
                   f"{info.document}; {info.body}")


# ---------------------------------------------------------------------------
# grade from elevation, haversine, smoothing
# ---------------------------------------------------------------------------

def haversine_distance_m(lat1_deg, lon1_deg, lat2_deg, lon2_deg, radius_m=EARTH_RADIUS_M):
    """Great-circle distance on a sphere by the haversine formula (vectorized).

    Parameters
    ----------
    lat1_deg, lon1_deg, lat2_deg, lon2_deg : float or array
        Latitude and longitude of the two points [degrees].
    radius_m : float
        Sphere radius [m] (default :data:`EARTH_RADIUS_M`).

    Returns
    -------
    array
        Distance [m].

    References
    ----------
    .. [1] R. W. Sinnott, "Virtues of the Haversine", Sky and Telescope
       68(2), 159, 1984.
    """
    p1, l1, p2, l2 = (np.radians(np.asarray(x, float)) for x in
                      (lat1_deg, lon1_deg, lat2_deg, lon2_deg))
    a = np.sin((p2 - p1) / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin((l2 - l1) / 2) ** 2
    return 2.0 * radius_m * np.arcsin(np.sqrt(np.clip(a, 0.0, 1.0)))


def _grade_from_elevation(distance_m: np.ndarray, elevation_m: np.ndarray, window_m: float,
                          max_grade: float) -> np.ndarray:
    """Grade [-] per sample from elevation [m] over cumulative distance [m].

    Least-squares slope of elevation over a centred ``window_m`` of distance
    (Savitzky-Golay, order 1, first derivative); see the module docstring.
    """
    from scipy.signal import savgol_filter

    s = np.asarray(distance_m, float)
    z = np.asarray(elevation_m, float)
    total = float(s[-1] - s[0])
    if not total > 0:
        return np.zeros_like(s)
    s = s - s[0]
    # one elevation per distinct distance: samples while stopped are averaged
    s_u, inverse = np.unique(s, return_inverse=True)
    z_u = np.bincount(inverse, weights=z) / np.bincount(inverse)
    n_grid = int(math.ceil(total / (window_m / 100.0))) + 1
    grid = np.linspace(0.0, total, n_grid)
    step = grid[1] - grid[0]
    z_grid = np.interp(grid, s_u, z_u)
    w = 2 * int(round(window_m / step / 2.0)) + 1
    w = min(w, n_grid if n_grid % 2 else n_grid - 1)
    if w >= 3:
        slope = savgol_filter(z_grid, w, 1, deriv=1, delta=step, mode="interp")
    else:
        slope = np.full(n_grid, (z_grid[-1] - z_grid[0]) / total)
    return np.clip(np.interp(s, grid, slope), -max_grade, max_grade)


def _window_samples(window_s: float, dt_s: float, n: int) -> int:
    """Odd number of samples nearest to ``window_s / dt_s``, at least 3, at most ``n``."""
    w = 2 * int(math.floor((window_s / dt_s - 1.0) / 2.0 + 0.5)) + 1
    w = max(w, 3)
    return min(w, n if n % 2 else n - 1)


def _smoothed_velocity(values: np.ndarray, dt_s: float, window_s: float) -> np.ndarray:
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


def _local_east_north_m(lat_deg: np.ndarray, lon_deg: np.ndarray,
                        radius_m: float) -> tuple[np.ndarray, np.ndarray]:
    """East and north [m] of each point from the first one, on the sphere of ``radius_m``.

    North is R (phi - phi_0). East is the sum over the steps between
    successive points of R cos(phi_mid) (lambda_i - lambda_(i-1)), the
    east-west part of each step on the plane tangent at its middle latitude
    (longitude steps are taken across the antimeridian the short way). Each
    step's length sqrt(de² + dn²) is its great-circle length to within a
    relative (step/R)², so steps of seconds are exact to far below a
    millimetre; over a long track the east-north map drifts from any map
    projection, which does not matter because only the steps are used.
    """
    phi = np.radians(np.asarray(lat_deg, float))
    lam = np.radians(np.asarray(lon_deg, float))
    dlam = (np.diff(lam) + math.pi) % (2.0 * math.pi) - math.pi
    mid = 0.5 * (phi[1:] + phi[:-1])
    east = np.concatenate([[0.0], np.cumsum(radius_m * np.cos(mid) * dlam)])
    north = radius_m * (phi - phi[0])
    return east, north


# ---------------------------------------------------------------------------
# user CSV
# ---------------------------------------------------------------------------

def _read_text(path: Path, kind: str) -> str:
    try:
        return path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError("file not found", file=str(path)) from None
    except IsADirectoryError:
        raise InputError(f"is a directory, expected a {kind} file", file=str(path)) from None
    except UnicodeDecodeError:
        raise InputError(f"cannot read file: not UTF-8 text, expected a {kind} file",
                         file=str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc.__class__.__name__})",
                         file=str(path)) from None


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
    dt_s = _positive(dt_s, "dt_s")
    max_gap_s = _positive(max_gap_s, "max_gap_s")
    grade_window_m = _positive(grade_window_m, "grade_window_m")
    max_grade_fraction = _positive(max_grade_fraction, "max_grade_fraction")
    text = _read_text(path, "CSV")

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
    v_raw_ms = _SPEED_UNITS[_SPEED_COLUMNS[speed_col]](v_raw)
    fast = np.flatnonzero(v_raw_ms * 3.6 > MAX_USER_SPEED_KMH * (1 + 1e-12))
    if fast.size:
        raise InputError(f"speed {v_raw[fast[0]]:g} is {v_raw_ms[fast[0]] * 3.6:.0f} km/h, "
                         f"above the {MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds; "
                         "check the value and the column's unit", file=file,
                         field=speed_col, line=lines[fast[0]])
    grid = _uniform_grid(span, dt_s)
    speed_ms = np.interp(grid, rel, v_raw_ms)
    jump = _first_implausible_step(speed_ms, dt_s)
    if jump is not None:
        k, accel = jump
        row = min(int(np.searchsorted(rel, grid[k + 1] - 1e-9 * dt_s)), len(rel) - 1)
        raise InputError(_accel_message(speed_ms, k, accel, dt_s, float(t[0] + grid[k + 1])),
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
        grade = _grade_from_elevation(s, z, grade_window_m, max_grade_fraction)
    else:
        grade = np.zeros_like(grid)
    return Profile(name if name is not None else path.name, grid, speed_ms, grade, (),
                   f"speed file {file}")


# ---------------------------------------------------------------------------
# GPX
# ---------------------------------------------------------------------------

def _tag_lines(text: str, tag: str) -> list[int]:
    """1-based line of each opening ``<tag`` (any namespace prefix), in file order."""
    starts = [m.start() for m in re.finditer(rf"<(?:[A-Za-z_][\w.-]*:)?{tag}[\s/>]", text)]
    newlines = np.array([m.start() for m in re.finditer("\n", text)], dtype=np.int64)
    return (np.searchsorted(newlines, np.array(starts, dtype=np.int64)) + 1).tolist()


def _point_speed_ms(point) -> float | None:
    """The speed a GPS point states [m/s]: GPX 1.0 ``<speed>`` or a ``speed`` element
    (any namespace, at any depth) in its ``<extensions>``; None when it states none."""
    speed = getattr(point, "speed", None)
    if speed is not None:
        return float(speed)
    stack = list(getattr(point, "extensions", None) or [])
    while stack:
        el = stack.pop(0)
        tag = str(getattr(el, "tag", ""))
        if tag.rsplit("}", 1)[-1].lower() == "speed" and (el.text or "").strip():
            try:
                return float(el.text)
            except ValueError:
                return math.nan
        stack.extend(list(el))
    return None


def read_gpx(path, dt_s: float = 1.0, *, speed_window_s: float = SPEED_WINDOW_S,
             stop_speed_ms: float = STOP_SPEED_MS, max_gap_s: float = 60.0,
             pause_radius_m: float = PAUSE_RADIUS_M, use_point_speed: bool = True,
             use_elevation: bool = True, grade_window_m: float = GRADE_WINDOW_M,
             max_grade_fraction: float = MAX_GRADE_FRACTION,
             radius_m: float = EARTH_RADIUS_M, name: str | None = None) -> Profile:
    """Read a GPS track (GPX) as a speed profile (method in the module docstring).

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
    radius_m : float
        Earth radius for distances [m].
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
        position jump faster than :data:`MAX_USER_SPEED_KMH`.

    References
    ----------
    .. [1] A. Savitzky and M. J. E. Golay, Analytical Chemistry 36(8),
       1627-1639, 1964 (smoothing).
    .. [2] R. W. Sinnott, Sky and Telescope 68(2), 159, 1984 (haversine).
    """
    import gpxpy
    import gpxpy.gpx

    path = Path(path)
    file = str(path)
    dt_s = _positive(dt_s, "dt_s")
    max_gap_s = _positive(max_gap_s, "max_gap_s")
    speed_window_s = _positive(speed_window_s, "speed_window_s")
    grade_window_m = _positive(grade_window_m, "grade_window_m")
    max_grade_fraction = _positive(max_grade_fraction, "max_grade_fraction")
    radius_m = _positive(radius_m, "radius_m")
    for value, what in ((stop_speed_ms, "stop_speed_ms"), (pause_radius_m, "pause_radius_m")):
        if not (math.isfinite(float(value)) and float(value) >= 0):
            raise InputError(f"must be a finite number >= 0, got {value!r}", field=what)
    text = _read_text(path, "GPX")
    try:
        gpx = gpxpy.parse(text)
    except Exception as exc:  # gpxpy raises several types for malformed content
        detail = " ".join(str(exc).split()) or exc.__class__.__name__
        raise InputError(f"not a valid GPX file: {detail}", file=file) from None

    points = [p for trk in gpx.tracks for seg in trk.segments for p in seg.points]
    kind, tag = "track point", "trkpt"
    if not points:
        points = [p for rte in gpx.routes for p in rte.points]
        kind, tag = "route point", "rtept"
    if not points:
        raise InputError("no track points or route points", file=file)
    tag_lines = _tag_lines(text, tag)
    if len(tag_lines) != len(points):
        tag_lines = [None] * len(points)

    def point_error(i, message):
        return InputError(f"{kind} {i + 1}: {message}", file=file, line=tag_lines[i])

    times = []
    for i, p in enumerate(points):
        when = p.time
        if when is None:
            raise point_error(i, "has no time (every point needs a valid <time>)")
        if when.tzinfo is not None:
            when = when.astimezone(timezone.utc).replace(tzinfo=None)
        times.append(when)
    if len(points) < 2:
        raise InputError(f"needs at least 2 {kind}s with time, found 1", file=file)
    t0 = times[0]
    t = np.array([(w - t0).total_seconds() for w in times])
    lat = np.array([p.latitude for p in points], dtype=float)
    lon = np.array([p.longitude for p in points], dtype=float)
    ele = np.array([np.nan if p.elevation is None else p.elevation for p in points], dtype=float)

    steps = np.diff(t)
    back = np.flatnonzero(steps <= 0)
    if back.size:
        i = back[0] + 1
        raise point_error(i, f"time must increase from point to point: {times[i]} follows "
                             f"{times[i - 1]}")
    if t[-1] < dt_s * (1 - 1e-9):
        raise InputError(f"the track spans {t[-1]:g} s, less than one time step "
                         f"dt_s = {dt_s:g} s", file=file)

    step_m = haversine_distance_m(lat[:-1], lon[:-1], lat[1:], lon[1:], radius_m)
    max_ms = MAX_USER_SPEED_KMH / 3.6
    # a step between two points faster than any road vehicle (over at least 1 s, so that
    # the metre-scale noise of loggers that record many times a second does not count)
    leap = np.flatnonzero(step_m > max_ms * np.maximum(steps, 1.0))
    if leap.size:
        i = leap[0] + 1
        raise point_error(i, f"the position moves {step_m[i - 1]:.0f} m within "
                             f"{steps[i - 1]:g} s of the previous point "
                             f"({step_m[i - 1] / steps[i - 1] * 3.6:.0f} km/h), above the "
                             f"{MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds; a position "
                             "jump? check the coordinates of this point")
    long_gap = np.flatnonzero(steps > max_gap_s)
    moved = long_gap[step_m[long_gap] > pause_radius_m]
    if moved.size:
        i = moved[0] + 1
        raise point_error(i, f"time gap of {steps[i - 1]:g} s before this point is longer than "
                             f"max_gap_s = {max_gap_s:g} s, and the position moved "
                             f"{step_m[i - 1]:.0f} m across it (more than pause_radius_m = "
                             f"{pause_radius_m:g} m, so not a pause): the speed in between "
                             "is unknown; split the track here, or pass a larger max_gap_s "
                             "to read_gpx to interpolate straight across the gap")

    stated = None
    if use_point_speed:
        stated = [_point_speed_ms(p) for p in points]
        if any(v is None for v in stated):
            stated = None
        else:
            stated = np.array(stated, dtype=float)
            bad = np.flatnonzero(~np.isfinite(stated) | (stated < 0))
            if bad.size:
                raise point_error(int(bad[0]), "its <speed> must be a finite number >= 0 "
                                               "[m/s]")

    # a pause holds the position: the small move across it is taken out (the points after
    # it shift by that offset), so the vehicle stands where it stopped for the whole gap
    grid = _uniform_grid(t[-1], dt_s)
    paused = np.zeros_like(grid, dtype=bool)
    for i in long_gap:
        paused |= (grid > t[i]) & (grid < t[i + 1])
    if stated is not None:
        speed = np.interp(grid, t, stated)
        speed[paused] = 0.0
    else:
        east, north = _local_east_north_m(lat, lon, radius_m)
        d_east, d_north = np.diff(east), np.diff(north)
        d_east[long_gap] = 0.0
        d_north[long_gap] = 0.0
        east = np.concatenate([[0.0], np.cumsum(d_east)])
        north = np.concatenate([[0.0], np.cumsum(d_north)])
        vx = _smoothed_velocity(np.interp(grid, t, east), dt_s, speed_window_s)
        vy = _smoothed_velocity(np.interp(grid, t, north), dt_s, speed_window_s)
        speed = np.hypot(vx, vy)
    speed[speed < stop_speed_ms] = 0.0

    def nearest_point(time_s):
        return int(np.clip(np.searchsorted(t, time_s), 0, len(t) - 1))

    what = "the speed the points state" if stated is not None else "the speed from the positions"
    fast = np.flatnonzero(speed * 3.6 > MAX_USER_SPEED_KMH)
    if fast.size:
        j = fast[0]
        raise point_error(nearest_point(grid[j]),
                          f"{what} reaches {speed[j] * 3.6:.0f} km/h "
                          f"near {grid[j]:g} s, above the {MAX_USER_SPEED_KMH:g} km/h no road "
                          "vehicle exceeds; a position jump? check the coordinates near "
                          "this point")
    jump = _first_implausible_step(speed, dt_s)
    if jump is not None:
        k, accel = jump
        raise point_error(nearest_point(grid[k + 1]),
                          _accel_message(speed, k, accel, dt_s, float(grid[k + 1]))
                          .replace("check the rows", "check the points"))

    has_ele = np.isfinite(ele)
    if use_elevation and np.count_nonzero(has_ele) >= 2:
        s = np.concatenate([[0.0], np.cumsum(0.5 * (speed[1:] + speed[:-1]) * dt_s)])
        z = np.interp(grid, t[has_ele], ele[has_ele])
        grade = _grade_from_elevation(s, z, grade_window_m, max_grade_fraction)
    else:
        grade = np.zeros_like(grid)
    return Profile(name if name is not None else path.name, grid, speed, grade, (),
                   f"GPS track {file}")


# ---------------------------------------------------------------------------
# building and combining
# ---------------------------------------------------------------------------

def constant_speed(speed_ms: float, duration_s: float = 3600.0, dt_s: float = 1.0,
                   grade_fraction: float = 0.0, name: str | None = None) -> Profile:
    """A constant speed from t = 0 (no run-up).

    Parameters
    ----------
    speed_ms : float
        Speed [m/s], >= 0.
    duration_s : float
        Duration [s], a whole number of time steps.
    dt_s : float
        Time step [s].
    grade_fraction : float
        Grade [rise/run].
    name : str, optional
        Default ``steady:<speed>ms``.
    """
    dt_s = _positive(dt_s, "dt_s")
    duration_s = _positive(duration_s, "duration_s")
    try:
        v = float(speed_ms)
        g = float(grade_fraction)
    except (TypeError, ValueError):
        raise InputError(f"speed and grade must be numbers, got {speed_ms!r}, "
                         f"{grade_fraction!r}") from None
    if not math.isfinite(v) or v < 0:
        raise InputError(f"must be a finite number >= 0, got {speed_ms!r}", field="speed_ms")
    if not math.isfinite(g):
        raise InputError(f"must be finite, got {grade_fraction!r}", field="grade_fraction")
    steps = duration_s / dt_s
    n = int(round(steps))
    if abs(steps - n) > 1e-9 * max(1.0, steps):
        raise InputError(f"duration {duration_s:g} s is not a whole number of time steps of "
                         f"{dt_s:g} s", field="duration_s")
    t = np.arange(n + 1) * dt_s
    label = name if name is not None else f"steady:{v:g}ms"
    return Profile(label, t, np.full(n + 1, v), np.full(n + 1, g), (),
                   f"constant speed {v:g} m/s ({v * 3.6:g} km/h) for {duration_s:g} s"
                   + (f" on a {g * 100:g} % grade" if g else ""))


def resample(profile: Profile, dt_s: float) -> Profile:
    """The profile on another time step, by linear interpolation of speed and grade.

    The new grid runs from 0 to the last point not after the profile's end;
    each new sample is the interpolated value at its time (no averaging), so
    a coarser step can miss short peaks. Phases keep their times (cut at the
    new end). Returns the same profile when the step is already ``dt_s``.
    """
    dt_s = _positive(dt_s, "dt_s")
    if abs(profile.dt_s - dt_s) <= 1e-12 * dt_s:
        return profile
    grid = _uniform_grid(profile.duration_s, dt_s)
    if len(grid) < 2:
        raise InputError(f"profile '{profile.name}' lasts {profile.duration_s:g} s, less than "
                         f"one time step dt_s = {dt_s:g} s", field="dt_s")
    end = grid[-1]
    phases = tuple(Phase(p.name, p.start_s, min(p.end_s, end)) for p in profile.phases
                   if p.start_s < end)
    return Profile(profile.name, grid, np.interp(grid, profile.time_s, profile.speed_ms),
                   np.interp(grid, profile.time_s, profile.grade_fraction), phases,
                   profile.source)


def _unique_names(names: list[str]) -> list[str]:
    counts: dict = {}
    for n in names:
        counts[n] = counts.get(n, 0) + 1
    seen: dict = {}
    out = []
    for n in names:
        if counts[n] > 1:
            seen[n] = seen.get(n, 0) + 1
            out.append(f"{n}#{seen[n]}")
        else:
            out.append(n)
    return out


def concatenate(profiles: Iterable[Profile], name: str | None = None) -> Profile:
    """Profiles one after the other.

    A part that starts with exactly the speed and grade at which the
    previous part ends shares that sample with it; otherwise it starts one
    time step later. Phases: with more than one part, a part with phases
    contributes them as ``<part>:<phase>``, a part without phases one phase
    named after the part; repeated names get ``#1``, ``#2``, ...

    Parameters
    ----------
    profiles : iterable of Profile
        All with the same time step (use :func:`resample` first).
    name : str, optional
        Default: the part names joined by ``+``.
    """
    parts = list(profiles)
    if not parts:
        raise InputError("nothing to join: no profiles given")
    for p in parts:
        if not isinstance(p, Profile):
            raise InputError(f"can only join Profile objects, got {type(p).__name__}")
    label = name if name is not None else "+".join(p.name for p in parts)
    if len(parts) == 1:
        p = parts[0]
        return p if label == p.name else Profile(label, p.time_s, p.speed_ms,
                                                 p.grade_fraction, p.phases, p.source)
    dt = parts[0].dt_s
    for p in parts[1:]:
        if abs(p.dt_s - dt) > 1e-9 * dt:
            raise InputError(f"cannot join profiles with different time steps: "
                             f"'{parts[0].name}' has {dt:g} s, '{p.name}' has {p.dt_s:g} s; "
                             f"resample first")
    speeds, grades, starts = [parts[0].speed_ms], [parts[0].grade_fraction], [0]
    end_index = len(parts[0]) - 1
    for p in parts[1:]:
        if p.speed_ms[0] == speeds[-1][-1] and p.grade_fraction[0] == grades[-1][-1]:
            speeds.append(p.speed_ms[1:])
            grades.append(p.grade_fraction[1:])
            start = end_index
        else:
            speeds.append(p.speed_ms)
            grades.append(p.grade_fraction)
            start = end_index + 1
        starts.append(start)
        end_index = start + len(p) - 1
    labels, bounds = [], []
    for p, start in zip(parts, starts):
        off = start * dt
        if p.phases:
            for ph in p.phases:
                labels.append(f"{p.name}:{ph.name}")
                bounds.append((ph.start_s + off, ph.end_s + off))
        else:
            labels.append(p.name)
            bounds.append((off, off + p.duration_s))
    phases = tuple(Phase(n, a, b) for n, (a, b) in zip(_unique_names(labels), bounds))
    sources = list(dict.fromkeys(p.source for p in parts if p.source))
    speed = np.concatenate(speeds)
    return Profile(label, np.arange(len(speed)) * dt, speed, np.concatenate(grades), phases,
                   " + ".join(sources))


def repeat(profile: Profile, n: int) -> Profile:
    """The profile ``n`` times in a row (see :func:`concatenate` for the joins).

    Parameters
    ----------
    profile : Profile
        The profile to repeat.
    n : int
        Count, 1 to :data:`MAX_REPEAT`.
    """
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
        raise InputError(f"repeat count must be a whole number, got {n!r}")
    if not 1 <= n <= MAX_REPEAT:
        raise InputError(f"repeat count must be between 1 and {MAX_REPEAT}, got {n}")
    if n == 1:
        return profile
    return concatenate([profile] * int(n), name=f"{profile.name}*{int(n)}")


# ---------------------------------------------------------------------------
# statistics
# ---------------------------------------------------------------------------

def profile_statistics(profile: Profile, idle_speed_ms: float = IDLE_SPEED_MS) -> ProfileStats:
    """Duration, distance, speeds, idle share, PKE and extreme accelerations.

    Parameters
    ----------
    profile : Profile
        The trace.
    idle_speed_ms : float
        A step is idle when the speed at both its ends is at most this [m/s].

    Returns
    -------
    ProfileStats
        See its attributes for the definitions.

    References
    ----------
    .. [1] E. Ericsson, Transportation Research Part D 6(5), 325-345, 2001
       (positive kinetic energy as a driving-pattern factor; from memory).
    """
    v = profile.speed_ms
    dt = profile.dt_s
    duration = profile.duration_s
    step_m = 0.5 * (v[1:] + v[:-1]) * dt
    distance = float(np.sum(step_m))
    idle = (v[:-1] <= idle_speed_ms) & (v[1:] <= idle_speed_ms)
    moving_time = float(np.count_nonzero(~idle)) * dt
    moving_m = float(np.sum(step_m[~idle]))
    pke = float(np.sum(np.clip(np.diff(v * v), 0.0, None))) / distance if distance > 0 else 0.0
    accel = np.diff(v) / dt
    return ProfileStats(
        duration_s=duration,
        distance_km=distance / 1000.0,
        mean_speed_kmh=distance / duration * 3.6,
        max_speed_kmh=float(v.max()) * 3.6,
        mean_moving_speed_kmh=moving_m / moving_time * 3.6 if moving_time > 0 else 0.0,
        idle_share=float(np.count_nonzero(idle)) * dt / duration,
        positive_kinetic_energy_m_per_s2=pke,
        max_accel_ms2=max(float(accel.max()), 0.0),
        max_decel_ms2=max(float(-accel.min()), 0.0),
        name=profile.name)


# ---------------------------------------------------------------------------
# profile strings
# ---------------------------------------------------------------------------

_STEADY = re.compile(
    r"^steady:\s*(?P<speed>(?:\d+\.?\d*|\.\d+)(?:e[+-]?\d+)?)\s*(?P<unit>kmh|km/h|mph|ms|m/s)"
    r"\s*(?::\s*(?P<dur>(?:\d+\.?\d*|\.\d+))\s*(?P<dunit>s|min|h))?\s*$", re.IGNORECASE)
_DURATION_S = {"s": 1.0, "min": 60.0, "h": 3600.0}


def _tokens(text: str) -> list[tuple[str, str]]:
    """Split a profile string into ('atom', text) / ('quoted', text) / ('+', '') / ('*', '')."""
    out, buf, i = [], [], 0

    def flush():
        if buf:
            out.append(("atom", "".join(buf)))
            buf.clear()

    while i < len(text):
        c = text[i]
        if c in "'\"":
            end = text.find(c, i + 1)
            if end < 0:
                raise InputError(f"unclosed quote in profile '{text}'")
            if "".join(buf).strip():
                raise InputError(f"a quoted path must be a whole term in profile '{text}'")
            buf.clear()
            out.append(("quoted", text[i + 1:end]))
            i = end + 1
            continue
        if c in "+*":
            flush()
            out.append((c, ""))
        else:
            buf.append(c)
        i += 1
    flush()
    return [(k, v) for k, v in out if k != "atom" or v.strip()]


def _resolve_path(text: str, base_dir) -> Path:
    p = Path(os.path.expanduser(text.strip()))
    if not p.is_absolute() and base_dir is not None:
        p = Path(base_dir) / p
    return p


def _resolve_atom(text: str, quoted: bool, base_dir, dt_s: float) -> Profile:
    atom = text if quoted else text.strip()
    low = atom.lower()
    if quoted or low.endswith((".csv", ".gpx")):
        path = _resolve_path(atom, base_dir)
        if low.endswith(".gpx"):
            return read_gpx(path, dt_s=dt_s, name=atom)
        if low.endswith(".csv"):
            return read_speed_csv(path, dt_s=dt_s, name=atom)
        raise InputError(f"'{atom}': a speed file must end in .csv or .gpx")
    if low.startswith("steady:") or low == "steady":
        m = _STEADY.match(atom)
        if not m:
            raise InputError(f"cannot read '{atom}': write steady:<speed><unit>[:<duration>] "
                             f"with unit kmh, mph or ms and duration in s, min or h, "
                             f"e.g. steady:90kmh or steady:55mph:600s")
        unit = m["unit"].lower().replace("/", "")
        speed = float(_SPEED_UNITS[unit](float(m["speed"])))
        if not speed * 3.6 <= MAX_USER_SPEED_KMH * (1 + 1e-12):
            raise InputError(f"'{atom}': {speed * 3.6:.0f} km/h is above the "
                             f"{MAX_USER_SPEED_KMH:g} km/h no road vehicle exceeds")
        duration = 3600.0
        if m["dur"] is not None:
            duration = float(m["dur"]) * _DURATION_S[m["dunit"].lower()]
        try:
            return constant_speed(speed, duration_s=duration, dt_s=dt_s, name=atom)
        except InputError as err:
            field = f"{err.field}: " if err.field else ""
            raise InputError(f"'{atom}': {field}{err.message}") from None
    cycle = atom.partition(":")[0].strip().lower()
    if cycle not in _cycle_names():
        raise _unknown_cycle(atom.partition(":")[0].strip(),
                             "; or give a .csv or .gpx file, or steady:<speed>, "
                             "e.g. steady:90kmh")
    return load_cycle(atom)       # at its native step, whatever dt_s is


def _is_bundled_atom(kind: str, text: str) -> bool:
    """True for a term that names a bundled cycle (or one of its phases)."""
    if kind != "atom":
        return False
    low = text.strip().lower()
    if low.endswith((".csv", ".gpx")) or low.startswith("steady"):
        return False
    return low.partition(":")[0].strip() in _cycle_names()


def resolve_profile(text: str, base_dir=None, dt_s: float = 1.0) -> Profile:
    """The profile a user names in a string (grammar in the module docstring).

    Parameters
    ----------
    text : str
        ``udds``, ``wltc3b:low``, ``trip.csv``, ``ride.gpx``,
        ``steady:90kmh[:600s]``, ``A+B``, ``A*3``.
    base_dir : str or path, optional
        Folder that relative file paths are relative to.
    dt_s : float
        Time step [s] that speed files, GPS tracks and ``steady:`` terms are
        read at. Bundled cycles are never resampled: the regulations define
        them second by second, so they keep their native step of
        :data:`BUNDLED_STEP_S` (1 s) whatever ``dt_s`` is, and give their
        regulated distance and energy. When a joined string (``A+B``) contains
        a bundled cycle, its other terms are read at that 1 s step too, so
        that the parts can be joined (whatever ``dt_s`` is).

    Returns
    -------
    Profile
        Named after the text (without spaces) when it combines several terms.

    Raises
    ------
    InputError
        For unknown names, malformed strings and every problem of a file
        (naming the file, column and line); also for a speed above
        :data:`MAX_USER_SPEED_KMH` in a user file or ``steady:`` term, or an
        acceleration above :data:`MAX_USER_ACCEL_MS2` in a user file on its
        final time grid.
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty profile: name a drive cycle, a .csv or .gpx file, or "
                         f"steady:<speed>; bundled cycles: {', '.join(_cycle_names())}")
    dt_s = _positive(dt_s, "dt_s")
    whole = text.strip()
    if whole.lower().endswith((".csv", ".gpx")) and _resolve_path(whole, base_dir).is_file():
        return _resolve_atom(whole, False, base_dir, dt_s)

    tokens = _tokens(text)
    if any(_is_bundled_atom(kind, value) for kind, value in tokens):
        dt_s = BUNDLED_STEP_S     # user parts joined to a bundled cycle are read at its step
    # term := atom ['*' count] ; expr := term ('+' term)*
    terms: list[tuple[Profile, int, str]] = []
    i = 0
    expect_term = True
    while i < len(tokens):
        kind, value = tokens[i]
        if expect_term:
            if kind not in ("atom", "quoted"):
                raise InputError(f"profile '{text}': expected a cycle, file or steady:<speed> "
                                 f"before or after '{kind}'")
            prof = _resolve_atom(value, kind == "quoted", base_dir, dt_s)
            count = 1
            if i + 1 < len(tokens) and tokens[i + 1][0] == "*":
                if i + 2 >= len(tokens) or tokens[i + 2][0] != "atom":
                    raise InputError(f"profile '{text}': '*' must be followed by a count")
                count_text = tokens[i + 2][1].strip()
                if not count_text.isdigit() or not 1 <= int(count_text) <= MAX_REPEAT:
                    raise InputError(f"profile '{text}': repeat count must be a whole number "
                                     f"from 1 to {MAX_REPEAT}, got '{count_text}'")
                count = int(count_text)
                i += 2
                if i + 1 < len(tokens) and tokens[i + 1][0] == "*":
                    raise InputError(f"profile '{text}': give one repeat count per term")
            label = prof.name if count == 1 else f"{prof.name}*{count}"
            terms.append((prof, count, label))
            expect_term = False
        else:
            if kind != "+":
                raise InputError(f"profile '{text}': expected '+' between terms")
            expect_term = True
        i += 1
    if expect_term:
        raise InputError(f"profile '{text}': ends with '+'; name another term after it")
    if len(terms) == 1 and terms[0][1] == 1:
        return terms[0][0]
    if len(terms) == 1:
        return repeat(terms[0][0], terms[0][1])
    flat = [p for p, count, _ in terms for _ in range(count)]
    return concatenate(flat, name="+".join(label for _, _, label in terms))
