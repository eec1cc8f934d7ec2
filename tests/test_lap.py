"""Lap simulation against closed forms (circle, straight, braking) and monotonic
properties (power, downforce, mass)."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tractive.lap import circle_track, simulate_lap, straight_track, track_from_curvature
from tractive.performance import acceleration_time_s
from tractive.roadload import PhysicalRoadLoad
from tractive.vehicle import load_vehicle

G = 9.80665          # standard gravity [m/s²] (CGPM 1901, exact)
ROOT = Path(__file__).resolve().parents[1]
CLUB = ROOT / "examples" / "track-wing" / "club_racer.yaml"

CAR = """\
name: test car
mass_kg: 1000
rotating_mass_fraction: 0.0
road_load: {cda_m2: 0.6, crr: 0.012, air_density_kg_m3: 1.2}
performance:
  driven_axle_load_share: 1.0
  tyre_road_friction: 1.2
  driven_axle: all
  motor: {peak_power_kw: 2000, peak_torque_nm: 3000, max_speed_rpm: 20000}
  gear_ratios: [8.0]
  tyre_radius_m: 0.30
  driveline_efficiency: 1.0
"""


@pytest.fixture(scope="module")
def car(tmp_path_factory):
    path = tmp_path_factory.mktemp("lap") / "car.yaml"
    path.write_text(CAR, encoding="utf-8")
    return load_vehicle(path)


def _aero(vehicle, cda_m2=0.0, cla_m2=0.0, crr=0.0, rho=1.2):
    """The vehicle with a physical road load of the given drag, downforce and rolling."""
    return vehicle.with_changes(road_load=PhysicalRoadLoad(cda_m2=cda_m2, crr=crr,
                                                           air_density_kg_m3=rho,
                                                           cla_m2=cla_m2))


def test_circle_without_drag_or_downforce(car):
    # closed form: on a flat circle of radius R with μ·g of lateral grip, v = sqrt(μ·g·R)
    # and the lap takes 2πR / sqrt(μ·g·R) (uniform circular motion, Newton's second law)
    r, mu = 80.0, 1.2
    sim = simulate_lap(_aero(car), circle_track(r))
    assert sim.lap_time_s == pytest.approx(2 * math.pi * r / math.sqrt(mu * G * r), rel=1e-9)
    assert sim.limits_share()["cornering"] == pytest.approx(1.0)


def test_circle_with_downforce(car):
    # closed form: m·v²/R = μ·(m·g + ½·ρ·ClA·v²)  →  v² = μ·m·g / (m/R − μ·½·ρ·ClA)
    r, mu, m, cla, rho = 120.0, 1.2, 1000.0, 3.0, 1.2
    sim = simulate_lap(_aero(car, cla_m2=cla, rho=rho), circle_track(r))
    v = math.sqrt(mu * m * G / (m / r - mu * 0.5 * rho * cla))
    assert sim.lap_time_s == pytest.approx(2 * math.pi * r / v, rel=1e-9)


def test_circle_with_drag(car):
    # friction circle with the longitudinal force equal to the road load (steady speed on
    # the circle): (R(v)/(μ N))² + (m v²/r / (μ N))² = 1, solved with scipy's brentq
    from scipy.optimize import brentq

    r, mu, m, cda, cla, crr, rho = 60.0, 1.2, 1000.0, 0.8, 1.0, 0.015, 1.2
    veh = _aero(car, cda_m2=cda, cla_m2=cla, crr=crr, rho=rho)

    def excess(v):
        n = m * G + 0.5 * rho * cla * v * v
        road = crr * m * G + 0.5 * rho * (cda + crr * cla) * v * v
        return (road / (mu * n)) ** 2 + (m * v * v / r / (mu * n)) ** 2 - 1.0

    v = brentq(excess, 1.0, 100.0, xtol=1e-12)
    sim = simulate_lap(veh, circle_track(r))
    assert sim.lap_time_s == pytest.approx(2 * math.pi * r / v, rel=1e-8)
    # the drag lowers the speed below the no-drag value sqrt(μ g r (…)) (sanity of direction)
    assert v < math.sqrt(mu * m * G / (m / r - mu * 0.5 * rho * cla))


@pytest.mark.parametrize("to_kmh", [100.0, 160.0])
def test_straight_from_rest_matches_performance(to_kmh):
    # the forward integration on a straight from rest is the acceleration run of
    # tractive.performance (Simpson's rule over speed); shifts take no time in the lap
    # model, so the shift time is set to 0. Tolerance 0.1 % states the discretisation
    # (0.5 m distance steps, drive force tabulated every 0.25 m/s).
    veh = load_vehicle(CLUB)
    veh = veh.with_changes(performance=replace(veh.performance, shift_time_s=0.0))
    sim = simulate_lap(veh, straight_track(1500.0, step_m=0.5))
    t_lap = np.interp(to_kmh / 3.6, sim.speed_ms, sim.time_s)
    t_ref, _ = acceleration_time_s(veh, 0.0, to_kmh)
    assert t_lap == pytest.approx(t_ref, rel=1e-3)


def test_braking_distance(car):
    # closed form: braking from v to 0 with constant μ and no drag takes v²/(2·μ·g)
    # (constant deceleration μ·g, kinematics)
    mu_b = 0.9
    veh = _aero(car)
    length = 400.0
    sim = simulate_lap(veh, straight_track(length, step_m=1.0), mu_braking=mu_b,
                       start_speed_ms=30.0, end_speed_ms=0.0)
    braking = sim.limit == 1
    assert braking.any()
    to_go = length - sim.distance_m[braking]
    assert np.allclose(sim.speed_ms[braking] ** 2, 2 * mu_b * G * to_go, rtol=1e-9, atol=1e-9)
    assert sim.speed_ms[-1] == 0.0


def test_vehicle_axis_matches_single_vehicles(car):
    # a vehicle axis gives, entry by entry, what each vehicle gives alone
    track = track_from_curvature(closed=True, **WIGGLY)
    masses = np.array([900.0, 1100.0, 1300.0])
    batch = simulate_lap(car.with_changes(mass_kg=masses), track)
    for i, m in enumerate(masses):
        one = simulate_lap(car.with_changes(mass_kg=float(m)), track)
        assert batch.lap_time_s[i] == pytest.approx(one.lap_time_s, rel=1e-12)
        assert np.allclose(batch.speed_ms[i], one.speed_ms, rtol=1e-12)


_D = np.arange(0.0, 1250.1, 10.0)
#: an invented open test line: bends of 25, 67 and 50 m radius between straights
WIGGLY = dict(distance_m=_D, curvature_1_per_m=np.interp(
    _D, [0, 150, 300, 380, 460, 700, 800, 900, 1000, 1100, 1250],
    [0, 0, 0.04, 0.04, 0, 0, -0.015, -0.015, 0.0, 0.02, 0.0]))


def _club():
    return load_vehicle(CLUB)


@settings(max_examples=6, deadline=None)
@given(st.floats(1.05, 2.0))
def test_more_power_never_slower(factor):
    # property: a larger full-load curve (same gears) never makes the lap slower
    veh = _club()
    track = track_from_curvature(closed=True, **WIGGLY)
    fl = veh.performance.full_load
    strong = veh.with_changes(performance=replace(
        veh.performance, full_load=replace(fl, values=fl.values * factor)))
    assert simulate_lap(strong, track).lap_time_s <= simulate_lap(veh, track).lap_time_s + 1e-9


@settings(max_examples=6, deadline=None)
@given(st.floats(0.1, 3.0))
def test_more_downforce_without_drag_never_slower(extra_cla):
    # property: more downforce area at the same drag area never makes the lap slower
    # (rolling resistance does not grow with it here: crr = 0)
    veh = _club()
    track = track_from_curvature(closed=True, **WIGGLY)
    base = _aero(veh, cda_m2=0.7, cla_m2=0.2)
    more = _aero(veh, cda_m2=0.7, cla_m2=0.2 + extra_cla)
    assert simulate_lap(more, track).lap_time_s <= simulate_lap(base, track).lap_time_s + 1e-9


@settings(max_examples=6, deadline=None)
@given(st.floats(10.0, 400.0))
def test_more_mass_never_faster(extra_kg):
    # property: more mass with the same power, drag and grip never makes the lap faster
    veh = _aero(_club(), cda_m2=0.7, cla_m2=0.5, crr=0.012)
    track = track_from_curvature(closed=True, **WIGGLY)
    heavy = veh.with_changes(mass_kg=veh.mass_kg + extra_kg)
    assert simulate_lap(heavy, track).lap_time_s >= simulate_lap(veh, track).lap_time_s - 1e-9
