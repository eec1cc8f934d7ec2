"""Make the invented fleet's trips table (and its vehicles table) from a seed.

    python make_trips.py [--seed 7] [--trips 40] [--out trips.csv | trips.parquet]

60 vans in three groups (20 city diesel vans, 20 regional diesel vans, 20
electric city vans), each with ``--trips`` trips of 5 to 25 minutes logged at
1 Hz: legs of acceleration, cruising and braking between stops, on a gently
rolling road. One city trip carries a logging glitch (a single 450 km/h
sample) so that the run shows how such a trip is left out and listed. The
data are invented; the same seed gives the same files.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
GROUPS = (("city", "../vehicles/diesel_light_truck.yaml", (25.0, 50.0), 14000.0),
          ("regional", "../vehicles/diesel_light_truck.yaml", (55.0, 85.0), 38000.0),
          ("electric", "../vehicles/electric_van.yaml", (25.0, 50.0), 16000.0))


def vehicles_table(rng) -> pd.DataFrame:
    """60 vans, 20 per group, with an annual distance each."""
    rows = []
    for g, (group, file, _, annual) in enumerate(GROUPS):
        for i in range(20):
            rows.append({"vehicle_id": f"VAN-{g + 1}{i + 1:02d}", "vehicle_file": file,
                         "group": group,
                         "annual_distance_km": round(annual * rng.uniform(0.7, 1.3), -2)})
    return pd.DataFrame(rows)


def trip_speed_kmh(rng, speeds, duration_s: int) -> np.ndarray:
    """One trip: stop-to-stop legs until the duration is reached [km/h at 1 Hz]."""
    out = [np.zeros(int(rng.integers(5, 20)))]
    n = len(out[0])
    while n < duration_s:
        v = rng.uniform(*speeds) / 3.6
        up = np.arange(0.0, v, rng.uniform(0.4, 0.8))
        cruise = v + rng.normal(0.0, 0.3, int(rng.integers(20, 240))).cumsum() * 0.05
        down = np.arange(v, 0.0, -rng.uniform(1.0, 1.8))
        stop = np.zeros(int(rng.integers(3, 40)))
        leg = np.concatenate([up, np.clip(cruise, 0.0, None), down, stop])
        out.append(leg)
        n += len(leg)
    return np.concatenate(out)[:duration_s] * 3.6


def trips_table(rng, vehicles: pd.DataFrame, trips: int) -> pd.DataFrame:
    """Long-form samples: vehicle_id, trip_id, time_s, speed_kmh, grade_pct."""
    parts = []
    speeds = {g[0]: g[2] for g in GROUPS}
    for vid, group in zip(vehicles["vehicle_id"], vehicles["group"]):
        for k in range(trips):
            n = int(rng.integers(300, 1500))
            v = trip_speed_kmh(rng, speeds[group], n)
            x = np.arange(n)
            grade = 2.0 * np.sin(2 * np.pi * x / rng.uniform(200, 600) + rng.uniform(0, 6))
            parts.append(pd.DataFrame({"vehicle_id": vid, "trip_id": f"{vid}-T{k + 1:03d}",
                                       "time_s": x.astype(float), "speed_kmh": v.round(2),
                                       "grade_pct": grade.round(2)}))
    df = pd.concat(parts, ignore_index=True)
    glitch = df.index[(df["trip_id"] == "VAN-103-T007") & (df["time_s"] == 120.0)]
    df.loc[glitch, "speed_kmh"] = 450.0
    return df


def main(argv=None) -> None:
    """Write vehicles.csv and the trips table beside this script."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--trips", type=int, default=40, help="trips per van")
    ap.add_argument("--out", default=str(HERE / "trips.csv"))
    args = ap.parse_args(argv)
    rng = np.random.default_rng(args.seed)
    vehicles = vehicles_table(rng)
    vehicles.to_csv(HERE / "vehicles.csv", index=False)
    trips = trips_table(rng, vehicles, args.trips)
    if args.out.endswith(".parquet"):
        trips.to_parquet(args.out, index=False)
    else:
        trips.to_csv(args.out, index=False)
    print(f"{len(vehicles)} vans, {trips['trip_id'].nunique()} trips, {len(trips)} rows "
          f"-> {args.out}")


if __name__ == "__main__":
    main()
