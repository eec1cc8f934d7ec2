"""Profiles from CSV files, GPS tracks and profile strings; combining; statistics."""

from __future__ import annotations

import json
import math
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tractive.errors import InputError
from tractive.profiles import (EARTH_RADIUS_M, MAX_GRADE_FRACTION, PAUSE_RADIUS_M,
                               STOP_SPEED_MS, Phase, Profile, concatenate,
                               constant_speed, haversine_distance_m, list_cycles, load_cycle,
                               profile_statistics, read_gpx, read_speed_csv, repeat, resample,
                               resolve_profile)

DATA = Path(__file__).parent / "data"

# exact unit factors, NIST SP 811 Appendix B
MPH_MS = 0.44704
# mean Earth radius R1 = 6 371 008.7714 m of GRS 80 (Moritz 2000; value from memory, not
# confirmed in the primary text), rounded to 0.1 m: the sphere radius the GPX reader states
# for its haversine distances
R_M = 6_371_008.8


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def trapezoid(y, x):
    trap = getattr(np, "trapezoid", None) or np.trapz
    return float(trap(y, x))


# ---------------------------------------------------------------------------
# Profile basics
# ---------------------------------------------------------------------------

def test_profile_arrays_are_read_only_copies_and_to_dict_is_json():
    t = np.arange(4.0)
    v = np.array([0.0, 1.0, 2.0, 0.0])
    p = Profile("x", t, v, 0.01)
    v[1] = 99.0
    assert p.speed_ms[1] == 1.0
    assert not p.time_s.flags.writeable and not p.grade_fraction.flags.writeable
    assert np.array_equal(p.grade_fraction, np.full(4, 0.01))
    d = p.to_dict()
    assert json.loads(json.dumps(d)) == d
    # distance by the trapezoid rule: (0+1)/2 + (1+2)/2 + (2+0)/2 = 3 m (numpy trapezoid)
    assert p.distance_m == pytest.approx(trapezoid(p.speed_ms, p.time_s)) == 3.0


@pytest.mark.parametrize("t, v, what", [
    ([0, 1, 3], [0, 1, 0], "time steps"),
    ([1, 2, 3], [0, 1, 0], "start at 0"),
    ([0, 1, 2], [0, -1, 0], "negative"),
    ([0, 1, 2], [0, np.nan, 0], "finite"),
    ([0], [0], "at least 2"),
])
def test_profile_rejects_bad_arrays(t, v, what):
    with pytest.raises(InputError, match=what):
        Profile("bad", t, v, 0.0)


def test_profile_rejects_phase_outside_span():
    with pytest.raises(InputError, match="outside"):
        Profile("p", [0, 1, 2], [0, 1, 0], 0.0, (Phase("a", 0, 5),))


# ---------------------------------------------------------------------------
# CSV reading
# ---------------------------------------------------------------------------

def test_csv_in_kmh_mph_and_ms_give_the_same_profile(tmp_path):
    # one trace written three ways with the exact factors 1 mph = 1.609344 km/h = 0.44704 m/s
    # (NIST SP 811); the decimal products below are exact
    mph = ["0", "10", "30", "55.5", "0"]
    kmh = ["0", "16.09344", "48.28032", "89.318592", "0"]
    ms = ["0", "4.4704", "13.4112", "24.81072", "0"]
    profiles = []
    for unit, values in (("mph", mph), ("kmh", kmh), ("ms", ms)):
        rows = "".join(f"{i},{x}\n" for i, x in enumerate(values))
        profiles.append(read_speed_csv(write(tmp_path, f"{unit}.csv", f"time_s,speed_{unit}\n"
                                                                      + rows)))
    expected = np.array([float(x) for x in mph]) * MPH_MS
    for p in profiles:
        np.testing.assert_allclose(p.speed_ms, expected, rtol=1e-14, atol=0)
        assert np.array_equal(p.time_s, np.arange(5.0))
        assert p.name.endswith(".csv") and "speed file" in p.source


def test_uneven_sampling_is_resampled_like_numpy_interp():
    # fixture: times 10.0 ... 18.0 s, uneven, with comments, a blank line and an extra column
    t = np.array([10.0, 10.8, 12.0, 13.5, 15.0, 16.2, 18.0])
    kmh = np.array([0, 3.6, 18.0, 36.0, 36.0, 21.6, 0])
    grade_pct = np.array([0, 0.5, 1.0, 2.0, 2.0, -1.0, 0])
    for dt in (1.0, 0.5, 0.3):
        p = read_speed_csv(DATA / "logged_trip.csv", dt_s=dt)
        n = int(math.floor(8.0 / dt + 1e-9)) + 1
        grid = np.arange(n) * dt
        np.testing.assert_allclose(p.time_s, grid)
        # reference: numpy.interp on the shifted times, km/h / 3.6 (exact definition)
        np.testing.assert_allclose(p.speed_ms, np.interp(grid, t - 10.0, kmh / 3.6), rtol=1e-12,
                                   atol=1e-12)
        np.testing.assert_allclose(p.grade_fraction, np.interp(grid, t - 10.0, grade_pct / 100),
                                   rtol=1e-12, atol=1e-15)


def test_semicolon_delimited_file(tmp_path):
    path = write(tmp_path, "semi.csv", "time_s;speed_ms\n0;1\n1;2\n2;3\n")
    np.testing.assert_array_equal(read_speed_csv(path).speed_ms, [1, 2, 3])


def test_grade_from_elevation_is_exact_for_a_steady_climb_with_a_stop(tmp_path):
    # 10 m/s, standing still from 80 to 120 s; elevation rises 4 m per 100 m of road
    # (along the slope): sin(theta) = 0.04, so the grade rise/run is
    # tan(theta) = 0.04 / sqrt(1 - 0.04^2) everywhere (trigonometry), also while stopped
    # (the vehicle stands on the slope)
    t = np.arange(0, 201.0)
    v = np.where((t >= 80) & (t <= 120), 0.0, 10.0)
    s = np.concatenate([[0], np.cumsum(0.5 * (v[1:] + v[:-1]))])
    z = 250.0 + 0.04 * s
    text = "time_s,speed_ms,elevation_m\n" + "".join(
        f"{a:g},{b:g},{float(c)!r}\n" for a, b, c in zip(t, v, z))
    p = read_speed_csv(write(tmp_path, "climb.csv", text))
    np.testing.assert_allclose(p.grade_fraction, 0.04 / math.sqrt(1 - 0.04 ** 2), rtol=0,
                               atol=1e-9)


def test_grade_from_elevation_follows_a_parabola_away_from_the_ends(tmp_path):
    # a least-squares straight line over a window centred on a point of a parabola
    # z = a s^2 has the slope 2 a s of its tangent there (property of least squares on a
    # symmetric window), so away from the ends the slope is exactly 2 a s; the distance
    # runs along the road, so that slope is sin(theta) and the grade is its tangent
    # 2 a s / sqrt(1 - (2 a s)^2) (trigonometry)
    a = 1e-5
    t = np.arange(0, 301.0)
    v = np.full_like(t, 5.0)
    s = 5.0 * t
    text = "time_s,speed_ms,elevation_m\n" + "".join(
        f"{x:g},{y:g},{float(a * d * d)!r}\n" for x, y, d in zip(t, v, s))
    p = read_speed_csv(write(tmp_path, "parabola.csv", text), grade_window_m=100.0)
    inner = (s >= 60) & (s <= s[-1] - 60)
    sine = 2 * a * s[inner]
    np.testing.assert_allclose(p.grade_fraction[inner], sine / np.sqrt(1 - sine ** 2), rtol=0,
                               atol=1e-9)


