"""tractive.geo: one Earth radius, one haversine distance, one GPX reader for every
GPS input (speed profiles and coast-down logs)."""

from __future__ import annotations

import math
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

from tractive.coastdown import read_coastdown_log
from tractive.errors import InputError
from tractive.geo import (EARTH_RADIUS_M, check_coordinates, haversine_distance_m,
                          initial_bearing_deg, read_gpx_track)
from tractive.profiles import read_gpx
from tractive.readfiles import tracking

# mean Earth radius R1 = 6 371 008.7714 m of GRS 80 (Moritz 2000, from memory), to 0.1 m
R_M = 6_371_008.8
T0 = datetime(2024, 5, 1, 8, 0, 0, tzinfo=timezone.utc)


def gpx_file(tmp_path, lats, lons, name="track.gpx", times_s=None):
    """A GPX 1.1 track with one point a second (or at ``times_s``)."""
    pts = []
    for i, (lat, lon) in enumerate(zip(lats, lons)):
        t = T0 + timedelta(seconds=float(i if times_s is None else times_s[i]))
        pts.append(f'<trkpt lat="{float(lat)!r}" lon="{float(lon)!r}">'
                   f"<time>{t.strftime('%Y-%m-%dT%H:%M:%S.%fZ')}</time></trkpt>")
    path = tmp_path / name
    path.write_text('<?xml version="1.0" encoding="UTF-8"?>\n'
                    '<gpx version="1.1" creator="test" xmlns="http://www.topografix.com/GPX/1/1">'
                    "\n<trk><trkseg>\n" + "\n".join(pts) + "\n</trkseg></trk></gpx>\n",
                    encoding="utf-8")
    return path


def trapezoid(y, x):
    trap = getattr(np, "trapezoid", None) or np.trapz
    return float(trap(y, x))


def test_one_earth_radius():
    assert EARTH_RADIUS_M == R_M


def test_haversine_along_a_meridian_and_the_equator():
    # arc length = R * angle on a sphere (geometry); the haversine formula is exact on it
    assert haversine_distance_m(10.0, 5.0, 11.0, 5.0) == pytest.approx(R_M * math.pi / 180,
                                                                      rel=1e-12)
    assert haversine_distance_m(0.0, 179.5, 0.0, -179.5) == pytest.approx(R_M * math.pi / 180,
                                                                         rel=1e-12)


def test_initial_bearing_of_the_cardinal_directions():
    # north 0°, east 90° (on the equator), south 180°, west 270° (definition of bearing)
    assert initial_bearing_deg(0, 0, 1, 0) == pytest.approx(0.0, abs=1e-9)
    assert initial_bearing_deg(0, 0, 0, 1) == pytest.approx(90.0)
    assert initial_bearing_deg(1, 0, 0, 0) == pytest.approx(180.0)
    assert initial_bearing_deg(0, 1, 0, 0) == pytest.approx(270.0)


@pytest.mark.parametrize("direction", ["meridian", "diagonal"])
def test_a_track_read_as_a_profile_and_as_a_coastdown_log_gives_one_distance(tmp_path,
                                                                            direction):
    # 120 s at a steady 20 m/s: 2400 m of great circle (R * angle along a meridian)
    n = 121
    step_deg = math.degrees(20.0 / R_M)
    if direction == "meridian":
        lats, lons = 45.0 + step_deg * np.arange(n), np.full(n, 7.0)
    else:   # north-east: equal east and north steps of 20/sqrt(2) m
        k = step_deg / math.sqrt(2)
        lats = 45.0 + k * np.arange(n)
        lons = 7.0 + k * np.arange(n) / np.cos(np.radians(lats))
    path = gpx_file(tmp_path, lats, lons)
    exact = float(np.sum(haversine_distance_m(lats[:-1], lons[:-1], lats[1:], lons[1:])))
    profile = read_gpx(path, use_elevation=False)
    log = read_coastdown_log(path)
    log_m = trapezoid(log.speed_ms, log.time_s)
    # steady motion: the Savitzky-Golay slope and the central differences are exact for a
    # straight line (Savitzky and Golay 1964); the two readers share one sphere
    assert profile.distance_m == pytest.approx(exact, rel=1e-6)
    assert log_m == pytest.approx(exact, rel=1e-6)
    assert profile.distance_m == pytest.approx(log_m, rel=1e-6)
    if direction == "meridian":
        assert exact == pytest.approx(2400.0, rel=1e-9)


def test_gpx_files_are_noted_as_read(tmp_path):
    path = gpx_file(tmp_path, 45.0 + 1e-4 * np.arange(12), np.full(12, 7.0))
    with tracking() as seen:
        read_gpx(path)
    assert {f.path for f in seen} == {str(path.resolve())}
    with tracking() as seen:
        read_coastdown_log(path)
    assert {f.path for f in seen} == {str(path.resolve())}


@pytest.mark.parametrize("lat, lon, words", [(91.0, 7.0, "latitude 91°"),
                                             (-90.5, 7.0, "latitude -90.5°"),
                                             (45.0, 181.0, "longitude 181°"),
                                             (45.0, -200.0, "longitude -200°")])
def test_impossible_positions_are_refused_with_point_and_line(tmp_path, lat, lon, words):
    # latitude is within ±90°, longitude within ±180° (definition of the coordinates)
    lats, lons = 45.0 + 1e-4 * np.arange(12), np.full(12, 7.0)
    lats[5], lons[5] = lat, lon
    path = gpx_file(tmp_path, lats, lons)   # point 6 on line 9 (3 lines of header)
    for read in (read_gpx, read_coastdown_log, read_gpx_track):
        with pytest.raises(InputError) as info:
            read(path)
        err = info.value
        assert words in str(err) and "track point 6" in str(err)
        assert err.line == 9 and err.file == str(path) and "\n" not in str(err)


def test_check_coordinates_names_field_and_line():
    with pytest.raises(InputError) as info:
        check_coordinates([10, 20, 95], [0, 0, 0], file="a.csv", lines=[2, 3, 4],
                          lat_field="latitude")
    assert info.value.line == 4 and info.value.field == "latitude"
    check_coordinates([90, -90], [180, -180])   # the bounds themselves are positions


def test_csv_speed_files_and_coastdown_logs_are_noted_as_read(tmp_path):
    trip = tmp_path / "trip.csv"
    trip.write_text("time_s,speed_kmh\n0,0\n1,3.6\n2,7.2\n", encoding="utf-8")
    log = tmp_path / "log.csv"
    log.write_text("time_s,speed_ms\n" + "".join(f"{i},{30 - i}\n" for i in range(12)),
                   encoding="utf-8")
    from tractive.profiles import read_speed_csv

    with tracking() as seen:
        read_speed_csv(trip)
        read_coastdown_log(log)
    assert {f.path for f in seen} == {str(trip.resolve()), str(log.resolve())}
