"""Positions on the Earth: great-circle distance, local east-north metres, bearings,
and GPS tracks read from GPX files.

The one GPS module of the package: every reader of GPS data (speed profiles
from tracks, coast-down logs) takes its distances, its Earth radius and its
GPX parsing from here, so that one track gives one distance whatever reads it.
It is the only module that imports gpxpy.

The Earth is a sphere of radius :data:`EARTH_RADIUS_M`, the mean radius R1 of
GRS 80 [3]_. Distances between points are haversine great-circle lengths [1]_;
over the steps of a track (metres to kilometres) the sphere differs from the
ellipsoid by at most about 0.5 % (the spread of the ellipsoid's radii of
curvature, from memory), far below the other errors of a GPS trace.

References
----------
.. [1] R. W. Sinnott, "Virtues of the Haversine", Sky and Telescope 68(2),
   159, 1984.
.. [2] TopoGrafix, "GPX: the GPS Exchange Format", version 1.1 schema, 2004
   (``trkpt``/``rtept`` with ``lat``, ``lon``, ``ele``, ``time``; GPX 1.0 adds
   ``course`` and ``speed``).
.. [3] H. Moritz, "Geodetic Reference System 1980", Journal of Geodesy 74,
   128-133, 2000 (mean Earth radius R1 = 6 371 008.7714 m).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from .errors import InputError
from .readfiles import check_regular, note_read

__all__ = ["EARTH_RADIUS_M", "haversine_distance_m", "local_east_north_m", "equirectangular_m", "gpx_points",
           "gpx_positions",
           "initial_bearing_deg", "check_coordinates", "GpsTrack", "read_gpx_track"]

#: mean Earth radius [m] (IUGG R1 of GRS 80, Moritz 2000, rounded to 0.1 m)
EARTH_RADIUS_M = 6_371_008.8


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


def initial_bearing_deg(lat1_deg, lon1_deg, lat2_deg, lon2_deg):
    """Initial great-circle bearing from point 1 to point 2 [°], clockwise from north, 0-360.

    References
    ----------
    .. [1] R. W. Sinnott, Sky and Telescope 68(2), 159, 1984 (spherical
       trigonometry of the great circle; the forward azimuth formula).
    """
    p1, l1, p2, l2 = (np.radians(np.asarray(x, float)) for x in
                      (lat1_deg, lon1_deg, lat2_deg, lon2_deg))
    dlon = l2 - l1
    return np.degrees(np.arctan2(np.sin(dlon) * np.cos(p2),
                                 np.cos(p1) * np.sin(p2)
                                 - np.sin(p1) * np.cos(p2) * np.cos(dlon))) % 360.0


def local_east_north_m(lat_deg, lon_deg, radius_m: float = EARTH_RADIUS_M
                       ) -> tuple[np.ndarray, np.ndarray]:
    """East and north [m] of each point from the first one, on the sphere of ``radius_m``.

    North is R (phi - phi_0). East is the sum over the steps between
    successive points of R cos(phi_mid) (lambda_i - lambda_(i-1)), the
    east-west part of each step on the plane tangent at its middle latitude
    (longitude steps are taken across the antimeridian the short way). Each
    step's length sqrt(de² + dn²) is its great-circle length [1]_ to within a
    relative (step/R)², so steps of seconds are exact to far below a
    millimetre; over a long track the east-north map drifts from any map
    projection, which does not matter because only the steps are used.

    References
    ----------
    .. [1] R. W. Sinnott, Sky and Telescope 68(2), 159, 1984.
    """
    phi = np.radians(np.asarray(lat_deg, float))
    lam = np.radians(np.asarray(lon_deg, float))
    dlam = (np.diff(lam) + math.pi) % (2.0 * math.pi) - math.pi
    mid = 0.5 * (phi[1:] + phi[:-1])
    east = np.concatenate([[0.0], np.cumsum(radius_m * np.cos(mid) * dlam)])
    north = radius_m * (phi - phi[0])
    return east, north


def check_coordinates(lat_deg, lon_deg, *, file: str | None = None, lines=None,
                      what: str = "row", lat_field: str = "lat", lon_field: str = "lon") -> None:
    """Refuse latitudes outside ±90° and longitudes outside ±180° (or not finite).

    Raises :class:`InputError` naming the file, the field and the line
    (``lines[i]``, when given) of the first bad value.
    """
    lat = np.asarray(lat_deg, float)
    lon = np.asarray(lon_deg, float)
    for values, limit, field, word in ((lat, 90.0, lat_field, "latitude"),
                                       (lon, 180.0, lon_field, "longitude")):
        bad = np.flatnonzero(~(np.abs(values) <= limit))
        if bad.size:
            i = int(bad[0])
            line = None if lines is None else (int(lines[i]) or None)
            raise InputError(f"{what} {i + 1}: {word} {values[i]:.6g}° is outside "
                             f"-{limit:g}° to {limit:g}°", file=file, field=field, line=line)


@dataclass(frozen=True)
class GpsTrack:
    """The points of a GPX file, as recorded.

    Attributes
    ----------
    source : str
        File path.
    kind : str
        ``track point`` or ``route point`` (for messages).
    times : tuple of datetime
        Point times, in UTC without time zone (as the file states them when
        it gives no zone).
    time_s : (n,) array
        Seconds from the first point [s] (not checked for order).
    lat_deg, lon_deg : (n,) arrays
        Position [°], checked within ±90° and ±180°.
    elevation_m : (n,) array
        Elevation [m], NaN where a point has none.
    speed_ms : (n,) array
        The speed the point states [m/s] (GPX 1.0 ``<speed>`` or a ``speed``
        element in its ``<extensions>``), NaN where it states none.
    line : (n,) int array
        Line of each point's opening tag in the file (0 when unknown).
    """

    source: str
    kind: str
    times: tuple
    time_s: np.ndarray
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    elevation_m: np.ndarray
    speed_ms: np.ndarray
    line: np.ndarray

    def __len__(self) -> int:
        return len(self.time_s)

    def point_error(self, i: int, message: str) -> InputError:
        """An InputError about point ``i`` (0-based): its number and its line."""
        line = int(self.line[i]) or None
        return InputError(f"{self.kind} {i + 1}: {message}", file=self.source, line=line)

    def step_distance_m(self) -> np.ndarray:
        """Haversine length of each step between successive points [m], (n-1,)."""
        return haversine_distance_m(self.lat_deg[:-1], self.lon_deg[:-1], self.lat_deg[1:],
                                    self.lon_deg[1:])


def _tag_lines(text: str, tag: str) -> list[int]:
    """1-based line of each opening ``<tag`` (any namespace prefix), in file order."""
    starts = [m.start() for m in re.finditer(rf"<(?:[A-Za-z_][\w.-]*:)?{tag}[\s/>]", text)]
    newlines = np.array([m.start() for m in re.finditer("\n", text)], dtype=np.int64)
    return (np.searchsorted(newlines, np.array(starts, dtype=np.int64)) + 1).tolist()


def _point_speed_ms(point) -> float:
    """The speed a GPS point states [m/s]: GPX 1.0 ``<speed>`` or a ``speed`` element
    (any namespace, at any depth) in its ``<extensions>``; NaN when it states none,
    -inf when the element is not a number."""
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
                return -math.inf
        stack.extend(list(el))
    return math.nan


def read_text(path: Path, kind: str) -> str:
    """The UTF-8 text of a user's file (a BOM dropped); InputError when it cannot be read.

    Notes the file as read (:func:`tractive.readfiles.note_read`).
    """
    note_read(path)
    check_regular(path, f"{kind} file")
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


def gpx_points(text: str, file: str, *, routes: bool = True) -> tuple:
    """The points of a GPX document: gpxpy point objects, their kind ("track point" or
    "route point") and their 1-based lines (0 where unknown) as an int array.

    All track points of all tracks and segments in file order; when there is no
    track and ``routes`` is true, all route points. Raises :class:`InputError`
    for a malformed document or one without points.
    """
    import gpxpy
    import gpxpy.gpx

    try:
        gpx = gpxpy.parse(text)
    except Exception as exc:  # gpxpy raises several types for malformed content
        detail = " ".join(str(exc).split())[:120] or exc.__class__.__name__
        raise InputError(f"not a valid GPX file: {detail}", file=file) from None
    points = [p for trk in gpx.tracks for seg in trk.segments for p in seg.points]
    kind, tag = "track point", "trkpt"
    if not points and routes:
        points = [p for rte in gpx.routes for p in rte.points]
        kind, tag = "route point", "rtept"
    if not points:
        raise InputError("no track points or route points" if routes else "no track points",
                         file=file)
    lines = _tag_lines(text, tag)
    line = np.array(lines if len(lines) == len(points) else [0] * len(points), dtype=int)
    return points, kind, line


def gpx_positions(text: str, file: str) -> tuple:
    """Latitudes and longitudes [°], elevations [m] (None unless every point has one)
    and lines of a GPX document's points; times are not needed (a racing line)."""
    points, kind, line = gpx_points(text, file)
    lat = np.array([p.latitude for p in points], dtype=float)
    lon = np.array([p.longitude for p in points], dtype=float)
    check_coordinates(lat, lon, file=file, lines=line, what=kind)
    ele = [p.elevation for p in points]
    z = None if any(e is None for e in ele) else np.array(ele, float)
    return lat, lon, z, line