def test_grade_from_elevation_is_clipped(tmp_path):
    # a 50 m cliff over 20 m of road would be a 250 % grade: clipped to the documented limit
    # of 30 % (common practice: public roads steeper than about 30 % are rare, so a steeper
    # grade from elevation data is taken as a data error)
    z = ["0"] * 10 + ["50"] * 11
    text = "time_s,speed_ms,elevation_m\n" + "".join(f"{i},2,{z[i]}\n" for i in range(21))
    p = read_speed_csv(write(tmp_path, "cliff.csv", text), grade_window_m=10.0)
    assert MAX_GRADE_FRACTION == 0.30  # the stated bound (common practice, see above)
    assert p.grade_fraction.max() == pytest.approx(0.30)  # clipped at 30 % (common practice)


def _csv_error(tmp_path, text, **kw):
    path = write(tmp_path, "bad.csv", text)
    with pytest.raises(InputError) as info:
        read_speed_csv(path, **kw)
    err = info.value
    assert err.file == str(path) and str(path) in str(err)
    assert "\n" not in str(err)
    return err


@pytest.mark.parametrize("text, field, line, words", [
    ("t,speed_kmh\n0,1\n1,2\n", None, 1, "pass --time-column t"),
    ("time_s,speed\n0,1\n1,2\n", "speed", 1, "speed_kmh, speed_mph or speed_ms"),
    ("time_s,velocity\n0,1\n1,2\n", "velocity", 1, "speed_kmh, speed_mph or speed_ms"),
    ("time_s,v\n0,1\n1,2\n", "v", 1, "speed_kmh, speed_mph or speed_ms"),
    ("time_s,rpm\n0,1\n1,2\n", None, 1, "no speed column"),
    ("time_s,speed_kmh,speed_mph\n0,1,1\n1,2,2\n", "speed_mph", 1, "two speed columns"),
    ("time_s,speed_kmh\n0,1\n1,abc\n", "speed_kmh", 3, "not a number"),
    ("time_s,speed_kmh\n0,1\n1,\n", "speed_kmh", 3, "empty cell"),
    ("time_s,speed_kmh\n0,1\n1,nan\n2,3\n", "speed_kmh", 3, "finite"),
    ("time_s,speed_kmh\n0,1\n1,2\n2,inf\n", "speed_kmh", 4, "finite"),
    ("time_s,speed_kmh\n0,1\nx,2\n", "time_s", 3, "not a number"),
    ("time_s,speed_kmh\n0,1\n1,-2\n", "speed_kmh", 3, "negative"),
    ("time_s,speed_kmh\n0,1\n1,2\n1,3\n", "time_s", 4, "increase"),
    ("time_s,speed_kmh\n0,1\n2,2\n1,3\n", "time_s", 4, "increase"),
    ("time_s,speed_kmh\n0,1\n1,2\n100,3\n", "time_s", 4, "--max-gap-s"),
    ("time_s,speed_kmh\n0,1\n", None, None, "at least 2 data rows"),
    ("", None, 1, "no header"),
    ("time_s,speed_kmh\n0,\"1\n1,2\n", None, 3, "malformed CSV"),
    ("time_s,speed_kmh\n0,\"1\"x\n1,2\n", None, 2, "malformed CSV"),
    ("time_s,speed_kmh\n0,1\n1,2,3\n", None, 3, "malformed CSV"),
    ("time_s,speed_kmh,grade_pct,elevation_m\n0,1,0,0\n1,2,0,0\n", "elevation_m", 1,
     "not both"),
    ("time_s,speed_kmh,grade_pct\n0,1,0\n1,2,150\n", "grade_pct", 3, "within"),
    ("time_s,speed_kmh,time_s\n0,1,0\n1,2,1\n", "time_s", 1, "twice"),
    ("# comment\n\ntime_s,speed_kmh\n0,1\n\n1,x\n", "speed_kmh", 6, "not a number"),
    ("time_s,speed_kmh\n0,1\n1\n2,3\n", None, 3, "malformed CSV"),
    ("timestamp,speed_kmh\n12:00:00,1\n12:00:01,2\n,3\n", "timestamp", 4, "missing time"),
])
def test_csv_errors_name_file_column_and_line(tmp_path, text, field, line, words):
    err = _csv_error(tmp_path, text)
    assert words in str(err)
    assert err.field == field
    assert err.line == line
    if line is not None:
        assert f"bad.csv:{line}:" in str(err)


def test_csv_gap_limit_is_a_parameter(tmp_path):
    text = "time_s,speed_kmh\n0,1\n30,2\n"
    assert _csv_error(tmp_path, text, max_gap_s=10).line == 3
    assert read_speed_csv(tmp_path / "bad.csv", max_gap_s=30).duration_s == 30


def test_csv_unreadable_files(tmp_path):
    with pytest.raises(InputError, match="file not found") as info:
        read_speed_csv(tmp_path / "missing.csv")
    assert info.value.file.endswith("missing.csv")
    folder = tmp_path / "folder.csv"
    folder.mkdir()
    with pytest.raises(InputError, match="directory"):
        read_speed_csv(folder)
    binary = tmp_path / "binary.csv"
    binary.write_bytes(b"\xff\xfe\x00\x81garbage")
    with pytest.raises(InputError, match="UTF-8") as info:
        read_speed_csv(binary)
    assert info.value.file == str(binary)


def test_csv_shorter_than_one_step(tmp_path):
    err = _csv_error(tmp_path, "time_s,speed_kmh\n0,1\n0.5,2\n", dt_s=1.0)
    assert "less than one time step" in str(err)


# ---------------------------------------------------------------------------
# GPX
# ---------------------------------------------------------------------------

T0 = datetime(2024, 5, 1, 8, 0, 0, tzinfo=timezone.utc)


def gpx_text(lats, lons, times_s=None, eles=None, *, drop_time_at=None):
    pts = []
    for i, (lat, lon) in enumerate(zip(lats, lons)):
        inner = ""
        if eles is not None:
            inner += f"<ele>{float(eles[i])!r}</ele>"
        if i != drop_time_at:
            t = T0 + timedelta(seconds=float(times_s[i] if times_s is not None else i))
            inner += f"<time>{t.strftime('%Y-%m-%dT%H:%M:%S.%fZ')}</time>"
        pts.append(f'      <trkpt lat="{float(lat)!r}" lon="{float(lon)!r}">{inner}</trkpt>')
    half = len(pts) // 2
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<gpx version="1.1" creator="test" xmlns="http://www.topografix.com/GPX/1/1">\n'
            "  <trk>\n    <trkseg>\n" + "\n".join(pts[:half]) + "\n    </trkseg>\n"
            "    <trkseg>\n" + "\n".join(pts[half:]) + "\n    </trkseg>\n  </trk>\n</gpx>\n")


def test_stated_earth_radius():
    assert EARTH_RADIUS_M == R_M
    # GRS 80 mean radius R1 (Moritz 2000; from memory)
    assert abs(EARTH_RADIUS_M - 6_371_008.7714) < 0.05


def test_gpx_along_a_meridian_distance_speed_and_grade(tmp_path):
    # 121 points 0.0001 degree apart along the meridian at 7 degrees east, one per second,
    # rising 5 % of the horizontal step at each point. Along a meridian the haversine
    # formula reduces to R * (difference of latitude in radians) (Sinnott 1984), with
    # R = 6 371 008.8 m, the GRS 80 mean radius (Moritz 2000; from memory).
    n = 121
    lats = 46.0 + 0.0001 * np.arange(n)
    step_m = R_M * math.radians(0.0001)
    eles = 300.0 + 0.05 * step_m * np.arange(n)
    path = write(tmp_path, "meridian.gpx", gpx_text(lats, [7.0] * n, eles=eles))
    p = read_gpx(path)
    expected_m = R_M * math.radians(lats[-1] - lats[0])
    assert p.duration_s == n - 1 and p.dt_s == 1.0
    assert p.distance_m == pytest.approx(expected_m, rel=1e-9)
    np.testing.assert_allclose(p.speed_ms, step_m, rtol=1e-6)
    np.testing.assert_allclose(p.grade_fraction, 0.05, rtol=0, atol=1e-6)
    assert p.name == "meridian.gpx" and "GPS track" in p.source


