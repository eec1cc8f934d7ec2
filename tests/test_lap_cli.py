"""The lap command and the track readers: formats, closed/open, broken lines."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from conftest import run_cli
from tractive.errors import InputError
from tractive.lap import read_track

ROOT = Path(__file__).resolve().parents[1]
WING = ROOT / "examples" / "track-wing"
CLUB = WING / "club_racer.yaml"
CIRCUIT = WING / "circuit.csv"
VAN = ROOT / "examples" / "vehicles" / "electric_van.yaml"


def _circle_csv(path, radius=100.0, spacing=5.0, header="x_m,y_m", closing=False):
    n = int(2 * math.pi * radius / spacing)
    th = np.linspace(0, 2 * math.pi, n, endpoint=False)
    rows = [f"{radius * math.cos(a):.4f},{radius * math.sin(a):.4f}" for a in th]
    if closing:
        rows.append(rows[0])
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_example_lap_json():
    res = run_cli("lap", CLUB, "--track", CIRCUIT, "--json", "--laps", "2")
    assert res.returncode == 0, res.stderr
    doc = json.loads(res.stdout)
    assert doc["track"]["closed"] is True
    # time, distance and mean speed agree (mean speed = distance / time)
    assert doc["mean_speed_kmh"] == pytest.approx(doc["distance_m"] / doc["lap_time_s"] * 3.6)
    assert doc["total_time_s"] == pytest.approx(2 * doc["lap_time_s"])
    assert doc["min_speed_kmh"] < doc["mean_speed_kmh"] < doc["top_speed_kmh"]
    assert sum(doc["limits_share"].values()) == pytest.approx(1.0)
    assert doc["positive_energy_kwh"] > 0
    assert "trace" not in doc


def test_trace_and_units():
    res = run_cli("lap", CLUB, "--track", CIRCUIT, "--json", "--trace")
    doc = json.loads(res.stdout)
    trace = doc["trace"]
    # the closed lap's last point is the start line again, at the lap's distance and time
    assert trace[-1]["distance_m"] == pytest.approx(doc["distance_m"])
    assert trace[-1]["time_s"] == pytest.approx(doc["lap_time_s"])
    assert trace[-1]["speed_kmh"] == pytest.approx(trace[0]["speed_kmh"], abs=1e-6)
    assert {r["limit"] for r in trace} <= {"drive", "braking", "cornering"}
    us = json.loads(run_cli("lap", CLUB, "--track", CIRCUIT, "--json", "--units",
                            "us").stdout)
    # 1 mile = 1609.344 m exactly (NIST SP 811)
    assert us["top_speed_mph"] == pytest.approx(doc["top_speed_kmh"] / 1.609344)
    assert us["distance_mi"] == pytest.approx(doc["distance_m"] / 1609.344)


def test_energy_matches_energy_command(tmp_path):
    # the lap's wheel energy is the energy model run on the simulated trace
    from tractive import api

    rep = api.lap(CLUB, CIRCUIT)
    from tractive.lap.simulate import TRACE_DT_S
    prof = rep.simulation.to_profile(dt_s=TRACE_DT_S)
    wheel = api.energy(CLUB, [prof]).results[0].wheel
    assert rep.to_dict()["positive_energy_kwh"] == pytest.approx(wheel.positive_energy_kwh)
    # the trace covers the lap: its distance (trapezoid) is the lap length within 0.1 %
    assert prof.distance_m == pytest.approx(rep.track.length_m, rel=1e-3)


def test_battery_energy_with_powertrain():
    res = run_cli("lap", VAN, "--track", CIRCUIT, "--json")
    assert res.returncode == 0, res.stderr
    doc = json.loads(res.stdout)
    assert doc["battery_energy_kwh"] > 0


def test_plot_several_vehicles(tmp_path):
    out = tmp_path / "lap.png"
    res = run_cli("lap", CLUB, VAN, "--track", CIRCUIT, "--plot", out)
    assert res.returncode == 0, res.stderr
    assert out.stat().st_size > 10000
    assert "wrote" in res.stdout


def test_help_has_safety_caution():
    res = run_cli("lap", "--help")
    assert "closed circuits" in res.stdout and "competent" in res.stdout


def test_circle_from_points_closed_and_curvature(tmp_path):
    # a circle of radius 100 m sampled every 5 m: the fitted curvature is 1/R within 0.2 %
    # (a cubic spline with 10 m knots on a 100 m radius) and the length 2πR within 0.01 %
    # (geometry of the circle)
    tr = read_track(_circle_csv(tmp_path / "c.csv"))
    assert tr.closed
    assert np.allclose(tr.curvature_1_per_m, 0.01, rtol=2e-3)
    assert tr.length_m == pytest.approx(2 * math.pi * 100.0, rel=1e-4)
    # the same with the first point repeated at the end
    tr2 = read_track(_circle_csv(tmp_path / "c2.csv", closing=True))
    assert tr2.closed and tr2.length_m == pytest.approx(tr.length_m, rel=1e-6)
    # forced open
    assert not read_track(tmp_path / "c.csv", closed=False).closed


def test_latitude_longitude_and_gpx(tmp_path):
    # a circle of 200 m radius at 48° N written as degrees: curvature 1/200 m within 0.5 %
    # (1° of latitude = R_earth·π/180 m on the sphere of tractive.geo.EARTH_RADIUS_M)
    from tractive.geo import EARTH_RADIUS_M

    r, lat0 = 200.0, 48.0
    th = np.linspace(0, 2 * math.pi, 250, endpoint=False)
    lat = lat0 + np.degrees(r * np.sin(th) / EARTH_RADIUS_M)
    lon = 11.0 + np.degrees(r * np.cos(th) / (EARTH_RADIUS_M * math.cos(math.radians(lat0))))
    csv = tmp_path / "geo.csv"
    csv.write_text("latitude_deg,longitude_deg\n" + "\n".join(
        f"{a:.9f},{b:.9f}" for a, b in zip(lat, lon)) + "\n", encoding="utf-8")
    tr = read_track(csv)
    assert tr.closed and np.allclose(np.abs(tr.curvature_1_per_m), 1 / r, rtol=5e-3)
    gpx = tmp_path / "geo.gpx"
    pts = "\n".join(f'<trkpt lat="{a:.9f}" lon="{b:.9f}"><ele>{10 + 5 * math.sin(t):.3f}'
                    f'</ele></trkpt>' for a, b, t in zip(lat, lon, th))
    gpx.write_text('<?xml version="1.0"?>\n<gpx version="1.1" creator="test" '
                   'xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg>\n'
                   f"{pts}\n</trkseg></trk></gpx>\n", encoding="utf-8")
    tg = read_track(gpx)
    assert tg.length_m == pytest.approx(tr.length_m, rel=1e-6)
    # elevation 10 + 5 sin θ over a circle: slope dz/ds = 5 cos θ / r, at most 2.5 %
    assert np.max(np.abs(tg.grade_fraction)) == pytest.approx(5 / r, rel=0.02)


def _err(*args):
    res = run_cli(*args)
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "Traceback" not in res.stderr
    return res.stderr


def test_broken_line_jump(tmp_path):
    path = _circle_csv(tmp_path / "c.csv")
    lines = path.read_text().splitlines()
    lines[20] = "500,500"                                     # a point far off the line
    path.write_text("\n".join(lines) + "\n")
    msg = _err("lap", CLUB, "--track", path)
    assert f"{path}:21:" in msg and "broken line" in msg


def test_too_few_points(tmp_path):
    path = tmp_path / "few.csv"
    path.write_text("x_m,y_m\n0,0\n10,0\n20,0\n")
    assert "at least 8 points" in _err("lap", CLUB, "--track", path)


def test_too_tight_curvature(tmp_path):
    path = tmp_path / "k.csv"
    path.write_text("distance_m,curvature_1_per_m\n" + "\n".join(
        f"{10 * i},{0.5 if i == 5 else 0.01}" for i in range(20)) + "\n")
    msg = _err("lap", CLUB, "--track", path)
    assert f"{path}:7:" in msg and "tighter than a car can turn" in msg


def test_tight_points_and_bad_cell(tmp_path):
    # a circle of 3 m radius: tighter than a 4 m turning circle
    path = _circle_csv(tmp_path / "tight.csv", radius=3.0, spacing=0.5)
    assert "tighter than a car can turn" in _err("lap", CLUB, "--track", path,
                                                 "--smoothing-m", "1")
    bad = tmp_path / "bad.csv"
    bad.write_text("x_m,y_m\n0,0\n1,abc\n")
    assert f"{bad}:3: y_m: not a number" in _err("lap", CLUB, "--track", bad)


def test_more_laps_on_open_track(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("x_m,y_m\n" + "\n".join(f"{10 * i},0" for i in range(60)) + "\n")
    assert "open track" in _err("lap", CLUB, "--track", path, "--laps", "2")
    res = run_cli("lap", CLUB, "--track", path, "--json")
    doc = json.loads(res.stdout)
    assert doc["track"]["closed"] is False and doc["min_speed_kmh"] == 0.0


def test_vehicle_without_performance(tmp_path):
    veh = tmp_path / "v.yaml"
    veh.write_text("name: plain\nmass_kg: 1200\nroad_load: {cda_m2: 0.6, crr: 0.01}\n")
    assert "performance" in _err("lap", veh, "--track", CIRCUIT)


def test_api_rejects_bad_laps():
    from tractive import api

    with pytest.raises(InputError):
        api.lap(CLUB, CIRCUIT, laps=0)
