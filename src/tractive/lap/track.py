"""A circuit as a racing line: reading, smoothing, curvature and grade.

Input forms
-----------
* CSV with ``x_m,y_m`` (a plane, metres) or ``latitude_deg,longitude_deg``
  (WGS 84 degrees), optional ``elevation_m``; one point per row along the
  racing line, in driving order. Lines starting with ``#`` are comments;
  other columns are ignored.
* GPX: the track points (or, if none, the route points) with their
  elevation when every point has one. Times are not needed.
* CSV with ``distance_m,curvature_1_per_m`` (distance along the road [m],
  strictly increasing; curvature positive to the left [1/m]), optional
  ``elevation_m``. For a closed lap the last row is the start line again
  (its distance is the lap length and its curvature that of the first row).

Geometry from points (method)
-----------------------------
Latitude and longitude are projected onto a local east-north plane by the
equirectangular projection about the track's mean latitude φ₀ (east =
R·cos φ₀·Δλ, north = R·Δφ, sphere of radius :data:`tractive.geo.EARTH_RADIUS_M`): a closed
loop in degrees stays closed, and over a circuit a few km across the scale
error, Δφ·tan φ₀, stays below about 0.1 % at mid latitudes. The points are parametrised by
their cumulative chord length u, and x(u), y(u) (and z(u)) are fitted by
least-squares cubic B-splines with uniformly spaced knots, the knot spacing
being the **smoothing length** (default :data:`DEFAULT_SMOOTHING_M`,
raised to 1.5 × the largest point spacing when the points are sparser): a
least-squares spline cannot bend on a shorter scale than its knot spacing,
so position noise on shorter scales is smoothed away while corners of a
radius of a few smoothing lengths keep their shape. A closed lap uses a
periodic spline (the basis folded over the lap length), so the line has no
seam at the start. Curvature is the plane-curve formula

    κ = (x'·y'' − y'·x'') / (x'² + y'²)^{3/2}

(positive for a left-hand bend), exact for any parametrisation; distance
is the arc length of the fitted line (horizontal). The line is then sampled
at equal distance steps (default :data:`DEFAULT_STEP_M`).

Grade: elevation is fitted with the same spline; for point input the
distance is horizontal, so dz/ds is the tangent of the slope angle
(rise / run, ``grade_fraction``); for ``distance_m`` input the distance is
along the road, so dz/ds is the sine of the slope angle and the tangent is
sin/√(1 − sin²). The simulation uses the sine (normal load m·g·cos θ,
slope force m·g·sin θ); the horizontal distance is used as the distance
driven (it differs from the distance along a 10 % slope by 0.5 %).

Closed or open
--------------
Decided by whether the ends meet: a line whose last point is within
:data:`MAX_GAP_M` of its first (and within a quarter of the line's length)
is a closed lap (a last point that repeats
the first within 1 cm is dropped); ``closed=True/False`` overrides.

Broken lines (one-line :class:`~tractive.errors.InputError` naming the file
and the line): fewer than :data:`MIN_POINTS` points; a jump of more than
:data:`MAX_GAP_M` between successive points (or distances); a curvature
beyond a car's turning circle, ``|κ| > MAX_CURVATURE_1_PER_M`` (4 m
radius); a grade beyond :data:`~tractive.limits.MAX_GRADE_FRACTION`.

References
----------
.. [1] C. de Boor, *A Practical Guide to Splines*, rev. ed., Springer 2001,
   ch. XIV (least-squares spline approximation) and ch. IX (B-splines).
.. [2] M. P. do Carmo, *Differential Geometry of Curves and Surfaces*,
   Prentice-Hall 1976, §1-5 (curvature of a plane curve).
.. [3] R. W. Sinnott, "Virtues of the Haversine", Sky and Telescope 68(2),
   159, 1984 (great-circle distance; used through
   :func:`tractive.profiles.haversine_distance_m`).
"""

from __future__ import annotations

