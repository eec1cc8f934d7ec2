"""Performance: top speed, acceleration and gradeability against outside references."""

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tractive.errors import InputError
from tractive.performance import acceleration_time_s, gradeability_pct, performance_summary, \
    top_speed
from tractive.powertrain.drive import FullLoadCurve, MotorEnvelope
from tractive.vehicle import load_vehicle

G = 9.80665                      # standard gravity (40 CFR 1066.210; exact)
ROOT = Path(__file__).resolve().parents[1]
F0, F2_KMH = 120.0, 0.03          # coast-down f0 [N], f2 [N/(km/h)²]
F2 = F2_KMH * 3.6 ** 2            # f2 in N/(m/s)² (exact unit factor)


def make(tmp_path, performance, *, mass=1500, rmf=0.03, road=None, powertrain=None,
         name="v.yaml"):
    data = {"name": "perf car", "mass_kg": mass, "rotating_mass_fraction": rmf,
            "road_load": road or {"f0_n": F0, "f2_n_per_kmh2": F2_KMH},
            "performance": performance}
    if powertrain is not None:
        data["powertrain"] = powertrain
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return load_vehicle(path)


def constant_power(p_kw, *, mu=3.0, share=1.0, ratio=8.0, eta=0.9, max_rpm=None, **extra):
    """A motor far above its base speed: constant power at the wheels."""
    motor = {"peak_power_kw": p_kw, "peak_torque_nm": 20000}
    if max_rpm is not None:
        motor["max_speed_rpm"] = max_rpm
    perf = {"driven_axle_load_share": share, "tyre_road_friction": mu, "motor": motor,
            "gear_ratios": [ratio], "tyre_radius_m": 0.3, "driveline_efficiency": eta}
    perf.update(extra)
    return perf


def cardano_root(p_w):
    """Real root of f2 v³ + f0 v − P = 0 by Cardano's formula (one real root, Δ > 0)."""
    p = F0 / F2
    q = -p_w / F2
    disc = (q / 2) ** 2 + (p / 3) ** 3
    return np.cbrt(-q / 2 + math.sqrt(disc)) + np.cbrt(-q / 2 - math.sqrt(disc))


# -- top speed -----------------------------------------------------------------------

@pytest.mark.parametrize("p_kw", [20.0, 75.0, 300.0])
def test_constant_power_top_speed_matches_cubic_root_and_brentq(tmp_path, p_kw):
    v = make(tmp_path, constant_power(p_kw))
    kmh, limit, gear, gears = top_speed(v)
    assert limit == "power" and gear == 1 and len(gears) == 1
    wheel_w = p_kw * 1000 * 0.9
    # closed-form root of the cubic f2 v³ + f0 v = P η (Cardano)
    assert kmh / 3.6 == pytest.approx(cardano_root(wheel_w), rel=1e-9)
    # scipy.optimize.brentq on the force balance P η / v = f0 + f2 v²
    ref = brentq(lambda x: wheel_w / x - (F0 + F2 * x * x), 1.0, 500.0, xtol=1e-12)
    assert kmh / 3.6 == pytest.approx(ref, rel=1e-9)


def test_top_speed_on_a_grade_and_in_wind_matches_brentq(tmp_path):
    v = make(tmp_path, constant_power(90.0))
    wheel_w = 90e3 * 0.9
    m = 1500
    for grade_pct, wind_kmh in ((5.0, 0.0), (-3.0, 0.0), (0.0, 30.0), (0.0, -30.0),
                                (4.0, -20.0)):
        th = math.atan(grade_pct / 100)
        w = wind_kmh / 3.6

        def balance(x):
            # rolling (weight-proportional) × cos θ + drag at air speed + grade force
            va = x + w
            return wheel_w / x - (F0 * math.cos(th) + F2 * va * abs(va) + m * G * math.sin(th))

        ref = brentq(balance, 1.0, 300.0, xtol=1e-12)
        kmh, limit, _, _ = top_speed(v, grade_pct=grade_pct, wind_kmh=wind_kmh)
        assert kmh / 3.6 == pytest.approx(ref, rel=1e-9), (grade_pct, wind_kmh)
    # head wind slows, tail wind speeds up, uphill slows
    calm = top_speed(v)[0]
    assert top_speed(v, wind_kmh=20)[0] < calm < top_speed(v, wind_kmh=-20)[0]
    assert top_speed(v, grade_pct=2)[0] < calm