def equirectangular_m(lat_deg, lon_deg, radius_m: float = EARTH_RADIUS_M) -> tuple:
    """East and north [m] of each point from the first on the plane of an
    equirectangular projection about the mean latitude φ₀: east = R·cos φ₀·Δλ,
    north = R·Δφ (Snyder, Map Projections — A Working Manual, USGS PP 1395, 1987,
    ch. 12). Unlike :func:`local_east_north_m`, a closed loop in degrees stays
    closed on the plane, which a racing line's curvature needs; over a circuit
    (a few km) its scale error is far below a millimetre per metre.
    """
    phi = np.radians(np.asarray(lat_deg, float))
    lam = np.radians(np.asarray(lon_deg, float))
    dlam = (lam - lam[0] + math.pi) % (2.0 * math.pi) - math.pi     # across the antimeridian
    phi_ref = float(np.mean(phi))
    return radius_m * math.cos(phi_ref) * dlam, radius_m * (phi - phi[0])


def read_gpx_track(path, *, routes: bool = True) -> GpsTrack:
    """Read the points of a GPX 1.0/1.1 file [2]_ with gpxpy.

    All track points of all tracks and segments in file order; when there is
    no track and ``routes`` is true, all route points. Every point needs a
    time; positions must be within ±90° latitude and ±180° longitude.

    Raises
    ------
    InputError
        Unreadable or malformed file, no points, a point without time or
        with an impossible position (its number and line).
    """
    path = Path(path)
    file = str(path)
    points, kind, line = gpx_points(read_text(path, "GPX"), file, routes=routes)
    times = []
    for i, p in enumerate(points):
        when = p.time
        if when is None:
            raise InputError(f"{kind} {i + 1}: has no time (every point needs a valid <time>)",
                             file=file, line=int(line[i]) or None)
        if when.tzinfo is not None:
            when = when.astimezone(timezone.utc).replace(tzinfo=None)
        times.append(when)
    t0: datetime = times[0]
    time_s = np.array([(w - t0).total_seconds() for w in times])
    lat = np.array([p.latitude for p in points], dtype=float)
    lon = np.array([p.longitude for p in points], dtype=float)
    check_coordinates(lat, lon, file=file, lines=line, what=kind)
    ele = np.array([np.nan if p.elevation is None else p.elevation for p in points], float)
    speed = np.array([_point_speed_ms(p) for p in points], dtype=float)
    return GpsTrack(file, kind, tuple(times), time_s, lat, lon, ele, speed, line)
