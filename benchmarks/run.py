"""Speed and memory targets, reported as ratios (never as timed tests).

Each benchmark times tractive's vectorized computation against a plain
reference written in the same process (a per-step Python loop over the same
equations), so the numbers mean the same on a slow laptop and a fast server.

Targets
-------
* wheel energy, one vehicle on WLTC class 3b: vectorized at least 5× faster
  than the per-step loop (a single 1800-step trace is dominated by per-call
  overhead; measured 9-13× on a busy 2-core machine);
* wheel energy, 1000 vehicles (a Monte Carlo draw) in one call: at least 15×
  faster than 1000 single-vehicle loops;
* performance (top speed, 0-100 and 80-120 km/h, gradeability) of 1000
  six-gear cars with a vehicle axis in one call: at least 20× faster than
  1000 single-vehicle calls;
* peak extra memory of the 1000-vehicle call: at most 6 float64 arrays of
  shape (N, T) (the force and the traction and braking weights);
* Monte Carlo of a study, 1000 draws of a combustion vehicle with a BSFC map
  and 6 gears on WLTC class 3b (every gear of every draw at every step is
  evaluated): evaluated in chunks along the vehicle axis (chunk size from the
  study engine's memory budget), the peak memory stays at most 40 float64
  arrays of shape (T,) per draw (unchunked it is about 140), and the chunked
  run takes at most 1.25× the time of the unchunked one.

Run: ``make bench`` (or ``python benchmarks/run.py``). Exits 1 if a target is
missed.
"""

from __future__ import annotations

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

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
          "(target >= 5x)")
    if ratio1 < 5:
        failures.append("single-vehicle speed")

    n = 1000
    rng = np.random.default_rng(1)
    rl_n = RoadLoad(f0 * rng.normal(1, 0.05, n), np.full(n, f1), f2 * rng.normal(1, 0.05, n))
    mass = 1450.0 * rng.normal(1, 0.02, n)
    many_vec = best_of(lambda: wheel_demand(rl_n, mass, mass * 1.03, t, v), 3)
    ratio_n = (single_loop * n) / many_vec
    print(f"{n} vehicles in one call: {ratio_n:.0f}x the per-vehicle loop (target >= 15x)")
    if ratio_n < 15:
        failures.append("vehicle-axis speed")

    tracemalloc.start()
    wheel_demand(rl_n, mass, mass * 1.03, t, v)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    arrays = peak / (n * len(t) * 8)
    print(f"peak memory of the {n}-vehicle call: {arrays:.1f} arrays of (N, T) float64 "
          "(target <= 6)")
    if arrays > 6:
        failures.append("memory")

    failures += performance_vehicle_axis()
    failures += monte_carlo_chunks()

    if failures:
        print("missed: " + ", ".join(failures))
        return 1
    print("all targets met")
    return 0


def performance_vehicle_axis() -> list:
    """Performance of 1000 vehicles in one call against 1000 one-vehicle calls."""
    from dataclasses import replace
    from pathlib import Path

    from tractive.performance import performance_summary
    from tractive.vehicle import load_vehicle

    car = load_vehicle(Path(__file__).resolve().parents[1] / "examples" / "vehicles" /
                       "track_car.yaml")
    n = 1000
    rng = np.random.default_rng(3)
    mass = car.mass_kg * rng.normal(1, 0.03, n)
    rl = car.road_load
    cda, crr, cla = (x * rng.normal(1, 0.05, n) for x in (rl.cda_m2, rl.crr, rl.cla_m2))
    batch = replace(car, mass_kg=mass, road_load=replace(rl, cda_m2=cda, crr=crr, cla_m2=cla))
    singles = [replace(car, mass_kg=float(mass[i]), road_load=replace(
        rl, cda_m2=float(cda[i]), crr=float(crr[i]), cla_m2=float(cla[i]))) for i in range(n)]
    t_batch = best_of(lambda: performance_summary(batch), 3)
    t_singles = best_of(lambda: [performance_summary(v) for v in singles], 1)
    ratio = t_singles / t_batch
    print(f"performance of {n} six-gear cars in one call: {ratio:.0f}x {n} single-vehicle "
          "calls (target >= 20x)")
    return [] if ratio >= 20 else ["performance vehicle-axis speed"]


MC_STUDY = """\
name: chunk benchmark
baseline:
  vehicle: {vehicle}
  changes:
    mass_std_kg: 40
modifications:
  - name: lighter
    changes: {{mass_kg: -60}}
driving:
  profiles: [wltc3b]
uncertainty:
  draws: 1000
  seed: 1
"""


def monte_carlo_chunks() -> list:
    """Chunked against unchunked Monte Carlo of a study: peak memory and time ratios."""
    from tractive.study.engine import CHUNK_MEMORY_BYTES, run_spec
    from tractive.study.spec import load_study

    vehicle = Path(__file__).resolve().parents[1] / "examples" / "vehicles" / \
        "petrol_hatchback_map.yaml"
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "study.yaml"
        path.write_text(MC_STUDY.format(vehicle=vehicle), encoding="utf-8")
        spec = load_study(path)
    n = spec.draws
    steps = len(load_cycle("wltc3b").time_s)

    def run(chunk):
        return run_spec(spec, series=False, chunk_size=chunk)

    def peak_of(chunk):
        tracemalloc.start()
        run(chunk)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        return peak / ((n + 1) * steps * 8)

    failures = []
    whole = n + 1
    if run(None).to_dict() != run(whole).to_dict():
        failures.append("chunked Monte Carlo differs from unchunked")
    chunked, unchunked = peak_of(None), peak_of(whole)
    print(f"Monte Carlo, {n} draws, BSFC map and 6 gears on WLTC 3b: peak memory "
          f"{chunked:.0f} (T,) arrays per draw in chunks of the "
          f"{CHUNK_MEMORY_BYTES / 2 ** 20:.0f} MiB budget, {unchunked:.0f} unchunked "
          "(target <= 40)")
    if chunked > 40:
        failures.append("Monte Carlo memory")
    t_chunked = best_of(lambda: run(None), 2)
    t_whole = best_of(lambda: run(whole), 2)
    ratio = t_chunked / t_whole
    print(f"Monte Carlo in chunks takes {ratio:.2f}x the time of one call (target <= 1.25)")
    if ratio > 1.25:
        failures.append("Monte Carlo chunk time")
    return failures


if __name__ == "__main__":
    sys.exit(main())