def test_power_limited_top_speed_rises_with_cube_root_of_power(tmp_path):
    # P = f2 v³ + f0 v, so d ln v / d ln P = (f2 v² + f0) / (3 f2 v² + f0) → 1/3 from above
    # as P grows (rolling resistance matters less and less); powers beyond any car's are
    # set directly on the motor envelope (and grip) to reach the asymptote
    base = make(tmp_path, constant_power(100.0))

    def vmax(p_kw):
        spec = dataclasses.replace(base.performance, motor=MotorEnvelope(p_kw * 1e3, 1e7),
                                   tyre_road_friction=1e3)
        return top_speed(dataclasses.replace(base, performance=spec))[0]

    slopes = [math.log(vmax(8 * p) / vmax(p)) / math.log(8) for p in (20.0, 500.0, 20000.0)]
    assert slopes[0] > slopes[1] > slopes[2] > 1 / 3
    assert slopes[2] == pytest.approx(1 / 3, abs=1e-3)
    assert slopes[0] > 1 / 3 + 0.01       # at car-like powers rolling still matters


def test_rev_limit_binds_with_short_gearing(tmp_path):
    perf = {"driven_axle_load_share": 1.0, "tyre_road_friction": 2.0,
            "full_load": {"speed_rpm": [1000, 6000], "power_kw": [150, 150]},
            "gear_ratios": [3.0, 2.0], "final_drive_ratio": 4.0, "tyre_radius_m": 0.3,
            "driveline_efficiency": 0.9, "shift_time_s": 0.3}
    v = make(tmp_path, perf)
    kmh, limit, gear, gears = top_speed(v)
    # v = ω_max · r / (i · i_fd) = 6000 rpm × 2π/60 × 0.3 / 8
    assert limit == "rev_limit" and gear == 2
    assert kmh == pytest.approx(6000 * 2 * math.pi / 60 * 0.3 / 8 * 3.6, rel=1e-12)
    assert [g.limit for g in gears] == ["rev_limit", "rev_limit"]
    assert gears[0].top_speed_kmh == pytest.approx(6000 * 2 * math.pi / 60 * 0.3 / 12 * 3.6)


def test_motor_speed_limit_and_governor(tmp_path):
    v = make(tmp_path, constant_power(150.0, max_rpm=9000))
    kmh, limit, _, _ = top_speed(v)
    assert limit == "motor_speed_limit"
    assert kmh == pytest.approx(9000 * 2 * math.pi / 60 * 0.3 / 8 * 3.6, rel=1e-12)
    vg = make(tmp_path, constant_power(150.0, max_rpm=9000, governor_kmh=100), name="g.yaml")
    assert top_speed(vg)[:2] == (100.0, "governor")
    res = performance_summary(vg)
    assert res.accel_80_120_kmh_s is None and res.accel_0_100_kmh_s is not None


def test_traction_limited_top_speed_on_ice_closed_form(tmp_path):
    # μ s m g = f0 + f2 v²  →  v = √((μ s m g − f0) / f2)
    v = make(tmp_path, constant_power(100.0, mu=0.05, share=0.5))
    kmh, limit, _, _ = top_speed(v)
    assert limit == "traction"
    assert kmh / 3.6 == pytest.approx(math.sqrt((0.05 * 0.5 * 1500 * G - F0) / F2), rel=1e-9)