def test_gpx_speed_smoothing_keeps_a_steady_acceleration(tmp_path):
    # distance 0.5 a t^2 along a meridian: the least-squares slope over a window centred on
    # t of a parabola is its derivative a t (property of least squares), so away from the
    # ends the smoothed speed is exactly a t
    a = 0.8
    t = np.arange(0, 61.0)
    lats = 46.0 + np.degrees(0.5 * a * t ** 2 / R_M)
    p = read_gpx(write(tmp_path, "accel.gpx", gpx_text(lats, [7.0] * len(t))))
    inner = (t >= 3) & (t <= 57)
    np.testing.assert_allclose(p.speed_ms[inner], a * t[inner], rtol=0, atol=1e-6)
    assert np.all(p.speed_ms >= 0)


def test_gpx_jitter_at_standstill_reads_as_zero(tmp_path):
    # model-definition check (no outside reference): the reader documents that speeds below
    # stop_speed_ms (default 0.5 m/s) read as zero. 0.1 m back-and-forth jitter at 1 s steps
    # moves at most 0.1 m/s (arithmetic), well under the threshold
    jitter = np.degrees(0.1 * (np.arange(30) % 2) / R_M)
    p = read_gpx(write(tmp_path, "stand.gpx", gpx_text(46.0 + jitter, [7.0] * 30)))
    assert np.all(p.speed_ms == 0.0)  # model definition: below the stop threshold -> 0
    p = read_gpx(tmp_path / "stand.gpx", stop_speed_ms=0.0)
    # consistency check: with the threshold off, the jitter shows as motion
    assert p.speed_ms.max() > 0


def test_gpx_route_points_fixture_uneven_times_and_resampling():
    # route points 2 s apart; 0.0001 degree of latitude = R * radians(0.0001) m (haversine
    # along a meridian), elevation +0.5 m per point
    p = read_gpx(DATA / "route_only.gpx")
    step_m = R_M * math.radians(0.0001)
    assert p.duration_s == 12 and len(p) == 13
    np.testing.assert_allclose(p.speed_ms, step_m / 2, rtol=1e-6)
    np.testing.assert_allclose(p.grade_fraction, 0.5 / step_m, rtol=1e-6)


def test_haversine_matches_gpxpy_scaled_to_our_radius():
    # gpxpy's haversine distance uses a 6 378 137 m sphere; the formula scales with R
    from gpxpy import geo

    pairs = [(46.0, 7.0, 46.3, 7.4), (-33.9, 18.4, 51.5, -0.1), (0.0, 0.0, 0.0, 90.0)]
    for lat1, lon1, lat2, lon2 in pairs:
        theirs = geo.haversine_distance(lat1, lon1, lat2, lon2)
        ours = haversine_distance_m(lat1, lon1, lat2, lon2)
        assert ours == pytest.approx(theirs * R_M / geo.EARTH_RADIUS, rel=1e-9)
    # a quarter of the equator is R * pi / 2 (spherical geometry)
    assert haversine_distance_m(0, 0, 0, 90) == pytest.approx(R_M * math.pi / 2)


def _gpx_error(tmp_path, text, **kw):
    path = write(tmp_path, "bad.gpx", text)
    with pytest.raises(InputError) as info:
        read_gpx(path, **kw)
    err = info.value
    assert err.file == str(path) and str(path) in str(err) and "\n" not in str(err)
    return err


def test_gpx_point_without_time_names_point_and_line(tmp_path):
    lats = 46.0 + 0.0001 * np.arange(6)
    text = gpx_text(lats, [7.0] * 6, drop_time_at=4)
    err = _gpx_error(tmp_path, text)
    line = text.splitlines().index(next(ln for ln in text.splitlines()
                                        if f'lat="{float(lats[4])!r}"' in ln)) + 1
    assert "track point 5" in str(err) and "time" in str(err)
    assert err.line == line


def test_gpx_time_not_increasing_and_gap(tmp_path):
    lats = 46.0 + 0.0001 * np.arange(5)
    err = _gpx_error(tmp_path, gpx_text(lats, [7.0] * 5, times_s=[0, 1, 2, 2, 3]))
    assert "track point 4" in str(err) and "increase" in str(err) and err.line is not None
    # a 198 s gap across which the position jumps 0.01 degree of latitude = 1112 m
    # (R * radians(0.01), haversine along a meridian): not a pause, an error
    jumped = lats + np.array([0, 0, 0, 0.01, 0.01])
    err = _gpx_error(tmp_path, gpx_text(jumped, [7.0] * 5, times_s=[0, 1, 2, 200, 201]))
    assert "track point 4" in str(err) and "--max-gap-s" in str(err) and err.line is not None
    assert f"moved {R_M * math.radians(0.0101):.0f} m" in str(err)  # 0.0101 degree step
    assert "split the track" in str(err)  # the workaround is named


@pytest.mark.parametrize("text, words", [
    ("this is not xml", "not a valid GPX"),
    ('<gpx version="1.1"><trk><trkseg><trkpt lat="x" lon="1"/></trkseg></trk></gpx>',
     "not a valid GPX"),
    ('<gpx version="1.1"><wpt lat="1" lon="1"/></gpx>', "no track points or route points"),
    ('<gpx version="1.1"><trk><trkseg><trkpt lat="1" lon="1"><time>2024-05-01T08:00:00Z'
     '</time></trkpt></trkseg></trk></gpx>', "at least 2"),
])
def test_gpx_malformed(tmp_path, text, words):
    assert words in str(_gpx_error(tmp_path, text))


def test_gpx_missing_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        read_gpx(tmp_path / "nope.gpx")


# GPS noise, edges, pauses, stated speeds


def en_to_latlon(east_m, north_m, lat0=46.0, lon0=7.0):
    """Inverse of the reader's documented east-north map: north = R (phi - phi0), each
    east step = R cos(phi_mid) (lambda_i - lambda_(i-1))."""
    phi = math.radians(lat0) + np.asarray(north_m, float) / R_M
    mid = 0.5 * (phi[1:] + phi[:-1])
    dlam = np.diff(np.asarray(east_m, float)) / (R_M * np.cos(mid))
    lam = math.radians(lon0) + np.concatenate([[0.0], np.cumsum(dlam)])
    return np.degrees(phi), np.degrees(lam)


def drive_m(t, a=1.0, v_max=10.0, length_m=600.0):
    """Distance [m] along a drive from rest to rest: a up to v_max, cruise, -a down to rest
    (kinematics of constant acceleration: s = a t^2 / 2)."""
    t_a = v_max / a
    s_a = 0.5 * a * t_a ** 2
    t_end = 2 * t_a + (length_m - 2 * s_a) / v_max
    t = np.clip(np.asarray(t, float), 0.0, t_end)
    return np.where(t < t_a, 0.5 * a * t ** 2,
                    np.where(t < t_end - t_a, s_a + v_max * (t - t_a),
                             length_m - 0.5 * a * (t_end - t) ** 2)), t_end


