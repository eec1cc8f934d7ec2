"""Fleet wheel-energy benchmark: 100,000 trips of 20 minutes at 1 Hz.

Target: the whole fleet (100,000 trips × 1201 samples, 500 vehicles, wheel
energy by UN GTR No. 15 Annex 7) through :func:`tractive.fleet.engine.trip_batch`
in at most 30 s on a 2-core machine, in-process. The run is fed in chunks of
1000 trips (1.2 million rows, as the trips reader streams a file); to keep the
benchmark about the computation and not about making 120 million synthetic
rows, one chunk of synthetic trips is made and passed 100 times.

Also printed: the ratio to a per-trip library loop (each trip resampled with
:func:`numpy.interp` and run through :func:`tractive.demand.wheel_demand` one by
one, as a script calling the library per trip would), measured over a sample of
trips and scaled to the whole fleet.

Run: ``python benchmarks/fleet.py [--trips N]``. Exits 1 when the target is missed.
``make bench`` runs it too (figure 5 of run.py, through :func:`measure`).
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

if str(Path(__file__).resolve().parents[1] / "src") not in sys.path:
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from tractive.demand import wheel_demand  # noqa: E402
from tractive.fleet.engine import FleetModel, trip_batch  # noqa: E402
from tractive.roadload import RoadLoad  # noqa: E402
from tractive.units import STANDARD_GRAVITY_MS2  # noqa: E402

TARGET_S = 30.0
TRIP_SAMPLES = 1201             # 20 minutes at 1 Hz
CHUNK_TRIPS = 1000
VEHICLES = 500


def synthetic_chunk(rng, trips: int) -> pd.DataFrame:
    """``trips`` trips of 20 minutes at 1 Hz, vehicles in turn (checked-frame columns)."""
    n = TRIP_SAMPLES
    k = np.arange(trips)
    t = np.tile(np.arange(n, dtype=float), trips)
    phase = rng.uniform(30, 120, trips)
    v = 14.0 * np.clip(np.sin(np.pi * np.tile(np.arange(n), trips) / np.repeat(phase, n)),
                       0, None) ** 2
    vid = np.array([f"V{i % VEHICLES:04d}" for i in k], dtype=object)
    tid = np.array([f"T{i:06d}" for i in k], dtype=object)
    return pd.DataFrame({"vehicle_id": np.repeat(vid, n), "trip_id": np.repeat(tid, n),
                         "time_s": t, "speed_ms": v, "grade_pct": np.zeros(trips * n),
                         "line": np.arange(trips * n) + 2, "file": "synthetic"})


def model(rng) -> FleetModel:
    """500 vans, wheel energy only (baseline)."""
    mass = rng.uniform(1800, 3500, VEHICLES)
    c = np.stack([0.009 * mass * STANDARD_GRAVITY_MS2, np.zeros(VEHICLES),
                  np.full(VEHICLES, 0.5 * 1.2 * 2.2), mass * 1.03,
                  mass * STANDARD_GRAVITY_MS2], axis=-1)[None]
    return FleetModel(tuple(f"V{i:04d}" for i in range(VEHICLES)), ("baseline",), c,
                      ((None,) * VEHICLES,), dt_s=1.0)


def per_trip_loop(chunk: pd.DataFrame, fm: FleetModel, trips: int) -> float:
    """Seconds for ``trips`` trips run one by one through the library."""
    n = TRIP_SAMPLES
    t0 = time.perf_counter()
    for j in range(trips):
        part = chunk.iloc[j * n:(j + 1) * n]
        rel = part["time_s"].to_numpy() - part["time_s"].iat[0]
        grid = np.arange(int(np.floor(rel[-1] + 1e-9)) + 1) * 1.0
        v = np.interp(grid, rel, part["speed_ms"].to_numpy())
        g = np.interp(grid, rel, part["grade_pct"].to_numpy() / 100.0)
        c = fm.coefficients[0, j % VEHICLES]
        wheel_demand(RoadLoad(c[0], c[1], c[2]), c[4] / STANDARD_GRAVITY_MS2, c[3], grid, v, g)
    return time.perf_counter() - t0


def measure(trips: int = 100_000, sample: int = 300) -> tuple:
    """(fleet seconds, per-trip loop seconds scaled to ``trips``) of one run."""
    rng = np.random.default_rng(1)
    fm = model(rng)
    chunk = synthetic_chunk(rng, min(CHUNK_TRIPS, trips))
    chunks = int(np.ceil(trips / len(chunk["trip_id"].unique())))
    t0 = time.perf_counter()
    total = 0.0
    for _ in range(chunks):
        out = trip_batch(chunk, fm)
        total += float(out["positive_j"].sum())
    fleet_s = time.perf_counter() - t0
    looped = min(sample, trips, CHUNK_TRIPS)
    return fleet_s, per_trip_loop(chunk, fm, looped) * (trips / looped)


def main(argv=None) -> int:
    """Run the benchmark; 0 when the target is met, 1 when missed."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trips", type=int, default=100_000)
    ap.add_argument("--sample", type=int, default=300, help="trips of the per-trip loop")
    args = ap.parse_args(argv)
    fleet_s, loop_s = measure(args.trips, args.sample)
    print(f"fleet wheel energy: {args.trips} trips x {TRIP_SAMPLES} samples in {fleet_s:.1f} s "
          f"(target at most {TARGET_S:g} s for 100000 trips)")
    print(f"per-trip library loop, scaled from {args.sample} trips: {loop_s:.1f} s; "
          f"ratio {loop_s / fleet_s:.1f}x")
    limit = TARGET_S * args.trips / 100_000
    if fleet_s > limit:
        print(f"MISSED: {fleet_s:.1f} s > {limit:.1f} s")
        return 1
    print("target met")
    return 0


if __name__ == "__main__":
    sys.exit(main())