def _physical(cla):
    return {"cda_m2": 0.6, "crr": 0.01, "cla_m2": cla, "air_density_kg_m3": 1.225}


def test_downforce_raises_traction_limit_and_rolling_resistance(tmp_path):
    # traction μ s (m g + q ClA v²) against crr (m g + q ClA v²) + q CdA v² (q = ½ρ):
    # v² = (μ s − crr) m g / (q (CdA + crr ClA − μ s ClA))
    q = 0.5 * 1.225
    for cla in (0.0, 1.0):
        v = make(tmp_path, constant_power(100.0, mu=0.1, share=0.5), road=_physical(cla),
                 name=f"ice{cla}.yaml")
        kmh, limit, _, _ = top_speed(v)
        expected = math.sqrt((0.05 - 0.01) * 1500 * G / (q * (0.6 + 0.01 * cla - 0.05 * cla)))
        assert limit == "traction"
        assert kmh / 3.6 == pytest.approx(expected, rel=1e-9)
    ice = [top_speed(make(tmp_path, constant_power(100.0, mu=0.1, share=0.5),
                          road=_physical(c), name=f"i{c}.yaml"))[0] for c in (0.0, 1.0)]
    dry = [top_speed(make(tmp_path, constant_power(100.0), road=_physical(c),
                          name=f"d{c}.yaml"))[0] for c in (0.0, 1.0)]
    assert ice[1] > ice[0]          # grip-limited: downforce helps
    assert dry[1] < dry[0]          # power-limited: downforce adds rolling resistance


# -- acceleration ----------------------------------------------------------------------

def test_single_gear_acceleration_matches_solve_ivp(tmp_path):
    perf = {"driven_axle_load_share": 0.55, "tyre_road_friction": 0.8,
            "motor": {"peak_power_kw": 80, "peak_torque_nm": 250},
            "gear_ratios": [9.0], "tyre_radius_m": 0.3, "driveline_efficiency": 0.95}
    v = make(tmp_path, perf)
    m, m_eff = 1500.0, 1500 * 1.03

    def force(x):
        w = x * 9.0 / 0.3
        drive = min(250.0, 80e3 / max(w, 1e-9)) * 9.0 * 0.95 / 0.3
        return min(drive, 0.8 * 0.55 * m * G)

    def rhs(t, y):
        return [(force(y[0]) - F0 - F2 * y[0] ** 2) / m_eff]

    def reach(target):
        ev = lambda t, y: y[0] - target  # noqa: E731
        ev.terminal = True
        return ev

    # scipy.integrate.solve_ivp, time-domain forward integration
    sol = solve_ivp(rhs, (0, 60), [0.0], events=reach(100 / 3.6), rtol=1e-11, atol=1e-12,
                    max_step=0.01)
    t_ref = sol.t_events[0][0]
    t, shifts = acceleration_time_s(v, 0, 100)
    assert shifts == 0
    assert t == pytest.approx(t_ref, abs=1e-3)
    sol2 = solve_ivp(rhs, (0, 60), [80 / 3.6], events=reach(120 / 3.6), rtol=1e-11,
                     atol=1e-12, max_step=0.01)
    assert acceleration_time_s(v, 80, 120)[0] == pytest.approx(sol2.t_events[0][0], abs=1e-3)
    assert performance_summary(v).launch_traction_limited