def test_local_east_north_steps_match_the_haversine_distance():
    from tractive.geo import local_east_north_m as _local_east_north_m

    # steps of up to 1 km in every direction: sqrt(de^2 + dn^2) equals the haversine
    # great-circle distance (Sinnott 1984) to a relative (step / R)^2 ~ 1e-8
    rng = np.random.default_rng(3)
    lat = 46.0 + np.cumsum(rng.uniform(-0.009, 0.009, 200))
    lon = 7.0 + np.cumsum(rng.uniform(-0.013, 0.013, 200))
    east, north = _local_east_north_m(lat, lon, R_M)
    ours = np.hypot(np.diff(east), np.diff(north))
    theirs = haversine_distance_m(lat[:-1], lon[:-1], lat[1:], lon[1:])
    np.testing.assert_allclose(ours, theirs, rtol=1e-7)
    # and the test helper inverts it (round trip)
    back_lat, back_lon = en_to_latlon(east, north, lat[0], lon[0])
    np.testing.assert_allclose(back_lat, lat, rtol=0, atol=1e-11)
    np.testing.assert_allclose(back_lon, lon, rtol=0, atol=1e-11)


def test_gpx_stop_and_go_with_1_m_noise(tmp_path):
    # 10 s at rest, a 600 m drive (1 m/s^2 to 36 km/h, cruise, 1 m/s^2 to rest), 60 s stop,
    # the same drive again, 10 s at rest; Gaussian noise of 1 m standard deviation on the
    # east and on the north position of every 1 s point (seeded)
    one, t_drive = drive_m(np.arange(0.0, 71.0))
    assert t_drive == 70.0
    t = np.arange(0.0, 10 + 70 + 60 + 70 + 10 + 1)
    s = np.where(t < 80, drive_m(t - 10)[0], 600.0 + drive_m(t - 140)[0])
    rng = np.random.default_rng(20240501)
    east = s + rng.normal(0.0, 1.0, t.size)
    north = rng.normal(0.0, 1.0, t.size)
    lat, lon = en_to_latlon(east, north)
    path = write(tmp_path, "stopgo.gpx", gpx_text(lat, lon))
    p = read_gpx(path)
    stats = profile_statistics(p)
    # distance: the true 1200 m (kinematics) within 1 %
    assert abs(stats.distance_km * 1000 / 1200.0 - 1) < 0.01
    # idle: true idle steps 10 + 60 + 10 = 80 of 220; the 11 s window rounds each of the
    # four corners between rest and 1 m/s^2, where the smoothed speed passes the 0.5 m/s
    # stop threshold up to 3 samples early or late (model bound), so within 4 x 3 steps
    idle_steps = round(stats.idle_share * p.duration_s)
    assert 80 - 12 <= idle_steps <= 80
    # during the stop, more than a half-window from its ends, the smoothed speed (without
    # the stop threshold) stays below the stop threshold (model definition)
    raw = read_gpx(path, stop_speed_ms=0.0)
    inside = (p.time_s >= 80 + 6) & (p.time_s <= 140 - 6)
    assert raw.speed_ms[inside].max() < STOP_SPEED_MS
    assert np.all(p.speed_ms[inside] == 0.0)
    # the clean track: the same distance to 0.2 % (stated band: the stop threshold drops
    # the slowest samples of each rounded corner, under 1 m per corner)
    lat0, lon0 = en_to_latlon(s, np.zeros_like(s))
    clean = read_gpx(write(tmp_path, "clean.gpx", gpx_text(lat0, lon0)))
    assert abs(clean.distance_m / 1200.0 - 1) < 0.002
    assert 80 - 12 <= round(profile_statistics(clean).idle_share * clean.duration_s) <= 80


def test_gpx_noise_barely_changes_positive_kinetic_energy(tmp_path):
    # a 9 km loop (a circle) driven at v = 15 + 5 sin(2 pi t / 60) m/s for 10 periods.
    # Over whole periods the positive increments of v^2 add up to v_max^2 - v_min^2 =
    # 400 - 100 m^2/s^2 per period over 15 x 60 m: PKE = 1/3 m/s^2 (calculus identity)
    t = np.arange(0.0, 601.0)
    s = 15 * t - 5 * 60 / (2 * math.pi) * (np.cos(2 * math.pi * t / 60) - 1)
    radius = s[-1] / (2 * math.pi)
    east, north = radius * np.sin(s / radius), radius * (1 - np.cos(s / radius))
    lat, lon = en_to_latlon(east, north)
    clean = profile_statistics(read_gpx(write(tmp_path, "loop.gpx", gpx_text(lat, lon))))
    # the 11 s window flattens a 60 s swing by a few percent (stated band: 5 %)
    assert abs(clean.positive_kinetic_energy_m_per_s2 * 3 - 1) < 0.05
    assert clean.distance_km * 1000 == pytest.approx(s[-1], rel=1e-3)
    rng = np.random.default_rng(77)
    lat, lon = en_to_latlon(east + rng.normal(0, 1, t.size), north + rng.normal(0, 1, t.size))
    noisy = profile_statistics(read_gpx(write(tmp_path, "noisy.gpx", gpx_text(lat, lon))))
    # 1 m white position noise: PKE within 5 % of the clean track's (stated band)
    assert abs(noisy.positive_kinetic_energy_m_per_s2
               / clean.positive_kinetic_energy_m_per_s2 - 1) < 0.05
    assert abs(noisy.distance_km / clean.distance_km - 1) < 0.005


def test_gpx_start_and_end_at_rest_and_joins(tmp_path):
    # from rest at 1 m/s^2 for 10 s, 10 m/s for 20 s, 1 m/s^2 down to rest: speed is a t
    # (kinematics), so 0, 1, 2 m/s at 0, 1, 2 s, and mirrored at the end
    t = np.arange(0.0, 41.0)
    s, t_end = drive_m(t, length_m=300.0)
    assert t_end == 40.0
    lat, lon = en_to_latlon(np.zeros_like(s), s)
    write(tmp_path, "lap.gpx", gpx_text(lat, lon))
    p = read_gpx(tmp_path / "lap.gpx")
    np.testing.assert_allclose(p.speed_ms[:3], [0.0, 1.0, 2.0], rtol=0, atol=1e-6)
    np.testing.assert_allclose(p.speed_ms[-3:], [2.0, 1.0, 0.0], rtol=0, atol=1e-6)
    assert p.speed_ms[0] == 0.0 and p.speed_ms[-1] == 0.0
    # starts and ends at rest on level road: the two laps share the sample at rest
    two = resolve_profile("lap.gpx*2", base_dir=tmp_path)
    assert len(two) == 2 * len(p) - 1
    assert two.distance_m == pytest.approx(2 * p.distance_m, rel=1e-12)


def _two_segments(times_a, times_b, north_a, north_b, version="1.1"):
    def seg(times, north):
        lat, _ = en_to_latlon(np.zeros_like(north), north)
        return "".join(
            f'<trkpt lat="{float(la)!r}" lon="7.0"><time>'
            f"{(T0 + timedelta(seconds=float(ti))).strftime('%Y-%m-%dT%H:%M:%SZ')}"
            "</time></trkpt>\n" for la, ti in zip(lat, times))
    return (f'<?xml version="1.0"?>\n<gpx version="1.1" creator="test" '
            f'xmlns="http://www.topografix.com/GPX/1/1">\n<trk><trkseg>\n'
            + seg(times_a, north_a) + "</trkseg>\n<trkseg>\n" + seg(times_b, north_b)
            + "</trkseg></trk>\n</gpx>\n")


