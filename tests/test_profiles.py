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
from tractive.profiles import (EARTH_RADIUS_M, MAX_GRADE_FRACTION, Phase, Profile, concatenate,
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
    # 10 m/s, standing still from 80 to 120 s; elevation rises 4 m per 100 m of road:
    # rise/run = 0.04 everywhere, also while stopped (the vehicle stands on the slope)
    t = np.arange(0, 201.0)
    v = np.where((t >= 80) & (t <= 120), 0.0, 10.0)
    s = np.concatenate([[0], np.cumsum(0.5 * (v[1:] + v[:-1]))])
    z = 250.0 + 0.04 * s
    text = "time_s,speed_ms,elevation_m\n" + "".join(
        f"{a:g},{b:g},{float(c)!r}\n" for a, b, c in zip(t, v, z))
    p = read_speed_csv(write(tmp_path, "climb.csv", text))
    np.testing.assert_allclose(p.grade_fraction, 0.04, rtol=0, atol=1e-9)


def test_grade_from_elevation_follows_a_parabola_away_from_the_ends(tmp_path):
    # a least-squares straight line over a window centred on a point of a parabola
    # z = a s^2 has the slope 2 a s of its tangent there (property of least squares on a
    # symmetric window), so away from the ends the grade is exactly 2 a s
    a = 1e-5
    t = np.arange(0, 301.0)
    v = np.full_like(t, 5.0)
    s = 5.0 * t
    text = "time_s,speed_ms,elevation_m\n" + "".join(
        f"{x:g},{y:g},{float(a * d * d)!r}\n" for x, y, d in zip(t, v, s))
    p = read_speed_csv(write(tmp_path, "parabola.csv", text), grade_window_m=100.0)
    inner = (s >= 60) & (s <= s[-1] - 60)
    np.testing.assert_allclose(p.grade_fraction[inner], 2 * a * s[inner], rtol=0, atol=1e-9)


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
    ("t,speed_kmh\n0,1\n1,2\n", "time_s", 1, "no time_s"),
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
    ("time_s,speed_kmh\n0,1\n1,2\n100,3\n", "time_s", 4, "max_gap_s"),
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
    err = _gpx_error(tmp_path, gpx_text(lats, [7.0] * 5, times_s=[0, 1, 2, 200, 201]))
    assert "track point 4" in str(err) and "max_gap_s" in str(err)


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
    import subprocess
    import sys

    return subprocess.run([sys.executable, "-m", "tractive", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


HATCH = Path(__file__).resolve().parents[1] / "examples" / "vehicles" / "hatchback.yaml"


def test_energy_command_refuses_an_implausible_file_in_one_line(tmp_path):
    fast = write(tmp_path, "fast.csv", "time_s,speed_kmh\n0,0\n50,10000\n100,0\n")
    r = _run("energy", HATCH, "-c", fast)
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