import math
import os

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..geo import check_coordinates, equirectangular_m, gpx_positions
from ..limits import MAX_GRADE_FRACTION
from ..readfiles import check_regular, note_read

#: default smoothing length: knot spacing of the fitted spline [m]
DEFAULT_SMOOTHING_M = 10.0
#: default distance step of the simulation grid [m]
DEFAULT_STEP_M = 2.0
#: largest distance between successive points (and between the ends of a closed lap) [m]
MAX_GAP_M = 50.0
#: fewest points a track must have
MIN_POINTS = 8
#: largest |curvature| [1/m]: a turning circle of 4 m radius, tighter than any car's
#: (common practice: a small car turns on a kerb-to-kerb circle of about 10 m diameter)
MAX_CURVATURE_1_PER_M = 0.25
#: fewest simulation steps per lap
MIN_STEPS = 16
#: most simulation points per track (memory and time bound)
MAX_TRACK_POINTS = 200_000
#: last point repeating the first within this distance is dropped [m]
_SAME_POINT_M = 0.01


@dataclass(frozen=True, eq=False)
class Track:
    """A circuit sampled at equal distance steps.

    Attributes
    ----------
    name : str
    source : str
        File or description.
    closed : bool
        True for a lap (the step after the last point leads to the first).
    distance_m : (P,) array
        Distance of each point from the start [m] (0, h, 2h, ...).
    curvature_1_per_m : (P,) array
        Curvature of the racing line [1/m] (positive: left-hand bend).
    sin_grade : (P,) array
        Sine of the slope angle [-] (positive uphill).
    length_m : float
        Lap length [m] (closed: P·h; open: (P − 1)·h).
    step_m : float
        Distance step h [m].
    smoothing_length_m : float or None
        Knot spacing of the fitted spline [m] (None for curvature input).
    x_m, y_m : (P,) arrays or None
        Smoothed plane coordinates [m] (curvature input: integrated heading).
    notes : tuple of str
    """

    name: str
    source: str
    closed: bool
    distance_m: np.ndarray
    curvature_1_per_m: np.ndarray
    sin_grade: np.ndarray
    length_m: float
    step_m: float
    smoothing_length_m: float | None = None
    x_m: np.ndarray | None = None
    y_m: np.ndarray | None = None
    notes: tuple = field(default=())

    @property
    def grade_fraction(self) -> np.ndarray:
        """Grade as rise / run [-] (tangent of the slope angle)."""
        s = self.sin_grade
        return s / np.sqrt(1.0 - s * s)

    @property
    def n_points(self) -> int:
        """Number of points P."""
        return int(self.distance_m.size)

    def to_dict(self) -> dict:
        """Summary: name, source, closed, length, step, smoothing, notes."""
        return {"name": self.name, "source": self.source, "closed": self.closed,
                "length_m": float(self.length_m), "step_m": float(self.step_m),
                "points": self.n_points, "smoothing_length_m": self.smoothing_length_m,
                "min_radius_m": _min_radius(self.curvature_1_per_m),
                "notes": list(self.notes)}


def _min_radius(kappa) -> float | None:
    k = float(np.max(np.abs(kappa)))
    return None if k == 0 else 1.0 / k


# ---------------------------------------------------------------------------
# public constructors
# ---------------------------------------------------------------------------