def test_shift_time_matches_piecewise_integration(tmp_path):
    # flat 200 N·m from 1000 to 6000 rpm: first gear always pulls harder, so each gear is
    # used to the rev limit; during a shift the drive is open for 0.5 s
    ratios, fd, r, eta, t_shift = [3.0, 1.8, 1.2], 4.0, 0.3, 0.9, 0.5
    perf = {"driven_axle_load_share": 1.0, "tyre_road_friction": 2.5,
            "full_load": {"speed_rpm": [1000, 6000], "torque_nm": [200, 200]},
            "gear_ratios": ratios, "final_drive_ratio": fd, "tyre_radius_m": r,
            "driveline_efficiency": eta, "shift_time_s": t_shift}
    v = make(tmp_path, perf)
    m_eff = 1500 * 1.03
    w_max = 6000 * 2 * math.pi / 60

    def run(f_drive, y0, t_end=None, v_end=None):
        rhs = lambda t, y: [(f_drive - F0 - F2 * y[0] ** 2) / m_eff]  # noqa: E731
        ev = None
        if v_end is not None:
            ev = lambda t, y: y[0] - v_end  # noqa: E731
            ev.terminal = True
        sol = solve_ivp(rhs, (0, t_end or 100), [y0], events=ev, rtol=1e-12, atol=1e-12)
        if v_end is not None:
            return sol.t_events[0][0], v_end
        return t_end, sol.y[0, -1]

    t_total, speed = 0.0, 0.0
    for k, ratio in enumerate(ratios):
        f = 200 * ratio * fd * eta / r
        top = w_max * r / (ratio * fd)
        if k == len(ratios) - 1 or top > 100 / 3.6:
            dt, speed = run(f, speed, v_end=100 / 3.6)
            t_total += dt
            break
        dt, speed = run(f, speed, v_end=top)
        t_total += dt
        dt, speed = run(0.0, speed, t_end=t_shift)      # drive open
        t_total += dt
    t, shifts = acceleration_time_s(v, 0, 100)
    assert shifts == 2
    assert t == pytest.approx(t_total, abs=2e-3)
    v0 = make(tmp_path, dict(perf, shift_time_s=0.0), name="noshift.yaml")
    assert acceleration_time_s(v0, 0, 100)[0] < t - 2 * t_shift


@pytest.mark.parametrize("axle, sign", [("rear", 1), ("front", -1)])
def test_traction_limited_launch_with_load_transfer_gillespie(tmp_path, axle, sign):
    # Gillespie, Fundamentals of Vehicle Dynamics, ch. 2 (traction-limited acceleration,
    # resistances neglected): rear drive F = μ W (b/L) / (1 − μ h/L),
    # front drive F = μ W (c/L) / (1 + μ h/L); time to 10 km/h = m v / F
    mu, share, h, wb, m = 1.0, 0.45, 0.5, 2.6, 1400.0
    perf = {"driven_axle_load_share": share, "tyre_road_friction": mu, "driven_axle": axle,
            "cg_height_m": h, "wheelbase_m": wb,
            "motor": {"peak_power_kw": 2000, "peak_torque_nm": 3000},
            "gear_ratios": [10.0], "tyre_radius_m": 0.3, "driveline_efficiency": 1.0}
    v = make(tmp_path, perf, mass=m, rmf=0.0, road={"f0_n": 0.0, "f2_n_per_kmh2": 1e-9})
    f = mu * m * G * share / (1 - sign * mu * h / wb)
    t, _ = acceleration_time_s(v, 0, 10)
    assert t == pytest.approx(m * (10 / 3.6) / f, rel=1e-6)


def _ev(tmp_path, name="ev.yaml"):
    # tyre grip (μ = 2) above the motor's force for every mass tested: the drive limits
    perf = {"driven_axle_load_share": 0.5, "tyre_road_friction": 2.0,
            "motor": {"peak_power_kw": 100, "base_speed_rpm": 3000},
            "gear_ratios": [9.0], "tyre_radius_m": 0.31, "driveline_efficiency": 0.95}
    return make(tmp_path, perf, name=name)


