"""Generate lap.csv: one flying lap of an invented 3.2 km circuit.

The circuit ("Marsh End Raceway", invented) is a list of straights and
constant-radius corners. The speed along the lap follows the classical
point-mass, quasi-steady lap model:

1. In a corner of radius R the speed is limited by lateral grip,
   v ≤ sqrt(μ_lat · g · R) (μ_lat = 1.3, no aerodynamic grip); on a straight
   by the car's top speed on this circuit (v ≤ 215 km/h).
2. Forward from every point the car accelerates at most a_acc = 6.0 m/s²
   (traction- and power-limited average), so v² can grow by at most
   2 a_acc Δs over a distance Δs.
3. Backward from every point it brakes at most a_brake = 12.0 m/s², so v²
   can fall by at most 2 a_brake Δs.

The lap speed is the lowest of the three limits at every point. With
constant limits, (2) and (3) have a closed form that numpy evaluates over the
whole lap at once:

    v_acc(s)²   = 2 a_acc s + min over s' ≤ s of [v_lim(s')² − 2 a_acc s']
    v_brake(s)² = −2 a_brake s + min over s' ≥ s of [v_lim(s')² + 2 a_brake s']

To make the lap periodic (the car crosses the line at the same speed it
started with) the circuit is laid out three times and the middle lap kept.
Time follows from t = ∫ ds / v (trapezoidal), and the trace is written at
0.5 s steps.

References: W. F. Milliken, D. L. Milliken, *Race Car Vehicle Dynamics*,
SAE 1995, ch. 2 (lap-time simulation with a point-mass vehicle);
D. L. Brayshaw, M. F. Harrison (2005), "A quasi steady state approach to race
car lap simulation in order to understand the effects of racing line and
centre of gravity location", Proc. IMechE Part D 219, 725-739.

Run:  python make_lap.py   (writes lap.csv next to this script)
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

G_MS2 = 9.80665
MU_LATERAL = 1.3
ACCEL_MS2 = 6.0
BRAKE_MS2 = 12.0
TOP_SPEED_KMH = 215.0
STEP_M = 1.0
DT_S = 0.5

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


def lap_speed_ms(s_m, v_lim_ms):
    """Point-mass lap speed [m/s] on a distance grid (vectorized, see module doc)."""
    v2 = v_lim_ms ** 2
    acc = 2 * ACCEL_MS2 * s_m + np.minimum.accumulate(v2 - 2 * ACCEL_MS2 * s_m)
    back = -2 * BRAKE_MS2 * s_m + np.minimum.accumulate((v2 + 2 * BRAKE_MS2 * s_m)[::-1])[::-1]
    return np.sqrt(np.minimum(v2, np.minimum(acc, back)))


def make_lap():
    s1, v1 = speed_limit_ms()
    n = s1.size
    v_lim = np.tile(v1, 3)
    s = np.arange(v_lim.size) * STEP_M
    v = lap_speed_ms(s, v_lim)[n:2 * n + 1]           # the middle lap, closed at the line
    ds = np.full(v.size - 1, STEP_M)
    t = np.concatenate([[0.0], np.cumsum(ds / (0.5 * (v[1:] + v[:-1])))])
    grid = np.arange(0.0, t[-1] + 1e-9, DT_S)
    return grid, np.interp(grid, t, v) * 3.6


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