def read_track(path: str | os.PathLike, *, closed: bool | None = None,
               smoothing_length_m: float = DEFAULT_SMOOTHING_M,
               step_m: float = DEFAULT_STEP_M, max_gap_m: float = MAX_GAP_M) -> Track:
    """Read a track file (CSV or GPX, see the module doc).

    Parameters
    ----------
    path : path
        ``.gpx`` for GPX, anything else CSV.
    closed : bool, optional
        Closed lap or open stretch (default: closed when the ends meet).
    smoothing_length_m : float
        Knot spacing of the fitted spline [m] (point input), 1 to 500.
    step_m : float
        Distance step of the simulation [m], 0.1 to 50.
    max_gap_m : float
        Largest distance between successive points [m].
    """
    path = Path(path)
    file = str(path)
    text = _read_text(path)
    note_read(path)
    name = path.name
    if path.suffix.lower() == ".gpx":
        x, y, z, lines = _gpx_points(text, file)
        return track_from_points(x, y, z, closed=closed, smoothing_length_m=smoothing_length_m,
                                 step_m=step_m, max_gap_m=max_gap_m, name=name, file=file,
                                 lines=lines)
    cols, lines = _csv_columns(text, file)
    z = cols.get("elevation_m")
    if "distance_m" in cols or "curvature_1_per_m" in cols:
        for key in ("distance_m", "curvature_1_per_m"):
            if key not in cols:
                raise InputError(f"missing column '{key}' (the curvature form needs "
                                 "distance_m and curvature_1_per_m)", file=file, line=1)
        return track_from_curvature(cols["distance_m"], cols["curvature_1_per_m"], z,
                                    closed=closed, step_m=step_m, max_gap_m=max_gap_m,
                                    smoothing_length_m=smoothing_length_m, name=name,
                                    file=file, lines=lines)
    if "x_m" in cols or "y_m" in cols:
        for key in ("x_m", "y_m"):
            if key not in cols:
                raise InputError(f"missing column '{key}'", file=file, line=1)
        x, y = cols["x_m"], cols["y_m"]
    elif "latitude_deg" in cols or "longitude_deg" in cols:
        for key in ("latitude_deg", "longitude_deg"):
            if key not in cols:
                raise InputError(f"missing column '{key}'", file=file, line=1)
        x, y = _east_north_m(cols["latitude_deg"], cols["longitude_deg"], file, lines)
    else:
        raise InputError("no position columns: give x_m,y_m or latitude_deg,longitude_deg "
                         "or distance_m,curvature_1_per_m (optional elevation_m)",
                         file=file, line=1)
    return track_from_points(x, y, z, closed=closed, smoothing_length_m=smoothing_length_m,
                             step_m=step_m, max_gap_m=max_gap_m, name=name, file=file,
                             lines=lines)


