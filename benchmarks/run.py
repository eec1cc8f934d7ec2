"""Speed and memory targets, reported as ratios (never as timed tests).

Each benchmark times tractive's vectorized computation against a plain
reference written in the same process (a per-step Python loop over the same
equations), so the numbers mean the same on a slow laptop and a fast server.

Targets
-------
* wheel energy, one vehicle on WLTC class 3b: vectorized at least 20× faster
  than the per-step loop;
* wheel energy, 1000 vehicles (a Monte Carlo draw) in one call: at least 50×
  faster than 1000 single-vehicle loops;
* peak extra memory of the 1000-vehicle call: at most 20 float64 arrays of
  shape (N, T) (the force parts, their products and masks).

Run: ``make bench`` (or ``python benchmarks/run.py``). Exits 1 if a target is
missed.
"""

from __future__ import annotations

import sys
import time
import tracemalloc

import numpy as np

from tractive.demand import wheel_demand
from tractive.profiles import load_cycle
from tractive.roadload import RoadLoad


def loop_reference(f0, f1, f2, mass, m_inertial, t, v):
    """Per-step GTR 15 Annex 7 sum, written plainly."""
    pos = 0.0
    for i in range(1, len(t)):
        dt = t[i] - t[i - 1]
        vm = 0.5 * (v[i] + v[i - 1])
        a = (v[i] - v[i - 1]) / dt
        f = f0 + f1 * vm + f2 * vm * vm + m_inertial * a
        if f > 0:
            pos += f * vm * dt
    return pos


def best_of(fn, repeats=5):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> int:
    prof = load_cycle("wltc3b")
    t, v = prof.time_s, prof.speed_ms
    f0, f1, f2 = 130.0, 0.40 * 3.6, 0.032 * 12.96
    rl = RoadLoad(f0, f1, f2)
    failures = []

    single_vec = best_of(lambda: wheel_demand(rl, 1450.0, 1493.5, t, v))
    single_loop = best_of(lambda: loop_reference(f0, f1, f2, 1450.0, 1493.5, t, v), 3)
    ratio1 = single_loop / single_vec
    print(f"one vehicle, WLTC 3b ({len(t)} samples): vectorized is {ratio1:.0f}x the loop "
          "(target >= 20x)")
    if ratio1 < 20:
        failures.append("single-vehicle speed")

    n = 1000
    rng = np.random.default_rng(1)
    rl_n = RoadLoad(f0 * rng.normal(1, 0.05, n), np.full(n, f1), f2 * rng.normal(1, 0.05, n))
    mass = 1450.0 * rng.normal(1, 0.02, n)
    many_vec = best_of(lambda: wheel_demand(rl_n, mass, mass * 1.03, t, v), 3)
    ratio_n = (single_loop * n) / many_vec
    print(f"{n} vehicles in one call: {ratio_n:.0f}x the per-vehicle loop (target >= 50x)")
    if ratio_n < 50:
        failures.append("vehicle-axis speed")

    tracemalloc.start()
    wheel_demand(rl_n, mass, mass * 1.03, t, v)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    arrays = peak / (n * len(t) * 8)
    print(f"peak memory of the {n}-vehicle call: {arrays:.1f} arrays of (N, T) float64 "
          "(target <= 20)")
    if arrays > 20:
        failures.append("memory")

    if failures:
        print("missed: " + ", ".join(failures))
        return 1
    print("all targets met")
    return 0


if __name__ == "__main__":
    sys.exit(main())