def test_gpx_cafe_stop_between_segments_is_standing_still(tmp_path):
    # two drives of 300 m (kinematics as above) with a 10-minute stop between two
    # segments; the second starts 3 m from where the first ended (GPS fix after a restart)
    t = np.arange(0.0, 41.0)
    s, _ = drive_m(t, length_m=300.0)
    text = _two_segments(t, t + 40 + 601, s, 303.0 + s)
    p = read_gpx(write(tmp_path, "cafe.gpx", text))
    assert PAUSE_RADIUS_M == 50.0
    assert p.duration_s == 40 + 601 + 40
    # the pause is standing still: the same profile as a track that logs the stop point
    # every second for the 601 s, without the 3 m offset (consistency check)
    still = np.concatenate([s, np.full(600, 300.0), 300.0 + s])
    times = np.concatenate([t, 40 + np.arange(1.0, 601.0), t + 40 + 601])
    lat, lon = en_to_latlon(np.zeros_like(still), still)
    ref = read_gpx(write(tmp_path, "still.gpx", gpx_text(lat, lon, times_s=times)))
    np.testing.assert_allclose(p.speed_ms, ref.speed_ms, rtol=0, atol=1e-9)
    # speed 0 more than a half-window (5 s) from the ends of the stop; the distance is the
    # two drives (2 x 300 m, kinematics) less the rounding of the corner from 1 m/s^2 to
    # cruise at the two ends of the file (about a h^2 / 8 = 3.1 m each for h = 5 s, model
    # bound) and the stop threshold (under 1 m per corner)
    assert np.all(p.speed_ms[46:636] == 0.0)
    assert 600.0 - 2 * 3.2 - 4 * 1.0 <= p.distance_m <= 600.0
    idle = profile_statistics(p).idle_share
    assert idle * p.duration_s >= 601 - 2 * 3
    # the same gap with a 2 km move across it is an error naming point, line and workaround
    text = _two_segments(t, t + 40 + 601, s, 2300.0 + s)
    err = _gpx_error(tmp_path, text)
    line = [i + 1 for i, ln in enumerate(text.splitlines()) if "<trkpt" in ln][41]
    assert "track point 42" in str(err) and err.line == line
    assert "--max-gap-s" in str(err) and "split the track" in str(err)
    # the workaround: a larger max_gap_s interpolates straight across the gap
    assert read_gpx(tmp_path / "bad.gpx", max_gap_s=700).distance_m > 2500


def test_gpx_stated_point_speeds_are_used_when_every_point_has_one(tmp_path):
    # GPX 1.0 <speed> [m/s] on every point: the profile is numpy.interp of those speeds
    speeds = [0.0, 2.0, 5.0, 7.5, 7.5, 3.0, 0.0]
    times = [0, 2, 4, 6, 8, 9, 12]
    pts = "".join(
        f'<trkpt lat="{46 + 0.0001 * i!r}" lon="7.0"><time>'
        f"{(T0 + timedelta(seconds=ti)).strftime('%Y-%m-%dT%H:%M:%SZ')}</time>"
        f"<speed>{v!r}</speed></trkpt>\n" for i, (ti, v) in enumerate(zip(times, speeds)))
    text = ('<?xml version="1.0"?>\n<gpx version="1.0" creator="test" '
            'xmlns="http://www.topografix.com/GPX/1/0"><trk><trkseg>\n' + pts
            + "</trkseg></trk></gpx>\n")
    p = read_gpx(write(tmp_path, "speeds.gpx", text), stop_speed_ms=0.0)
    np.testing.assert_allclose(p.speed_ms, np.interp(np.arange(13.0), times, speeds),
                               rtol=1e-12)
    # the same in a GPX 1.1 extension (any namespace)
    ext = text.replace('version="1.0"', 'version="1.1"').replace(
        "GPX/1/0", "GPX/1/1").replace("<speed>", "<extensions><x:TrackPointExtension "
                                      'xmlns:x="urn:test"><x:speed>').replace(
        "</speed>", "</x:speed></x:TrackPointExtension></extensions>")
    q = read_gpx(write(tmp_path, "ext.gpx", ext), stop_speed_ms=0.0)
    np.testing.assert_allclose(q.speed_ms, p.speed_ms, rtol=1e-15)
    # one point without a speed: speed from the positions instead (steps of R radians(1e-4))
    partial = text.replace("<speed>7.5</speed>", "", 1)
    r = read_gpx(write(tmp_path, "partial.gpx", partial), use_elevation=False)
    assert not np.allclose(r.speed_ms, p.speed_ms)
    assert r.distance_m == pytest.approx(6 * R_M * math.radians(0.0001), rel=0.05)
    bad = text.replace("<speed>5.0</speed>", "<speed>-1</speed>")
    err = _gpx_error(tmp_path, bad)
    assert "track point 3" in str(err) and "speed" in str(err) and err.line == 5  # 3rd <trkpt> line


def test_steady_errors_name_the_profile_text():
    with pytest.raises(InputError) as info:
        resolve_profile("steady:90kmh:0s")
    assert "'steady:90kmh:0s'" in str(info.value) and "duration" in str(info.value)
    with pytest.raises(InputError) as info:
        resolve_profile("udds+steady:90kmh:0.5s")
    assert "'steady:90kmh:0.5s'" in str(info.value)


def test_csv_gap_message_names_the_workaround(tmp_path):
    err = _csv_error(tmp_path, "time_s,speed_kmh\n0,0\n1,0\n700,0\n")
    assert err.line == 4 and "--max-gap-s" in str(err) and "speed 0" in str(err)


# ---------------------------------------------------------------------------
# building, combining, resampling
# ---------------------------------------------------------------------------

def test_constant_speed_and_its_statistics():
    p = constant_speed(25.0, duration_s=600.0, dt_s=0.5, grade_fraction=0.02)
    assert len(p) == 1201 and p.duration_s == 600.0 and p.dt_s == 0.5
    s = profile_statistics(p)
    # distance = speed x time for a constant speed (definition)
    assert s.distance_km == pytest.approx(25.0 * 600 / 1000, rel=1e-12)
    assert s.mean_speed_kmh == pytest.approx(90.0, rel=1e-12)
    assert s.max_speed_kmh == pytest.approx(90.0, rel=1e-12)
    assert s.mean_moving_speed_kmh == pytest.approx(90.0, rel=1e-12)
    assert s.idle_share == 0.0
    assert s.positive_kinetic_energy_m_per_s2 == 0.0
    assert s.max_accel_ms2 == 0.0 and s.max_decel_ms2 == 0.0
    assert np.all(p.grade_fraction == 0.02)
    with pytest.raises(InputError, match="whole number of time steps"):
        constant_speed(10.0, duration_s=100.0, dt_s=0.3)
    with pytest.raises(InputError):
        constant_speed(-1.0)


def test_pke_and_statistics_of_a_hand_computed_trace():
    # v = 0, 2, 4, 4, 0 m/s at 1 s: v^2 steps +4, +12, 0, -16 -> 16 m^2/s^2;
    # distance (0+2)/2 + (2+4)/2 + (4+4)/2 + (4+0)/2 = 10 m -> PKE 1.6 m/s^2 (hand computed)
    p = Profile("hand", np.arange(5.0), [0, 2, 4, 4, 0], 0.0)
    s = profile_statistics(p)
    assert s.positive_kinetic_energy_m_per_s2 == pytest.approx(1.6, rel=1e-15)
    assert s.distance_km == pytest.approx(0.010)
    assert s.mean_speed_kmh == pytest.approx(10 / 4 * 3.6)
    assert s.max_accel_ms2 == 2.0 and s.max_decel_ms2 == 4.0
    assert s.idle_share == 0.0
    # v = 0, 0, 0, 3, 0: two of four steps idle; moving 2 s over 3 m -> 1.5 m/s (hand computed)
    s = profile_statistics(Profile("idle", np.arange(5.0), [0, 0, 0, 3, 0], 0.0))
    assert s.idle_share == 0.5
    assert s.mean_moving_speed_kmh == pytest.approx(1.5 * 3.6)
    assert s.positive_kinetic_energy_m_per_s2 == pytest.approx(9 / 3)
    # a standstill profile: no distance, PKE and moving speed defined as 0
    s = profile_statistics(Profile("still", np.arange(3.0), [0, 0, 0], 0.0))
    assert (s.distance_km, s.idle_share, s.positive_kinetic_energy_m_per_s2,
            s.mean_moving_speed_kmh) == (0.0, 1.0, 0.0, 0.0)