def track_from_points(x_m, y_m, elevation_m=None, *, closed: bool | None = None,
                      smoothing_length_m: float = DEFAULT_SMOOTHING_M,
                      step_m: float = DEFAULT_STEP_M, max_gap_m: float = MAX_GAP_M,
                      name: str = "track", file: str | None = None,
                      lines=None) -> Track:
    """A track from points of the racing line on a plane [m] (method in the module doc).

    ``lines`` gives the file line of each point for error messages.
    """
    _check_options(smoothing_length_m, step_m, max_gap_m)
    x = np.asarray(x_m, float)
    y = np.asarray(y_m, float)
    z = None if elevation_m is None else np.asarray(elevation_m, float)
    lines = list(range(1, x.size + 1)) if lines is None else list(lines)
    loc = _Locator(file, lines)
    if x.size < MIN_POINTS:
        raise InputError(f"a track needs at least {MIN_POINTS} points, got {x.size}",
                         file=file)
    step = np.hypot(np.diff(x), np.diff(y))
    keep = np.concatenate([[True], step > 1e-9])          # repeated points: dropped
    x, y = x[keep], y[keep]
    z = None if z is None else z[keep]
    lines = [ln for ln, k in zip(lines, keep) if k]
    loc = _Locator(file, lines)
    if x.size < MIN_POINTS:
        raise InputError(f"a track needs at least {MIN_POINTS} distinct points, got "
                         f"{x.size}", file=file)
    step = np.hypot(np.diff(x), np.diff(y))
    jump = np.flatnonzero(step > max_gap_m)
    if jump.size:
        i = int(jump[0]) + 1
        raise loc.error(i, f"broken line: {step[i - 1]:.0f} m from the point before, more "
                           f"than {max_gap_m:g} m")
    end_gap = float(math.hypot(x[-1] - x[0], y[-1] - y[0]))
    auto = end_gap <= max_gap_m and end_gap < 0.25 * float(np.sum(step))
    notes = []
    if closed is None:
        closed = auto
    elif closed and end_gap > max_gap_m:
        raise loc.error(x.size - 1, f"a closed lap needs its ends within {max_gap_m:g} m; "
                                    f"the last point is {end_gap:.0f} m from the first")
    if closed and end_gap <= _SAME_POINT_M:
        x, y = x[:-1], y[:-1]
        z = None if z is None else z[:-1]
        lines = lines[:-1]
        loc = _Locator(file, lines)
    u = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))])
    period = u[-1] + (math.hypot(x[-1] - x[0], y[-1] - y[0]) if closed else 0.0)
    gap_max = float(np.max(np.diff(u))) if not closed else float(np.max(np.diff(
        np.append(u, period))))
    knot = max(float(smoothing_length_m), 1.5 * gap_max)
    if knot > smoothing_length_m * (1 + 1e-12):
        notes.append(f"smoothing length raised from {smoothing_length_m:g} m to {knot:.3g} m "
                     "(1.5 × the largest point spacing)")
    if period < 4 * knot:
        raise InputError(f"the line is {period:.0f} m long, shorter than 4 smoothing lengths "
                         f"({knot:.3g} m each)", file=file)
    values = np.column_stack([x, y] if z is None else [x, y, z])
    spline = _fit(u, values, knot, period if closed else None)
    # arc length of the fitted line on a fine grid of the parameter
    fine_n = max(int(math.ceil(period / min(step_m, knot) * 4)), 64)
    uf = np.linspace(0.0, period, fine_n + 1)
    d1 = spline.derivative(1)(uf)
    speed = np.hypot(d1[:, 0], d1[:, 1])
    arc = np.concatenate([[0.0], np.cumsum(0.5 * (speed[1:] + speed[:-1]) * np.diff(uf))])
    length = float(arc[-1])
    n_steps = _n_steps(length, step_m, file)
    s = np.arange(n_steps + (0 if closed else 1)) * (length / n_steps)
    uu = np.interp(s, arc, uf)
    p, p1, p2 = spline(uu), spline.derivative(1)(uu), spline.derivative(2)(uu)
    den = np.hypot(p1[:, 0], p1[:, 1])
    kappa = (p1[:, 0] * p2[:, 1] - p1[:, 1] * p2[:, 0]) / den ** 3
    tan_g = np.zeros_like(s) if z is None else p1[:, 2] / den
    track = Track(name, file or name, bool(closed), s, kappa, tan_g / np.sqrt(1 + tan_g ** 2),
                  length, length / n_steps, knot, p[:, 0], p[:, 1], tuple(notes))
    _check_shape(track, loc, u, uu, grade_is_tan=True, grade=tan_g)
    return track


