"""Generate lap.csv: one flying lap of an invented 3.2 km circuit.

The circuit ("Marsh End Raceway", invented) is a list of straights and
constant-radius corners. The speed along the lap follows the classical
point-mass, quasi-steady lap model:

1. In a corner of radius R the speed is limited by lateral grip,
   v ≤ sqrt(μ_lat · g · R) (μ_lat = 1.3, no aerodynamic grip); on a straight
   by a top speed for this circuit (v ≤ 215 km/h).
2. Forward from every point the car accelerates at most

       a(v) = min(a_grip, (k · P_wheel(v) / v − R(v)) / m_inertial)

   with a_grip = 6.0 m/s² (traction limit of the driven tyres), P_wheel(v)
   the wheel power of the club racer at full load in its best gear
   (η · P_engine(n) with n = v · i_gear · i_final / r within the full-load
   curve and the rev limit; below first gear's lowest speed the clutch slips
   at the launch speed), R(v) its level-road resistance
   Crr·m·g + ½ρ·(CdA + Crr·ClA)·v² and m_inertial = m (1 + rotating-mass
   fraction), all from ``club_racer.yaml``. The air is the ICAO standard
   atmosphere at sea level (1.225 kg/m³), denser than on race day. k = 0.97
   keeps 3 % of the force in reserve: the trace is resampled to 0.5 s steps,
   and a step that straddles a gear change (where the best gear's force
   drops) averages the force over both sides. Gear changes are taken as
   instant. With these choices the force the resampled trace asks at the
   wheels stays below the full-load force at every step (checked by the
   tests).
3. Backward from every point it brakes at most a_brake = 12.0 m/s², so v²
   can fall by at most 2 a_brake Δs.

The lap speed is the lowest of the three limits at every point. For a
speed-dependent acceleration a(v) the distance the car needs to reach v from
standstill, S(v) = ∫₀^v u / a(u) du, turns (2) into the same minimum over
the points behind as for a constant acceleration (S(v) = v² / (2a) then):

    v_acc(s)    = S⁻¹( s + min over s' ≤ s of [S(v_lim(s')) − s'] )
    v_brake(s)² = −2 a_brake s + min over s' ≥ s of [v_lim(s')² + 2 a_brake s']

and numpy evaluates both over the whole lap at once (S by the trapezoidal
rule on a fine speed grid, S⁻¹ by interpolation). To make the lap periodic
(the car crosses the line at the speed it started with) the circuit is laid
out three times and the middle lap kept. Time follows from t = ∫ ds / v
(trapezoidal), and the trace is written at 0.5 s steps; time is stretched by
the small factor (under 0.3 %) that makes the lap a whole number of steps, and
speed by its inverse, so the lap closes on a sample and repeated laps join
without a gap (read it with dt_s 0.5 or a divisor of it).

References: W. F. Milliken, D. L. Milliken, *Race Car Vehicle Dynamics*,
SAE 1995, ch. 2 (lap-time simulation with a point-mass vehicle);
D. L. Brayshaw, M. F. Harrison (2005), "A quasi steady state approach to race
car lap simulation in order to understand the effects of racing line and
centre of gravity location", Proc. IMechE Part D 219, 725-739;
T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 2
(power-limited acceleration) and ch. 4 (road load).

Run:  python make_lap.py   (writes lap.csv next to this script)
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import yaml

G_MS2 = 9.80665
MU_LATERAL = 1.3
ACCEL_MS2 = 6.0
BRAKE_MS2 = 12.0
TOP_SPEED_KMH = 215.0
STEP_M = 1.0
DT_S = 0.5
#: share of the full-load wheel force the lap may use (reserve for the 0.5 s resampling)
FORCE_SHARE = 0.97
#: ICAO standard atmosphere, sea level [kg/m³]
AIR_DENSITY_KG_M3 = 1.225
#: speed grid of the acceleration-distance function S(v) [m/s]
SPEED_GRID_MS = np.linspace(0.0, TOP_SPEED_KMH / 3.6, 4001)

CAR_FILE = Path(__file__).with_name("club_racer.yaml")

#: (kind, length_m, radius_m): the invented circuit, clockwise from the start line
CIRCUIT = [
    ("straight", 720.0, None),     # main straight
    ("corner", 95.0, 45.0),        # turn 1, tight right
    ("straight", 240.0, None),
    ("corner", 180.0, 120.0),      # turn 2, fast sweeper
    ("straight", 410.0, None),     # back straight
    ("corner", 70.0, 30.0),        # turn 3, hairpin
    ("straight", 300.0, None),
    ("corner", 140.0, 80.0),       # turn 4
    ("corner", 110.0, 60.0),       # turn 5, linked
    ("straight", 520.0, None),
    ("corner", 160.0, 90.0),       # turn 6
    ("straight", 120.0, None),
    ("corner", 135.0, 55.0),       # final corner onto the main straight
]


def load_car(path=CAR_FILE) -> dict:
    """The numbers of the club racer that bound its acceleration (SI units)."""
    data = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
    rl, perf = data["road_load"], data["performance"]
    fl = perf["full_load"]
    return {"mass_kg": float(data["mass_kg"]),
            "inertial_mass_kg": float(data["mass_kg"]) * (1.0 + data["rotating_mass_fraction"]),
            "crr": float(rl["crr"]), "cda_m2": float(rl["cd"]) * float(rl["frontal_area_m2"]),
            "cla_m2": float(rl.get("cla_m2", 0.0)),
            "speed_rpm": np.asarray(fl["speed_rpm"], float),
            "power_w": np.asarray(fl["power_kw"], float) * 1000.0,
            "rev_limit_rpm": float(perf["rev_limit_rpm"]),
            "launch_rpm": float(perf["launch_speed_rpm"]),
            "overall_ratios": np.asarray(perf["gear_ratios"], float) * perf["final_drive_ratio"],
            "tyre_radius_m": float(perf["tyre_radius_m"]),
            "efficiency": float(perf["driveline_efficiency"])}


def road_load_n(car: dict, v_ms):
    """Level-road resistance [N] at speed [m/s]: Crr m g + ½ρ (CdA + Crr ClA) v²."""
    v = np.asarray(v_ms, float)
    return car["crr"] * car["mass_kg"] * G_MS2 + \
        0.5 * AIR_DENSITY_KG_M3 * (car["cda_m2"] + car["crr"] * car["cla_m2"]) * v * v


def wheel_force_n(car: dict, v_ms):
    """Largest wheel force [N] at full load in the best gear (before the grip limit).

    In each gear the engine runs at n = v · i / r (i the overall ratio); a gear
    counts where n lies within the full-load curve and under the rev limit.
    Below first gear's lowest engine speed the clutch slips with the engine at
    the launch speed, so the wheel force is η · T(n_launch) · i₁ / r.
    """
    v = np.asarray(v_ms, float)[None, :]
    ratios = car["overall_ratios"][:, None]
    r = car["tyre_radius_m"]
    rpm = v * ratios / r * 60.0 / (2.0 * math.pi)
    usable = (rpm >= car["speed_rpm"][0]) & (rpm <= car["rev_limit_rpm"])
    power = np.interp(rpm, car["speed_rpm"], car["power_w"])
    with np.errstate(divide="ignore", invalid="ignore"):
        force = np.where(usable & (v > 0), car["efficiency"] * power / v, 0.0)
    launch_w = car["launch_rpm"] * 2.0 * math.pi / 60.0
    launch_torque = np.interp(car["launch_rpm"], car["speed_rpm"], car["power_w"]) / launch_w
    slipping = rpm[0] < car["launch_rpm"]
    launch_force = car["efficiency"] * launch_torque * car["overall_ratios"][0] / r
    return np.maximum(force.max(axis=0), np.where(slipping, launch_force, 0.0))


def acceleration_limit_ms2(car: dict, v_ms):
    """a(v) = min(a_grip, (k · F_wheel(v) − R(v)) / m_inertial) [m/s²] (see module doc)."""
    excess = (FORCE_SHARE * wheel_force_n(car, v_ms) - road_load_n(car, v_ms)) \
        / car["inertial_mass_kg"]
    return np.minimum(ACCEL_MS2, excess)


def speed_limit_ms(circuit=CIRCUIT, step_m=STEP_M):
    """Distance grid [m] and the local speed limit [m/s] (grip in corners, top speed)."""
    limits = []
    for kind, length, radius in circuit:
        n = int(round(length / step_m))
        v = TOP_SPEED_KMH / 3.6 if kind == "straight" else np.sqrt(MU_LATERAL * G_MS2 * radius)
        limits.append(np.full(n, min(v, TOP_SPEED_KMH / 3.6)))
    v_lim = np.concatenate(limits)
    s = np.arange(v_lim.size) * step_m
    return s, v_lim


def acceleration_distance_m(car: dict, grid_ms=SPEED_GRID_MS):
    """S(v) [m] on a speed grid: distance from standstill to v at the acceleration limit."""
    a = acceleration_limit_ms2(car, grid_ms)
    if np.any(a <= 0):
        raise ValueError("the car cannot accelerate up to the circuit's top speed")
    integrand = grid_ms / a
    return np.concatenate([[0.0], np.cumsum(0.5 * (integrand[1:] + integrand[:-1])
                                            * np.diff(grid_ms))])


def lap_speed_ms(s_m, v_lim_ms, car=None):
    """Point-mass lap speed [m/s] on a distance grid (vectorized, see module doc)."""
    car = load_car() if car is None else car
    dist = acceleration_distance_m(car)
    u = s_m + np.minimum.accumulate(np.interp(v_lim_ms, SPEED_GRID_MS, dist) - s_m)
    acc = np.interp(u, dist, SPEED_GRID_MS)
    v2 = v_lim_ms ** 2
    back = -2 * BRAKE_MS2 * s_m + np.minimum.accumulate((v2 + 2 * BRAKE_MS2 * s_m)[::-1])[::-1]
    return np.minimum(np.minimum(v_lim_ms, acc), np.sqrt(np.maximum(back, 0.0)))


def make_lap():
    s1, v1 = speed_limit_ms()
    n = s1.size
    v_lim = np.tile(v1, 3)
    s = np.arange(v_lim.size) * STEP_M
    v = lap_speed_ms(s, v_lim)[n:2 * n + 1]           # the middle lap, closed at the line
    ds = np.full(v.size - 1, STEP_M)
    t = np.concatenate([[0.0], np.cumsum(ds / (0.5 * (v[1:] + v[:-1])))])
    # close the lap on the time grid: stretch time by the small factor that makes the
    # lap a whole number of steps and scale speed by its inverse (distance unchanged),
    # so the last sample is the first one again and laps join without a gap
    steps = max(1, round(t[-1] / DT_S))
    factor = steps * DT_S / t[-1]
    grid = np.arange(steps + 1) * DT_S
    return grid, np.interp(grid, t * factor, v / factor) * 3.6


def main():
    t, v_kmh = make_lap()
    out = Path(__file__).with_name("lap.csv")
    lines = ["# one flying lap of the invented Marsh End Raceway (3.2 km), made by make_lap.py",
             "time_s,speed_kmh"]
    lines += [f"{ti:.1f},{vi:.2f}" for ti, vi in zip(t, v_kmh)]
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    length_km = sum(seg[1] for seg in CIRCUIT) / 1000
    print(f"wrote {out.name}: {length_km:.2f} km, lap time {t[-1]:.1f} s, "
          f"{v_kmh.min():.0f}-{v_kmh.max():.0f} km/h")


if __name__ == "__main__":
    main()