def test_repeat_and_concatenate_distances_add():
    udds, hwfet = load_cycle("udds"), load_cycle("hwfet")
    three = repeat(udds, 3)
    # both ends at standstill: the joins share a sample, durations and distances add
    assert three.duration_s == 3 * udds.duration_s
    assert three.distance_m == pytest.approx(3 * udds.distance_m, rel=1e-12)
    assert [ph.name for ph in three.phases] == ["udds#1", "udds#2", "udds#3"]
    both = concatenate([udds, hwfet])
    assert both.distance_m == pytest.approx(udds.distance_m + hwfet.distance_m, rel=1e-12)
    assert both.duration_s == udds.duration_s + hwfet.duration_s
    assert both.name == "udds+hwfet"
    # a part that starts at another speed starts one step later; the joining step adds
    # (10 + 0) / 2 m by the trapezoid rule
    steady = constant_speed(10.0, 100.0)
    mixed = concatenate([steady, udds])
    assert mixed.duration_s == 100 + 1 + udds.duration_s
    assert mixed.distance_m == pytest.approx(1000 + 5 + udds.distance_m, rel=1e-12)
    assert trapezoid(mixed.speed_ms, mixed.time_s) == pytest.approx(mixed.distance_m)
    phases = {ph.name: (ph.start_s, ph.end_s) for ph in concatenate([udds,
                                                                    load_cycle("wltc3b")]).phases}
    assert phases["wltc3b:low"] == (1369, 1369 + 589)
    assert repeat(udds, 1) is udds


def test_concatenate_rejects_mixed_steps_and_bad_counts():
    with pytest.raises(InputError, match="different time steps"):
        concatenate([load_cycle("udds"), constant_speed(10.0, 10.0, dt_s=0.5)])
    with pytest.raises(InputError):
        concatenate([])
    for n in (0, -1, 2.5, True):
        with pytest.raises(InputError):
            repeat(load_cycle("udds"), n)


def test_resample_to_a_finer_step_keeps_the_distance_and_matches_interp():
    udds = load_cycle("udds")
    fine = resample(udds, 0.5)
    # the trapezoid rule is exact on the piecewise-linear interpolant: refining keeps it
    assert fine.distance_m == pytest.approx(udds.distance_m, rel=1e-12)
    assert len(fine) == 2 * len(udds) - 1
    coarse = resample(udds, 2.0)
    grid = np.arange(0, 1369, 2.0)
    np.testing.assert_array_equal(coarse.time_s, grid)
    np.testing.assert_allclose(coarse.speed_ms, np.interp(grid, udds.time_s, udds.speed_ms))
    wltc = resample(load_cycle("wltc3b"), 0.25)
    assert [p.name for p in wltc.phases] == ["low", "medium", "high", "extra_high"]
    assert resample(udds, 1.0) is udds


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0, 60), min_size=2, max_size=40), st.integers(2, 8),
       st.sampled_from([0.5, 1.0, 2.0]))
def test_refining_never_changes_distance(speeds, k, dt):
    # trapezoid rule on a refined grid of the linear interpolant equals the original sum
    p = Profile("h", np.arange(len(speeds)) * dt, speeds, 0.0)
    assert resample(p, dt / k).distance_m == pytest.approx(p.distance_m, rel=1e-9, abs=1e-9)


# ---------------------------------------------------------------------------
# resolve_profile grammar
# ---------------------------------------------------------------------------

def test_resolve_bundled_names_and_phases():
    assert resolve_profile("udds") is load_cycle("udds")
    low = resolve_profile(" WLTC3B:Low ")
    assert low.name == "wltc3b:low" and low.duration_s == 589
    # bundled cycles keep their native 1 s step whatever dt_s is (see the next test)
    assert resolve_profile("wltc3b", dt_s=0.5) is load_cycle("wltc3b")


def test_resolve_steady_units_use_exact_factors():
    # 90 km/h = 25 m/s; 55 mph = 55 x 0.44704 m/s (NIST SP 811)
    p = resolve_profile("steady:90kmh")
    assert np.all(p.speed_ms == 25.0) and p.duration_s == 3600 and p.speed_ms[0] == 25.0
    assert resolve_profile("steady:55mph").speed_ms[0] == pytest.approx(55 * MPH_MS, rel=1e-15)
    assert resolve_profile("steady:25ms").speed_ms[0] == 25.0
    assert resolve_profile("steady:90kmh:600s").duration_s == 600
    assert resolve_profile("steady:90kmh:10min").duration_s == 600
    assert resolve_profile("steady:50mph:0.5h").duration_s == 1800
    assert resolve_profile("steady:90kmh:600s", dt_s=0.5).dt_s == 0.5


def test_resolve_repetition_binds_tighter_than_joining():
    u, h = load_cycle("udds").distance_m, load_cycle("hwfet").distance_m
    a = resolve_profile("udds*2+hwfet")
    b = resolve_profile("hwfet + udds * 2")
    assert a.distance_m == pytest.approx(2 * u + h, rel=1e-12)
    assert b.distance_m == pytest.approx(2 * u + h, rel=1e-12)
    assert a.name == "udds*2+hwfet"
    assert resolve_profile("udds*3").distance_m == pytest.approx(3 * u, rel=1e-12)
    w = resolve_profile("wltc3b:low+wltc3b:medium")
    assert w.distance_m == pytest.approx(resolve_profile("wltc3b:low").distance_m
                                         + resolve_profile("wltc3b:medium").distance_m)


def test_resolve_files_relative_to_base_dir_and_quoted(tmp_path):
    sub = tmp_path / "runs"
    sub.mkdir()
    write(sub, "a+b.csv", "time_s,speed_ms\n0,0\n1,2\n2,0\n")
    write(sub, "plain.csv", "time_s,speed_ms\n0,0\n1,4\n2,0\n")
    assert resolve_profile("runs/plain.csv", base_dir=tmp_path).distance_m == 4.0
    # a whole string naming an existing file wins over the '+' operator
    assert resolve_profile("runs/a+b.csv", base_dir=tmp_path).distance_m == 2.0
    both = resolve_profile("'runs/a+b.csv' + runs/plain.csv*2", base_dir=tmp_path)
    assert both.distance_m == 2.0 + 8.0
    gpx = resolve_profile(str(DATA / "route_only.gpx"))
    assert gpx.duration_s == 12


@pytest.mark.parametrize("text, words", [
    ("udsd", "did you mean 'udds'"),
    ("wltc", "did you mean 'wltc3b'"),
    ("nonsense", "bundled cycles: udds, ftp75, hwfet, us06, nycc, wltc3b, wltc2lmh"),
    ("wltc3b:urban", "its phases: low, medium, high, extra_high"),
    ("wltc3b:extrahigh", "did you mean 'extra_high'"),
    ("steady:90", "steady:<speed><unit>"),
    ("steady:-5kmh", "steady:<speed><unit>"),
    ("steady:90kmh:600", "steady:<speed><unit>"),
    ("udds*0", "repeat count"),
    ("udds*x", "repeat count"),
    ("udds**2", "followed by a count"),
    ("udds*2*2", "one repeat count"),
    ("udds+", "ends with '+'"),
    ("+udds", "expected a cycle"),
    ("udds++hwfet", "expected a cycle"),
    ("", "empty profile"),
    ("'runs/x.csv", "unclosed quote"),
    ("missing.csv", "file not found"),
    ("'notes.txt'", "must end in .csv or .gpx"),
])
def test_resolve_errors(text, words):
    with pytest.raises(InputError) as info:
        resolve_profile(text)
    assert words in str(info.value)
    assert "\n" not in str(info.value)