def track_from_curvature(distance_m, curvature_1_per_m, elevation_m=None, *,
                         closed: bool | None = None, step_m: float = DEFAULT_STEP_M,
                         max_gap_m: float = MAX_GAP_M,
                         smoothing_length_m: float = DEFAULT_SMOOTHING_M,
                         name: str = "track", file: str | None = None, lines=None) -> Track:
    """A track from curvature [1/m] against distance along the road [m].

    Curvature is interpolated linearly between rows (not smoothed); elevation,
    if given, is fitted with the smoothing spline of the module doc and its
    slope taken as the sine of the slope angle. Closed when the line found by
    integrating the heading ends within ``max_gap_m`` of its start (the last
    row is then the start line again).
    """
    _check_options(smoothing_length_m, step_m, max_gap_m)
    d = np.asarray(distance_m, float)
    k = np.asarray(curvature_1_per_m, float)
    z = None if elevation_m is None else np.asarray(elevation_m, float)
    lines = list(range(1, d.size + 1)) if lines is None else list(lines)
    loc = _Locator(file, lines)
    if d.size < MIN_POINTS:
        raise InputError(f"a track needs at least {MIN_POINTS} points, got {d.size}",
                         file=file)
    steps = np.diff(d)
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        raise loc.error(int(bad[0]) + 1, "distance_m must increase from row to row",
                        "distance_m")
    jump = np.flatnonzero(steps > max_gap_m)
    if jump.size:
        i = int(jump[0]) + 1
        raise loc.error(i, f"broken line: {steps[i - 1]:.0f} m after the row before, more "
                           f"than {max_gap_m:g} m", "distance_m")
    sharp = np.flatnonzero(np.abs(k) > MAX_CURVATURE_1_PER_M)
    if sharp.size:
        i = int(sharp[0])
        raise loc.error(i, f"curvature {k[i]:.3g} 1/m is tighter than a car can turn "
                           f"(|κ| at most {MAX_CURVATURE_1_PER_M:g} 1/m, a "
                           f"{1 / MAX_CURVATURE_1_PER_M:g} m radius)", "curvature_1_per_m")
    d = d - d[0]
    heading = np.concatenate([[0.0], np.cumsum(0.5 * (k[1:] + k[:-1]) * steps)])
    cx = np.concatenate([[0.0], np.cumsum(0.5 * (np.cos(heading[1:]) + np.cos(heading[:-1]))
                                          * steps)])
    cy = np.concatenate([[0.0], np.cumsum(0.5 * (np.sin(heading[1:]) + np.sin(heading[:-1]))
                                          * steps)])
    end_gap = float(math.hypot(cx[-1], cy[-1]))
    if closed is None:
        closed = end_gap <= max_gap_m and end_gap < 0.25 * d[-1]
    length = float(d[-1])
    n_steps = _n_steps(length, step_m, file)
    s = np.arange(n_steps + (0 if closed else 1)) * (length / n_steps)
    kappa = np.interp(s, d, k)
    notes = []
    sin_g = np.zeros_like(s)
    knot = None
    if z is not None:
        knot = float(smoothing_length_m)
        if length < 4 * knot:
            raise InputError(f"the line is {length:.0f} m long, shorter than 4 smoothing "
                             f"lengths ({knot:g} m each)", file=file)
        zz = z[:-1] if closed else z
        dd = d[:-1] if closed else d
        knot = max(knot, 1.5 * float(np.max(steps)))
        spline = _fit(dd, zz[:, None], knot, length if closed else None)
        sin_g = spline.derivative(1)(s)[:, 0]
    track = Track(name, file or name, bool(closed), s, kappa, sin_g, length,
                  length / n_steps, knot, np.interp(s, d, cx), np.interp(s, d, cy),
                  tuple(notes))
    _check_shape(track, loc, d, s, grade_is_tan=False, grade=sin_g)
    return track


def circle_track(radius_m: float, *, step_m: float = DEFAULT_STEP_M) -> Track:
    """A closed flat circle of radius ``radius_m`` [m] driven anticlockwise (exact)."""
    length = 2.0 * math.pi * radius_m
    n = _n_steps(length, step_m, None)
    s = np.arange(n) * (length / n)
    return Track(f"circle R={radius_m:g} m", "circle", True, s,
                 np.full(n, 1.0 / radius_m), np.zeros(n), length, length / n, None,
                 radius_m * np.sin(s / radius_m), radius_m * (1 - np.cos(s / radius_m)))


def straight_track(length_m: float, *, step_m: float = DEFAULT_STEP_M,
                   sin_grade: float = 0.0) -> Track:
    """An open straight of ``length_m`` [m] at a constant slope (sine ``sin_grade``)."""
    n = _n_steps(length_m, step_m, None)
    s = np.arange(n + 1) * (length_m / n)
    return Track(f"straight {length_m:g} m", "straight", False, s, np.zeros(n + 1),
                 np.full(n + 1, float(sin_grade)), float(length_m), length_m / n, None,
                 s.copy(), np.zeros(n + 1))


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