@settings(max_examples=25, deadline=None)
@given(p1=st.floats(30, 150), factor=st.floats(1.05, 2.0))
def test_acceleration_time_falls_as_power_rises(tmp_path_factory, p1, factor):
    # a bigger motor with the same base speed (3000 rpm): more torque and more power
    v = _ev(tmp_path_factory.mktemp("p"))
    spec = v.performance
    w_base = 3000 * 2 * math.pi / 60
    times = []
    for p in (p1, p1 * factor):
        vp = dataclasses.replace(v, performance=dataclasses.replace(
            spec, motor=MotorEnvelope(p * 1000, p * 1000 / w_base)))
        times.append(acceleration_time_s(vp, 0, 100)[0])
        assert acceleration_time_s(vp, 80, 120)[0] is not None
    assert times[1] < times[0]


@settings(max_examples=25, deadline=None)
@given(m1=st.floats(900, 3000), factor=st.floats(1.05, 2.0))
def test_acceleration_time_falls_as_mass_falls(tmp_path_factory, m1, factor):
    v = _ev(tmp_path_factory.mktemp("m"))
    light = acceleration_time_s(dataclasses.replace(v, mass_kg=m1), 0, 100)[0]
    heavy = acceleration_time_s(dataclasses.replace(v, mass_kg=m1 * factor), 0, 100)[0]
    assert light < heavy


@settings(max_examples=15, deadline=None)
@given(k=st.floats(1.05, 2.0))
def test_engine_car_accelerates_faster_with_more_torque(k):
    v = load_vehicle(ROOT / "examples" / "vehicles" / "track_car.yaml")
    fl = v.performance.full_load
    stronger = dataclasses.replace(v, performance=dataclasses.replace(
        v.performance, full_load=FullLoadCurve(fl.speed_rpm, fl.values * k, fl.quantity)))
    assert acceleration_time_s(stronger, 80, 120)[0] < acceleration_time_s(v, 80, 120)[0]


# -- gradeability -------------------------------------------------------------------------

def test_traction_limited_gradeability_is_friction_minus_rolling(tmp_path):
    # inclined plane (Wong, Theory of Ground Vehicles, ch. 3): all-wheel drive at standstill,
    # μ m g cos θ = crr m g cos θ + m g sin θ  →  tan θ = μ − crr
    perf = constant_power(500.0, mu=0.8, share=1.0)
    v = make(tmp_path, perf, road={"cda_m2": 0.6, "crr": 0.012, "air_density_kg_m3": 1.2})
    assert gradeability_pct(v, 0.0) == pytest.approx(100 * (0.8 - 0.012), rel=1e-9)


def test_power_limited_gradeability_matches_brentq(tmp_path):
    v = make(tmp_path, constant_power(60.0, mu=3.0),
             road={"cda_m2": 0.6, "crr": 0.012, "air_density_kg_m3": 1.2})
    speed = 60 / 3.6
    m = 1500

    def balance(th):
        return (60e3 * 0.9 / speed - 0.012 * m * G * math.cos(th)
                - 0.5 * 1.2 * 0.6 * speed ** 2 - m * G * math.sin(th))

    th = brentq(balance, 0.0, 1.0, xtol=1e-14)   # scipy reference
    assert gradeability_pct(v, 60.0) == pytest.approx(100 * math.tan(th), rel=1e-9)


# -- summary, example vehicles and errors --------------------------------------------------

@pytest.mark.parametrize("name", ["electric_van", "petrol_hatchback_map", "diesel_light_truck",
                                  "track_car"])
def test_example_vehicles_have_plausible_performance(name):
    v = load_vehicle(ROOT / "examples" / "vehicles" / f"{name}.yaml")
    d = performance_summary(v).to_dict()
    for key in ("top_speed_kmh", "top_speed_limit", "accel_0_100_kmh_s", "accel_80_120_kmh_s",
                "gears", "gradeability_pct"):
        assert key in d
    # plausibility band for road vehicles from a van to a track car, common practice
    # (no published source): catches unit slips (m/s for km/h, ×3.6, ×10), not small errors
    assert 100 < d["top_speed_kmh"] < 320
    assert 2.0 < d["accel_0_100_kmh_s"] < 25.0    # plausibility band, common practice
    assert d["accel_80_120_kmh_s"] > 0
    assert len(d["gears"]) >= 1 and all("top_speed_limit" in g for g in d["gears"])