def test_unknown_name_lists_every_bundled_cycle():
    with pytest.raises(InputError) as info:
        resolve_profile("citycycle")
    for c in list_cycles():
        assert c.name in str(info.value)


# ---------------------------------------------------------------------------
# bundled cycles at their native step; plausibility of user traces
# ---------------------------------------------------------------------------

MILE_M = 1609.344      # exact, NIST SP 811 Appendix B


@pytest.mark.parametrize("dt", [0.5, 2.0, 3.0])
def test_bundled_cycles_keep_their_native_step_whatever_dt(dt):
    # 40 CFR 86 App. I(a): the UDDS is a second-by-second schedule of 1369 s and 7.45 mi;
    # resampling it to 2 s or 3 s would cut corners off its speed trace and change both
    udds = resolve_profile("udds", dt_s=dt)
    assert udds is load_cycle("udds") and udds.dt_s == 1.0 and udds.duration_s == 1369
    assert round(udds.distance_m / MILE_M, 2) == 7.45
    # a phase too: the low phase of the WLTC class 3b lasts 589 s (UN GTR No. 15 Annex 1,
    # from memory)
    low = resolve_profile("wltc3b:low", dt_s=dt)
    assert low.dt_s == 1.0 and low.duration_s == 589
    # repetition and joining of bundled cycles alone add their regulated distances
    both = resolve_profile("udds*2+hwfet", dt_s=dt)
    assert both.dt_s == 1.0
    assert both.distance_m == pytest.approx(2 * load_cycle("udds").distance_m
                                            + load_cycle("hwfet").distance_m, rel=1e-12)


def test_user_parts_follow_dt_alone_and_the_bundled_step_when_joined(tmp_path):
    write(tmp_path, "trip.csv", "time_s,speed_ms\n0,0\n1,2\n2,2\n3,2\n4,0\n")
    alone = resolve_profile("trip.csv", base_dir=tmp_path, dt_s=2.0)
    assert alone.dt_s == 2.0
    # trapezoid rule on the 2 s grid 0, 2, 4 s: (0 + 2)/2 x 2 + (2 + 0)/2 x 2 = 4 m
    assert alone.distance_m == pytest.approx(4.0, rel=1e-12)
    joined = resolve_profile("udds+trip.csv", base_dir=tmp_path, dt_s=2.0)
    assert joined.dt_s == 1.0
    # the udds ends and the trip starts at standstill on level road: one shared sample, so
    # distances add; the trip on its 1 s rows is 1 + 2 + 2 + 1 = 6 m (trapezoid rule)
    assert joined.distance_m == pytest.approx(load_cycle("udds").distance_m + 6.0, rel=1e-12)
    assert joined.duration_s == 1369 + 4
    steady = resolve_profile("steady:36kmh:10s+udds", dt_s=2.0)
    # 36 km/h = 10 m/s for 10 s = 100 m; then one 1 s step from 10 m/s down to 0 = 5 m
    assert steady.dt_s == 1.0
    assert steady.distance_m == pytest.approx(100 + 5 + load_cycle("udds").distance_m,
                                              rel=1e-12)


@pytest.mark.parametrize("column, value, ok", [
    ("speed_kmh", 10000.0, False),
    ("speed_kmh", 500.0, True),
    ("speed_mph", 320.0, False),      # 320 x 0.44704 x 3.6 = 515 km/h (NIST SP 811 factor)
    ("speed_mph", 300.0, True),       # 483 km/h
    ("speed_ms", 140.0, False),       # 504 km/h
])
def test_speed_above_500_kmh_is_refused_with_file_column_and_line(tmp_path, column, value,
                                                                  ok):
    # ramps of 10 s from and back to standstill keep the acceleration plausible
    rows = [(0, 0.0), (60, value), (61, value), (120, 0.0)]
    text = f"time_s,{column}\n" + "".join(f"{t},{v}\n" for t, v in rows)
    if ok:
        assert read_speed_csv(write(tmp_path, "fast.csv", text)).speed_ms.max() > 0
        return
    err = _csv_error(tmp_path, text)
    assert err.field == column and err.line == 3 and "500 km/h" in str(err)


def test_steady_speed_above_500_kmh_is_refused():
    with pytest.raises(InputError, match="500 km/h"):
        resolve_profile("steady:600kmh")
    assert resolve_profile("steady:300mph:10s").speed_ms[0] == pytest.approx(300 * MPH_MS)


def test_acceleration_glitch_is_refused_but_hard_braking_and_noise_are_not(tmp_path):
    # a glitch: 0 to 200 km/h within 0.1 s is 556 m/s² (57 g); the row is named
    text = "time_s,speed_kmh\n" + "".join(f"{i / 10:.1f},0\n" for i in range(10)) + \
        "1.0,200\n1.1,0\n1.2,0\n"
    err = _csv_error(tmp_path, text, dt_s=0.1)
    assert err.field == "speed_kmh" and err.line == 12 and "m/s²" in str(err)
    # a racing car braking at 5 g (49 m/s², common practice for the fastest cars, from
    # memory) from 200 km/h, logged at 10 Hz, is accepted and its deceleration kept
    a = 5 * 9.80665
    t = np.arange(0.0, 1.2, 0.1)
    v = np.clip(200 / 3.6 - a * t, 0.0, None)
    text = "time_s,speed_ms\n" + "".join(f"{ti:.1f},{float(vi)!r}\n" for ti, vi in zip(t, v))
    p = read_speed_csv(write(tmp_path, "brake.csv", text), dt_s=0.1)
    assert profile_statistics(p).max_decel_ms2 == pytest.approx(a, rel=1e-9)
    # Doppler speed noise of 1 km/h standard deviation at 10 Hz (common practice: GNSS
    # loggers are better) is far below the limit
    rng = np.random.default_rng(4)
    t = np.arange(0.0, 60.0, 0.1)
    v = 100 + rng.normal(0.0, 1.0, t.size)
    text = "time_s,speed_kmh\n" + "".join(f"{ti:.1f},{vi:.3f}\n" for ti, vi in zip(t, v))
    assert len(read_speed_csv(write(tmp_path, "noisy.csv", text), dt_s=0.1)) == t.size


def test_zero_to_300_kmh_in_one_second_is_refused(tmp_path):
    # 300 km/h in 1 s is 83 m/s² (8.5 g), above the 5 g of the hardest race-car braking
    # (from memory); the message keeps its numbers short
    from tractive.limits import MAX_USER_ACCEL_MS2

    assert 5 * 9.80665 <= MAX_USER_ACCEL_MS2 <= 60.0   # about 5 g (standard gravity, CGPM)
    err = _csv_error(tmp_path, "time_s,speed_kmh\n0,0\n1,0\n2,300\n3,300\n")
    assert err.line == 4 and err.field == "speed_kmh" and "+83 m/s²" in str(err)
    assert len(str(err)) < 400


def test_huge_numbers_in_messages_stay_short(tmp_path):
    # a value near the largest double (1.8e308, IEEE 754) is worded in a few digits
    err = _csv_error(tmp_path, "time_s,speed_kmh\n0,1e300\n1,2\n")
    assert "1e+300" in str(err) and len(str(err)) < 300
    with pytest.raises(InputError) as info:
        resolve_profile("steady:1e300kmh")
    assert len(str(info.value)) < 200