class _Locator:
    """Point index → file line for error messages."""

    def __init__(self, file, lines):
        self.file = file
        self.lines = list(lines)

    def line(self, i: int):
        if not self.lines:
            return None
        return self.lines[max(0, min(int(i), len(self.lines) - 1))]

    def error(self, i: int, message: str, field: str | None = None) -> InputError:
        return InputError(message, file=self.file, field=field, line=self.line(i))


def _check_options(smoothing_length_m, step_m, max_gap_m) -> None:
    """Refuse smoothing lengths, steps and gaps outside their ranges."""
    for value, lo, hi, what in ((smoothing_length_m, 1.0, 500.0, "smoothing_length_m"),
                                (step_m, 0.1, 50.0, "step_m"),
                                (max_gap_m, 1.0, 1000.0, "max_gap_m")):
        if not (math.isfinite(float(value)) and lo <= float(value) <= hi):
            raise InputError(f"must be from {lo:g} to {hi:g} m, got {value!r}", field=what)


def _n_steps(length_m: float, step_m: float, file) -> int:
    """Number of equal steps of at most ``step_m`` over ``length_m``."""
    n = max(MIN_STEPS, int(math.ceil(length_m / step_m - 1e-9)))
    if n + 1 > MAX_TRACK_POINTS:
        raise InputError(f"{length_m:.0f} m at {step_m:g} m steps is more than "
                         f"{MAX_TRACK_POINTS} points; use a longer step", file=file,
                         field="step_m")
    return n


def _fit(u, values, knot_m: float, period: float | None):
    """Least-squares cubic B-spline of ``values`` (P, C) over ``u`` with knots every
    ``knot_m`` (periodic over ``period`` when given); returns a BSpline."""
    from scipy.interpolate import BSpline

    k = 3
    if period is None:
        n_int = max(1, int(round((u[-1] - u[0]) / knot_m)))
        inner = np.linspace(u[0], u[-1], n_int + 1)
        t = np.concatenate([[u[0]] * k, inner, [u[-1]] * k])
        design = BSpline.design_matrix(np.clip(u, u[0], u[-1]), t, k).toarray()
        coef, *_ = np.linalg.lstsq(design, values, rcond=None)
        return BSpline(t, coef, k, extrapolate=False)
    n = max(4, int(round(period / knot_m)))
    h = period / n
    t = h * np.arange(-k, n + k + 1)                           # n + 2k + 1 knots
    uu = np.mod(u, period)
    design = BSpline.design_matrix(uu, t, k).toarray()         # (P, n + k)
    folded = design[:, :n].copy()
    folded[:, :k] += design[:, n:n + k]                        # basis j and j + n coincide
    coef, *_ = np.linalg.lstsq(folded, values, rcond=None)
    full = coef[np.arange(n + k) % n]
    return _Periodic(BSpline(t, full, k, extrapolate=False), period)


class _Periodic:
    """A BSpline evaluated modulo its period (derivatives too)."""

    def __init__(self, spline, period):
        self.spline = spline
        self.period = period

    def __call__(self, u):
        return self.spline(np.mod(u, self.period))

    def derivative(self, nu=1):
        return _Periodic(self.spline.derivative(nu), self.period)