@pytest.mark.parametrize("perf, powertrain, field, words", [
    (None, None, "performance", "no performance block"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0}, None, "performance",
     "no drive data"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0,
      "full_load": {"speed_rpm": [1000, 6000], "torque_nm": [100, 100]},
      "gear_ratios": [3.0, 2.0], "final_drive_ratio": 4.0, "tyre_radius_m": 0.3,
      "driveline_efficiency": 0.9}, None, "performance.shift_time_s", "more than one gear"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0,
      "full_load": {"speed_rpm": [1000, 6000], "torque_nm": [100, 100]},
      "gear_ratios": [3.0], "tyre_radius_m": 0.3, "driveline_efficiency": 0.9}, None,
     "performance.final_drive_ratio", "missing"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0,
      "motor": {"peak_power_kw": 100, "peak_torque_nm": 300},
      "gear_ratios": [9.0], "tyre_radius_m": 0.3}, None,
     "performance.driveline_efficiency", "missing"),
])
def test_missing_drive_data_gives_one_line_error(tmp_path, perf, powertrain, field, words):
    data = {"name": "x", "mass_kg": 1400, "road_load": {"f0_n": 100, "f2_n_per_kmh2": 0.03}}
    if perf is not None:
        data["performance"] = perf
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    v = load_vehicle(path)
    with pytest.raises(InputError) as exc:
        performance_summary(v)
    msg = str(exc.value)
    assert "\n" not in msg and msg.startswith(str(path))
    assert f"{field}:" in msg and words in msg


@pytest.mark.parametrize("perf, field, words", [
    ({"tyre_road_friction": 1.0}, "performance.driven_axle_load_share", "missing"),
    ({"driven_axle_load_share": 1.5, "tyre_road_friction": 1.0},
     "performance.driven_axle_load_share", "at most 1"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": "high"},
     "performance.tyre_road_friction", "must be a number"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0, "cg_height_m": 0.5},
     "performance.wheelbase_m", "both"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0,
      "motor": {"peak_power_kw": 100, "peak_torque_nm": 300},
      "full_load": {"speed_rpm": [1000, 6000], "torque_nm": [100, 100]}},
     "performance", "only one drive source"),
    ({"driven_axle_load_share": 0.5, "tyre_road_friction": 1.0,
      "full_load": {"speed_rpm": [1000, 3000, 6000], "torque_nm": [100, 120]}},
     "performance.full_load.torque_nm", "one value per speed_rpm"),
])
def test_wrong_performance_value_gives_one_line_error(tmp_path, perf, field, words):
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump({"name": "x", "mass_kg": 1400,
                                    "road_load": {"f0_n": 100, "f2_n_per_kmh2": 0.03},
                                    "performance": perf}, sort_keys=False))
    with pytest.raises(InputError) as exc:
        load_vehicle(path)
    msg = str(exc.value)
    assert "\n" not in msg and msg.startswith(f"{path}:")
    assert f"{field}:" in msg and words in msg


def test_performance_reuses_powertrain_data(tmp_path):
    # the electric van takes motor, ratio, radius and gear efficiency from its powertrain:
    # the motor speed limit gives v = 12000 rpm × 2π/60 × 0.34 / 10.2
    v = load_vehicle(ROOT / "examples" / "vehicles" / "electric_van.yaml")
    res = performance_summary(v)
    assert res.gears[0].limit == "motor_speed_limit"
    assert res.gears[0].top_speed_kmh == pytest.approx(
        12000 * 2 * math.pi / 60 * 0.34 / 10.2 * 3.6, rel=1e-12)
    assert res.top_speed_limit == "governor" and res.top_speed_kmh == 130.0
    assert np.isfinite(res.gradeability_pct)