def test_speed_kph_is_km_per_hour_and_misspelt_columns_are_named(tmp_path):
    a = read_speed_csv(write(tmp_path, "a.csv", "time_s,speed_kph\n0,36\n1,72\n"))
    b = read_speed_csv(write(tmp_path, "b.csv", "time_s,speed_kmh\n0,36\n1,72\n"))
    np.testing.assert_array_equal(a.speed_ms, b.speed_ms)
    err = _csv_error(tmp_path, "time_s,speed_kmph\n0,1\n1,2\n")
    assert "did you mean speed_kmh" in str(err) and err.field == "speed_kmph"
    err = _csv_error(tmp_path, "time,lat,lon,speed,bearing\n0,1,1,1,0\n1,1,1,2,0\n")
    assert "columns seen: time, lat, lon, speed, bearing" in str(err)
    assert "pass --speed-column speed:kmh" in str(err) and "_s " not in str(err)


def test_logs_as_they_come_time_and_speed_columns(tmp_path):
    # clock times over midnight and ISO date-times give the seconds between rows
    # (86400 s a day); a named speed column in mph uses the exact factor (NIST SP 811)
    text = "clock,v\n23:59:58,10\n23:59:59.5,20\n00:00:01,30\n"
    p = read_speed_csv(write(tmp_path, "c.csv", text), dt_s=0.5, time_column="clock",
                       speed_column="v", speed_unit="mph")
    assert p.duration_s == 3.0
    np.testing.assert_allclose(p.speed_ms[[0, 3, 6]], np.array([10, 20, 30]) * MPH_MS,
                               rtol=1e-15)
    text = ("timestamp,speed\n2024-05-01T08:00:00Z,36\n2024-05-01T10:00:01+02:00,72\n"
            "2024-05-01T08:00:02Z,72\n")
    p = read_speed_csv(write(tmp_path, "d.csv", text), speed_column="speed:kph")
    np.testing.assert_allclose(p.speed_ms, [10, 20, 20])
    err = _csv_error(tmp_path, "clock,speed_kmh\n0,1\n1,2\n")
    assert "pass --time-column clock" in str(err)


def test_smoothing_a_speed_trace_keeps_a_straight_line_and_calms_noise(tmp_path):
    # a Savitzky-Golay quadratic reproduces a straight line exactly (Savitzky and Golay
    # 1964) and averages white noise down (about 1/sqrt(window) for the centre weights)
    t = np.arange(0.0, 120.0)
    ramp = 5.0 + 0.1 * t
    text = "time_s,speed_ms\n" + "".join(f"{a:g},{float(b)!r}\n" for a, b in zip(t, ramp))
    p = read_speed_csv(write(tmp_path, "ramp.csv", text), smooth_s=11.0)
    np.testing.assert_allclose(p.speed_ms, ramp, rtol=0, atol=1e-9)
    noisy = 20.0 + np.random.default_rng(5).normal(0.0, 1.0, t.size)
    text = "time_s,speed_ms\n" + "".join(f"{a:g},{float(b)!r}\n" for a, b in zip(t, noisy))
    p = read_speed_csv(write(tmp_path, "noisy.csv", text), smooth_s=11.0)
    assert np.std(p.speed_ms[10:-10] - 20.0) < 0.6 * np.std(noisy - 20.0)


def test_gpx_position_jump_is_refused_but_position_noise_is_not(tmp_path):
    # 20 m/s along a meridian for 120 s with 3 m of position noise (common practice for
    # phone GPS): the 5 s least-squares smoother keeps it well below both limits
    rng = np.random.default_rng(9)
    n = 121
    north_m = 20.0 * np.arange(n) + rng.normal(0.0, 3.0, n)
    lats = 46.0 + np.degrees(north_m / R_M)
    p = read_gpx(write(tmp_path, "noisy.gpx", gpx_text(lats, [7.0] * n)))
    assert abs(p.distance_m / 2400.0 - 1) < 0.05
    # one point 2 km off the road: the distance jumps by 4 km, a speed no car reaches
    jumped = north_m.copy()
    jumped[60] += 2000.0
    text = gpx_text(46.0 + np.degrees(jumped / R_M), [7.0] * n)
    with pytest.raises(InputError) as info:
        read_gpx(write(tmp_path, "jump.gpx", text))
    err = info.value
    jump_line = [i + 1 for i, ln in enumerate(text.splitlines()) if "<trkpt" in ln][60]
    assert "track point" in str(err) and "500 km/h" in str(err)
    assert err.line is not None and abs(err.line - jump_line) <= 4


def _run(*args, cwd=None):
    """The ``tractive`` command run in-process (conftest.run_cli)."""
    from conftest import run_cli

    return run_cli(*args, cwd=cwd)


def _run_process(*args):
    """The ``tractive`` command as its own process (one end-to-end smoke test)."""
    import subprocess
    import sys

    return subprocess.run([sys.executable, "-m", "tractive", *map(str, args)],
                          capture_output=True, text=True)


HATCH = Path(__file__).resolve().parents[1] / "examples" / "vehicles" / "hatchback.yaml"


def test_energy_command_refuses_an_implausible_file_in_one_line(tmp_path):
    fast = write(tmp_path, "fast.csv", "time_s,speed_kmh\n0,0\n50,10000\n100,0\n")
    r = _run_process("energy", HATCH, "-c", fast)
    assert r.returncode == 2 and r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr
    assert "fast.csv:3" in lines[0] and "speed_kmh" in lines[0] and "500 km/h" in lines[0]


@pytest.mark.parametrize("value", ["nan", "inf", "0", "-1", "1000"])
def test_energy_dt_option_is_checked(value):
    r = _run("energy", HATCH, "-c", "udds", "--dt-s", value)
    assert r.returncode == 2 and r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "--dt-s" in lines[0] and "Traceback" not in r.stderr


def test_energy_dt_leaves_bundled_cycles_alone():
    import json

    one = json.loads(_run("energy", HATCH, "-c", "udds", "--json").stdout)["results"][0]
    two = json.loads(_run("energy", HATCH, "-c", "udds", "--dt-s", "2", "--json")
                     .stdout)["results"][0]
    # the same regulated 1 Hz trace: the same distance (7.45 mi, 40 CFR 86 App. I) and energy
    assert two["distance_km"] == one["distance_km"]
    assert round(two["distance_km"] * 1000 / MILE_M, 2) == 7.45
    assert two["positive_energy_kwh"] == one["positive_energy_kwh"]
    help_text = " ".join(_run("energy", "--help").stdout.split())
    assert "Bundled cycles keep their native 1 s step" in help_text


def test_a_steady_climb_from_elevation_costs_m_g_sin_theta_per_metre(tmp_path):
    # a ramp of angle theta (sin theta = 0.15) climbed at a steady 10 m/s: the speed file
    # gives the distance along the road, so elevation z = s sin(theta); the wheel work per
    # metre of road is the grade force m g sin(theta) (work against gravity, mechanics),
    # with no road load and no acceleration
    from tractive.demand import wheel_demand
    from tractive.roadload import RoadLoad

    sine, mass, g0 = 0.15, 1500.0, 9.80665      # standard gravity (CGPM 1901)
    t = np.arange(0.0, 301.0)
    s = 10.0 * t
    text = "time_s,speed_ms,elevation_m\n" + "".join(
        f"{a:g},10,{float(sine * d)!r}\n" for a, d in zip(t, s))
    p = read_speed_csv(write(tmp_path, "ramp.csv", text))
    np.testing.assert_allclose(p.grade_fraction, math.tan(math.asin(sine)), rtol=1e-9)
    wd = wheel_demand(RoadLoad.from_coastdown(0.0, 0.0, 0.0), mass, mass, p.time_s,
                      p.speed_ms, p.grade_fraction)
    assert float(wd.positive_energy_j) / wd.distance_m == pytest.approx(mass * g0 * sine,
                                                                       rel=1e-9)
