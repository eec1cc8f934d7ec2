"""Generate the example coast-down log (invented vehicle, known road load).

The vehicle is an invented compact hatchback, tested at 1380 kg. Its true
road load at UN GTR No. 15 reference conditions (20 °C, 100 kPa) is

    f0 = 132.0 N,  f1 = 0.52 N/(km/h),  f2 = 0.0315 N/(km/h)²

On the (invented) test morning the air is 11 °C at 99.2 kPa, so the road load
the vehicle actually meets is higher in f0 and f1 (cold tyres, GTR 15 factor
K0 = 8.6e-3 per K, from memory) and in f2 (denser air). A light wind of 2.0 m/s
blows from 40°; the straight runs at 72° and 252°, so the wind has a 1.70 m/s
component along the road, with gusts of about 0.3 m/s.

Six runs (three pairs) coast from 125 km/h to 10 km/h in neutral; between
them the driver brakes to a stop, turns and accelerates. The speed is logged
at 10 Hz with Gaussian noise of 0.15 km/h (GPS Doppler speed), rounded to
0.01 km/h. Spoilers, to be found by the analysis:

* run 4 has a brake touch at about 70 km/h (1.2 m/s² extra for 1.2 s);
* run 2 has one GPS speed spike (+6 km/h);
* run 5 has a 0.8 s logging dropout (short enough to keep the run).

The motion is integrated with scipy.integrate.solve_ivp. Run with

    python make_log.py

to rewrite coastdown_log.csv beside this script (fixed seed, so the file is
reproducible).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

SEED = 20240611
RATE_HZ = 10.0
MASS_KG = 1380.0
ROTATING_MASS_FRACTION = 0.03
# truth at reference conditions (GTR 15: 20 °C, 100 kPa)
F0_REF_N, F1_REF_N_PER_KMH, F2_REF_N_PER_KMH2 = 132.0, 0.52, 0.0315
# test conditions
AIR_TEMPERATURE_C, AIR_PRESSURE_PA = 11.0, 99200.0
K0_PER_K = 8.6e-3                      # GTR 15 rolling temperature factor (from memory)
WIND_MS, WIND_FROM_DEG, GUST_MS = 2.0, 40.0, 0.3
ROAD_HEADING_DEG = 72.0
NOISE_KMH = 0.15
V_TOP_KMH, V_END_KMH = 125.0, 10.0


def test_day_coefficients_si():
    """(a, b, c) [N, N/(m/s), N/(m/s)²] the vehicle meets on the test day."""
    rolling = 1.0 + K0_PER_K * (AIR_TEMPERATURE_C - 20.0)        # f_ref = f_test × rolling
    aero = ((AIR_TEMPERATURE_C + 273.15) / 293.0) * (100000.0 / AIR_PRESSURE_PA)  # K2
    return (F0_REF_N / rolling, F1_REF_N_PER_KMH * 3.6 / rolling,
            F2_REF_N_PER_KMH2 * 12.96 / aero)


def main(out: Path | None = None) -> Path:
    rng = np.random.default_rng(SEED)
    a, b, c = test_day_coefficients_si()
    m = MASS_KG * (1.0 + ROTATING_MASS_FRACTION)
    dt = 1.0 / RATE_HZ
    # gusts: smoothed random walk, 10 s correlation time, sampled every 0.5 s
    t_gust = np.arange(0.0, 4000.0, 0.5)
    g = np.zeros_like(t_gust)
    for i in range(1, len(g)):
        g[i] = g[i - 1] * np.exp(-0.5 / 10.0) + rng.normal(
            0.0, GUST_MS * np.sqrt(1.0 - np.exp(-1.0 / 10.0)))
    pieces = []
    t0 = 0.0

    def add(t, v, heading):
        pieces.append((t, v, np.full(len(t), heading)))

    for k in range(6):
        heading = ROAD_HEADING_DEG if k % 2 == 0 else (ROAD_HEADING_DEG + 180.0) % 360.0
        headwind = WIND_MS * np.cos(np.radians(WIND_FROM_DEG - heading))
        # accelerate from rest to the top speed (1.6 m/s²) and hold it for 8 s
        v_top = V_TOP_KMH / 3.6
        ta = np.arange(0.0, v_top / 1.6, dt)
        add(t0 + ta, 1.6 * ta, heading)
        t0 = t0 + ta[-1] + dt
        tc = np.arange(0.0, 8.0, dt)
        add(t0 + tc, np.full(len(tc), v_top), heading)
        t0 = t0 + tc[-1] + dt
        # coast in neutral
        brake = (k == 3)
        start = t0

        def rhs(t, y, start=start, headwind=headwind, brake=brake):
            v = y[0]
            w = headwind + np.interp(start + t, t_gust, g)     # gusts along the road
            force = a + b * v + c * (v + w) ** 2
            extra = 0.0
            if brake:
                # brake touch about 45 s into the run (near 70 km/h): 1.2 m/s² for 1.2 s
                extra = 1.2 * m * np.exp(-0.5 * ((t - 45.0) / 0.35) ** 4)
            return [-(force + extra) / m]

        def stop(t, y):
            return y[0] - V_END_KMH / 3.6
        stop.terminal = True
        sol = solve_ivp(rhs, (0.0, 600.0), [v_top], events=stop, dense_output=True,
                        rtol=1e-9, atol=1e-10, max_step=0.1)
        tr = np.arange(0.0, sol.t_events[0][0], dt)
        add(t0 + tr, sol.sol(tr)[0], heading)
        t0 = t0 + tr[-1] + dt
        # brake to rest, stand, turn round
        v_end = V_END_KMH / 3.6
        tb = np.arange(0.0, v_end / 1.5, dt)
        add(t0 + tb, v_end - 1.5 * tb, heading)
        t0 = t0 + tb[-1] + dt
        ts = np.arange(0.0, 10.0, dt)
        add(t0 + ts, np.zeros(len(ts)), (heading + 180.0) % 360.0)
        t0 = t0 + ts[-1] + dt
    t = np.concatenate([p[0] for p in pieces])
    v_kmh = np.concatenate([p[1] for p in pieces]) * 3.6
    heading = np.concatenate([p[2] for p in pieces])
    moving = v_kmh > 0.5
    v_kmh = np.where(moving, v_kmh + rng.normal(0.0, NOISE_KMH, len(t)), 0.0)
    v_kmh = np.clip(v_kmh, 0.0, None)
    heading = (heading + rng.normal(0.0, 1.5, len(t))) % 360.0
    # spoilers: one spike in run 2, a 0.8 s dropout in run 5
    spike = np.argmin(np.abs(t - _run_time(t, v_kmh, run=2, after_s=30.0)))
    v_kmh[spike] += 6.0
    gap_at = np.argmin(np.abs(t - _run_time(t, v_kmh, run=5, after_s=60.0)))
    keep = np.ones(len(t), bool)
    keep[gap_at:gap_at + 8] = False
    temp = AIR_TEMPERATURE_C + 0.3 * np.sin(t / 900.0) + rng.normal(0.0, 0.05, len(t))
    press = AIR_PRESSURE_PA + rng.normal(0.0, 5.0, len(t))
    out = out or Path(__file__).with_name("coastdown_log.csv")
    with open(out, "w", encoding="utf-8", newline="\n") as fh:
        fh.write("# Invented coast-down test, compact hatchback, 1380 kg; see make_log.py\n")
        fh.write("time_s,speed_kmh,heading_deg,air_temperature_c,air_pressure_pa\n")
        for i in np.flatnonzero(keep):
            fh.write(f"{t[i]:.1f},{v_kmh[i]:.2f},{heading[i]:.0f},{temp[i]:.1f},{press[i]:.0f}\n")
    return out


def _run_time(t, v_kmh, *, run, after_s):
    """Time [s] about ``after_s`` into the given coasting run (1-based)."""
    top = V_TOP_KMH - 1.0
    at_top = v_kmh > top
    ends = np.flatnonzero(at_top[:-1] & ~at_top[1:])     # leaving the top speed
    return float(t[ends[run - 1]] + after_s)


if __name__ == "__main__":
    print(f"wrote {main()}")