def _check_shape(track: Track, loc: _Locator, u_points, u_nodes, *, grade_is_tan: bool,
                 grade) -> None:
    """Refuse curvatures beyond a turning circle and implausible grades."""
    kappa = track.curvature_1_per_m
    sharp = np.flatnonzero(np.abs(kappa) > MAX_CURVATURE_1_PER_M)
    if sharp.size:
        j = int(sharp[0])
        i = int(np.argmin(np.abs(np.asarray(u_points) - u_nodes[j])))
        raise loc.error(i, f"the line bends with a {1 / abs(kappa[j]):.1f} m radius near "
                           f"{track.distance_m[j]:.0f} m, tighter than a car can turn "
                           f"(radius at least {1 / MAX_CURVATURE_1_PER_M:g} m); check the "
                           f"points or raise the smoothing length")
    g = np.abs(np.asarray(grade))
    if not grade_is_tan:
        g = g / np.sqrt(np.maximum(1 - g * g, 1e-12))
    steep = np.flatnonzero(g > MAX_GRADE_FRACTION)
    if steep.size:
        j = int(steep[0])
        i = int(np.argmin(np.abs(np.asarray(u_points) - u_nodes[j])))
        raise loc.error(i, f"elevation gives a {100 * g[j]:.0f} % grade near "
                           f"{track.distance_m[j]:.0f} m, more than "
                           f"{100 * MAX_GRADE_FRACTION:g} %", "elevation_m")


def _read_text(path: Path) -> str:
    """The file's text (UTF-8), or a one-line error."""
    check_regular(path, "track file")
    try:
        return path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError("file not found", file=str(path)) from None
    except IsADirectoryError:
        raise InputError("is a directory, expected a track file", file=str(path)) from None
    except UnicodeDecodeError:
        raise InputError("not UTF-8 text, expected a CSV or GPX track", file=str(path)) \
            from None
    except OSError as exc:
        raise InputError(f"cannot read file ({exc.strerror or exc.__class__.__name__})",
                         file=str(path)) from None


_KNOWN = ("x_m", "y_m", "latitude_deg", "longitude_deg", "distance_m", "curvature_1_per_m",
          "elevation_m")


def _csv_columns(text: str, file: str):
    """Known columns of a track CSV as float arrays, and the line of each row."""
    import csv

    rows = []
    header = header_line = None
    for number, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip() or raw.lstrip().startswith("#"):
            continue
        cells = next(csv.reader([raw]))
        if header is None:
            header = [c.strip() for c in cells]
            header_line = number
            continue
        rows.append((number, cells))
    if header is None:
        raise InputError("empty file: expected a header such as x_m,y_m", file=file)
    index = {name: i for i, name in enumerate(header) if name in _KNOWN}
    lines = [n for n, _ in rows]
    cols = {}
    for name, i in index.items():
        values = np.empty(len(rows))
        for j, (number, cells) in enumerate(rows):
            cell = cells[i].strip() if i < len(cells) else ""
            try:
                values[j] = float(cell)
            except ValueError:
                what = "empty cell" if not cell else f"not a number: '{cell}'"
                raise InputError(what, file=file, field=name, line=number) from None
            if not math.isfinite(values[j]):
                raise InputError(f"must be a finite number, got '{cell}'", file=file,
                                 field=name, line=number)
        cols[name] = values
    if not index:
        raise InputError("no known column in the header (x_m,y_m or latitude_deg,"
                         "longitude_deg or distance_m,curvature_1_per_m; optional "
                         "elevation_m)", file=file, line=header_line)
    return cols, lines


def _east_north_m(lat_deg, lon_deg, file, lines):
    """East and north [m] of each point from the first (the equirectangular projection
    of :func:`tractive.geo.equirectangular_m`: a closed loop stays closed)."""
    check_coordinates(lat_deg, lon_deg, file=file, lines=lines, what="point",
                      lat_field="latitude_deg", lon_field="longitude_deg")
    return equirectangular_m(lat_deg, lon_deg)


def _gpx_points(text: str, file: str):
    """Plane coordinates [m], elevations (or None) and lines of a GPX file's points."""
    lat, lon, z, lines = gpx_positions(text, file)
    lines = [int(x) or None for x in lines]
    x, y = equirectangular_m(lat, lon)
    return x, y, z, lines


__all__ = ["Track", "read_track", "track_from_points", "track_from_curvature",
           "circle_track", "straight_track", "DEFAULT_SMOOTHING_M", "DEFAULT_STEP_M",
           "MAX_GAP_M", "MIN_POINTS", "MAX_CURVATURE_1_PER_M"]
