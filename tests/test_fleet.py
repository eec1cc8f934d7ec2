"""Fleet studies: totals against single-vehicle runs, chunking, Dask, groups, bad tables."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from conftest import EXAMPLES, run_cli
from tractive import api

ELECTRIC = EXAMPLES / "vehicles" / "electric_van.yaml"
DIESEL = EXAMPLES / "vehicles" / "diesel_light_truck.yaml"

INLINE_YAML = """name: inline van
mass_kg: 2400
rotating_mass_fraction: 0.03
road_load: {f0_n: 210.0, f1_n_per_kmh: 0.9, f2_n_per_kmh2: 0.052}
"""

STUDY = """name: test fleet
fleet: {vehicles: vehicles.csv, trips: TRIPS}
modifications:
  - name: tyres
    cost: 200
    changes: {crr: -10%}
  - name: lighter
    applies_to: B
    changes: {mass_kg: -150}
combinations:
  - {name: both, modifications: all}
economics:
  fuel_price_per_l: 1.7
  electricity_price_per_kwh: 0.3
  service_life_years: 4
"""


def _trip(rng, n):
    """An irregularly sampled trip: times with jitter, speed legs, a rolling grade."""
    t = np.cumsum(rng.uniform(0.6, 1.6, n))
    t -= t[0]
    t += rng.uniform(0, 1000)                      # recorded clock, not starting at 0
    v = 45.0 * np.clip(np.sin(np.pi * np.arange(n) / rng.uniform(40, 90)), 0, None) ** 2
    g = 3.0 * np.sin(np.arange(n) / 17.0)
    return t, v, g


def make_fleet(folder: Path, *, trips_per_vehicle=3, seed=1, name="trips.csv") -> Path:
    """Four vans (electric, diesel, inline coefficients) in groups A and B with trips."""
    rng = np.random.default_rng(seed)
    (folder / "inline.yaml").write_text(INLINE_YAML)
    vehicles = pd.DataFrame({
        "vehicle_id": ["E1", "E2", "D1", "I1"],
        "vehicle_file": [str(ELECTRIC), str(ELECTRIC), str(DIESEL), ""],
        "mass_kg": ["", "", "", "2400"], "f0_n": ["", "", "", "210"],
        "f1_n_per_kmh": ["", "", "", "0.9"], "f2_n_per_kmh2": ["", "", "", "0.052"],
        "group": ["A", "B", "B", "A"]})
    vehicles.to_csv(folder / "vehicles.csv", index=False)
    parts = []
    for vid in vehicles["vehicle_id"]:
        for k in range(trips_per_vehicle):
            t, v, g = _trip(rng, int(rng.integers(80, 200)))
            parts.append(pd.DataFrame({"vehicle_id": vid, "trip_id": f"{vid}-{k}",
                                       "time_s": t, "speed_kmh": v, "grade_pct": g}))
    pd.concat(parts).to_csv(folder / name, index=False)
    study = folder / "study.yaml"
    study.write_text(STUDY.replace("TRIPS", name))
    return study


@pytest.fixture
def fleet_dir(tmp_path):
    make_fleet(tmp_path)
    return tmp_path


def _vehicle_file(folder: Path, vid: str) -> Path:
    return {"E1": ELECTRIC, "E2": ELECTRIC, "D1": DIESEL, "I1": folder / "inline.yaml"}[vid]


def test_totals_equal_sum_of_single_vehicle_energy_runs(fleet_dir):
    # reference: each trip as its own speed file through tractive.api.energy (UN GTR 15
    # Annex 7 wheel energy via tractive.demand.wheel_demand, and the powertrain's consume)
    res = api.fleet(fleet_dir / "study.yaml")
    trips = pd.read_csv(fleet_dir / "trips.csv")
    ref = {}
    for (vid, tid), part in trips.groupby(["vehicle_id", "trip_id"], sort=False):
        f = fleet_dir / f"one_{tid}.csv"
        part[["time_s", "speed_kmh", "grade_pct"]].to_csv(f, index=False)
        r = api.energy(str(_vehicle_file(fleet_dir, vid)), [str(f)], dt_s=1.0).results[0]
        d = r.to_dict()
        acc = ref.setdefault(vid, {"distance_km": 0.0, "positive_energy_kwh": 0.0,
                                   "negative_energy_kwh": 0.0, "battery_energy_kwh": 0.0,
                                   "fuel_l": 0.0})
        for k in acc:
            if d.get(k) is not None:
                acc[k] += d[k]
    base = res.per_vehicle[res.per_vehicle.variant == "baseline"].set_index("vehicle_id")
    for vid, acc in ref.items():
        for k, v in acc.items():
            if v:
                assert base.loc[vid, k] == pytest.approx(v, rel=1e-11), (vid, k)
    total = res.to_dict()["totals"][0]
    assert total["positive_energy_kwh"] == pytest.approx(
        sum(a["positive_energy_kwh"] for a in ref.values()), rel=1e-11)
    assert total["battery_energy_kwh"] == pytest.approx(
        sum(a["battery_energy_kwh"] for a in ref.values()), rel=1e-11)


def test_chunks_give_the_same_totals(fleet_dir):
    # a sum does not depend on how the rows are cut (identity of addition)
    one = api.fleet(fleet_dir / "study.yaml")
    many = api.fleet(fleet_dir / "study.yaml", chunk_rows=37)
    cols = ["positive_energy_kwh", "negative_energy_kwh", "distance_km", "energy_cost"]
    np.testing.assert_allclose(many.per_vehicle[cols].to_numpy(float),
                               one.per_vehicle[cols].to_numpy(float), rtol=1e-12)
    assert many.fleet == one.fleet


def test_dask_local_scheduler_equals_in_process(fleet_dir):
    pytest.importorskip("dask.dataframe")
    one = api.fleet(fleet_dir / "study.yaml")
    dk = api.fleet(fleet_dir / "study.yaml", scheduler="synchronous")
    cols = ["positive_energy_kwh", "negative_energy_kwh", "battery_energy_kwh", "fuel_l"]
    a = one.per_vehicle.sort_values(["variant", "vehicle_id"])[cols].to_numpy(float)
    b = dk.per_vehicle.sort_values(["variant", "vehicle_id"])[cols].to_numpy(float)
    np.testing.assert_allclose(b, a, rtol=1e-12)


def test_parquet_trips_equal_csv(fleet_dir):
    pytest.importorskip("pyarrow")
    pd.read_csv(fleet_dir / "trips.csv").to_parquet(fleet_dir / "trips.parquet")
    (fleet_dir / "pq.yaml").write_text(STUDY.replace("TRIPS", "trips.parquet"))
    a = api.fleet(fleet_dir / "study.yaml").per_vehicle["positive_energy_kwh"].to_numpy()
    b = api.fleet(fleet_dir / "pq.yaml", chunk_rows=100).per_vehicle[
        "positive_energy_kwh"].to_numpy()
    np.testing.assert_allclose(b, a, rtol=1e-12)


def test_group_limited_modification_changes_only_that_group(fleet_dir):
    res = api.fleet(fleet_dir / "study.yaml")
    pv = res.per_vehicle.set_index(["variant", "vehicle_id"])
    for vid, group in (("E1", "A"), ("I1", "A"), ("E2", "B"), ("D1", "B")):
        base = pv.loc[("baseline", vid), "positive_energy_kwh"]
        light = pv.loc[("lighter", vid), "positive_energy_kwh"]
        if group == "A":
            assert light == base
        else:
            # less mass, less rolling and inertial force: less traction energy
            # (road-load equation, GTR 15 Annex 7)
            assert light < base
    # the group totals add up to the fleet's (sum identity)
    doc = res.to_dict()
    for v in ("baseline", "lighter"):
        t = next(r for r in doc["totals"] if r["variant"] == v)
        g = [r for r in doc["groups"] if r["variant"] == v]
        assert sum(r["positive_energy_kwh"] for r in g) == pytest.approx(
            t["positive_energy_kwh"], rel=1e-12)


def test_payback_follows_the_economics_definitions(fleet_dir):
    # simple payback = cost / annual saving; NPV = -cost + saving × service life at 0 %
    # (NIST Handbook 135)
    doc = api.fleet(fleet_dir / "study.yaml").to_dict()
    t = next(r for r in doc["totals"] if r["variant"] == "tyres")
    assert t["modification_cost"] == 200 * 4
    assert t["payback_years"] == pytest.approx(800 / t["annual_saving"])
    assert t["npv"] == pytest.approx(-800 + 4 * t["annual_saving"])


def test_annual_distance_scales_totals(tmp_path):
    study = make_fleet(tmp_path)
    v = pd.read_csv(tmp_path / "vehicles.csv", dtype=str, keep_default_na=False)
    v["annual_distance_km"] = "20000"
    v.to_csv(tmp_path / "vehicles.csv", index=False)
    res = api.fleet(study)
    base = res.per_vehicle[res.per_vehicle.variant == "baseline"]
    # scaled to the year: every vehicle's distance is its annual distance
    np.testing.assert_allclose(base["distance_km"], 20000.0, rtol=1e-12)
    assert res.fleet["distance_km"] < 20000.0


def test_trip_failing_checks_is_listed_and_left_out(fleet_dir):
    trips = pd.read_csv(fleet_dir / "trips.csv")
    first = trips.index[trips.trip_id == "E1-0"]
    trips.loc[first[10], "speed_kmh"] = 900.0          # above the 500 km/h limit
    trips.to_csv(fleet_dir / "trips.csv", index=False)
    res = api.fleet(fleet_dir / "study.yaml")
    doc = res.to_dict()
    assert [x["trip_id"] for x in doc["left_out"]] == ["E1-0"]
    assert doc["left_out"][0]["line"] == int(first[10]) + 2      # the row; header is line 1
    assert "500 km/h" in doc["left_out"][0]["reason"]
    assert doc["fleet"]["trips"] == 11
    assert any("left out" in w for w in doc["warnings"])


def _bad(fleet_dir, edit):
    trips = pd.read_csv(fleet_dir / "trips.csv")
    trips = edit(trips)
    trips.to_csv(fleet_dir / "trips.csv", index=False)
    out = fleet_dir / "out.csv"
    r = run_cli("fleet", fleet_dir / "study.yaml", "-o", out, "--quiet")
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1
    assert not out.exists()
    return r.stderr


def test_unknown_vehicle_id(fleet_dir):
    def edit(t):
        t.loc[5, "vehicle_id"] = "X9"
        return t
    err = _bad(fleet_dir, edit)
    assert "trips.csv:7: vehicle_id: unknown vehicle_id 'X9'" in err


def test_missing_column(fleet_dir):
    err = _bad(fleet_dir, lambda t: t.drop(columns=["trip_id"]))
    assert "trips.csv:1: trip_id: no trip_id column" in err


def test_time_not_increasing(fleet_dir):
    def edit(t):
        t.loc[8, "time_s"] = t.loc[7, "time_s"]
        return t
    err = _bad(fleet_dir, edit)
    assert "trips.csv:10: time_s: time must increase" in err


def test_trip_of_one_sample(fleet_dir):
    def edit(t):
        t.loc[len(t)] = ["I1", "lonely", 5.0, 10.0, 0.0]
        return t
    err = _bad(fleet_dir, edit)
    assert f"trip_id: trip 'lonely' of vehicle 'I1' has one sample" in err


def test_mixed_speed_units(fleet_dir):
    err = _bad(fleet_dir, lambda t: t.assign(speed_mph=t["speed_kmh"] / 1.609344))
    assert "trips.csv:1: speed_mph: two speed columns" in err


def test_mixed_speed_units_across_files(tmp_path):
    make_fleet(tmp_path)
    folder = tmp_path / "trips"
    folder.mkdir()
    t = pd.read_csv(tmp_path / "trips.csv")
    t[t.vehicle_id.isin(["E1", "E2"])].to_csv(folder / "a.csv", index=False)
    t[~t.vehicle_id.isin(["E1", "E2"])].rename(columns={"speed_kmh": "speed_ms"}).to_csv(
        folder / "b.csv", index=False)
    (tmp_path / "f.yaml").write_text(STUDY.replace("TRIPS", "trips"))
    r = run_cli("fleet", tmp_path / "f.yaml")
    assert r.returncode == 2 and "b.csv:1: speed_ms: mixed speed units" in r.stderr


def test_folder_of_files_equals_one_file(tmp_path):
    make_fleet(tmp_path)
    folder = tmp_path / "trips"
    folder.mkdir()
    t = pd.read_csv(tmp_path / "trips.csv")
    t[t.vehicle_id.isin(["E1", "E2"])].to_csv(folder / "a.csv", index=False)
    t[~t.vehicle_id.isin(["E1", "E2"])].to_csv(folder / "b.csv", index=False)
    (tmp_path / "f.yaml").write_text(STUDY.replace("TRIPS", "trips"))
    a = api.fleet(tmp_path / "study.yaml").per_vehicle["negative_energy_kwh"].to_numpy()
    b = api.fleet(tmp_path / "f.yaml").per_vehicle["negative_energy_kwh"].to_numpy()
    np.testing.assert_allclose(b, a, rtol=1e-12)


def test_cli_json_and_outputs(fleet_dir):
    r = run_cli("fleet", fleet_dir / "study.yaml", "--json", "--quiet")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert set(doc) >= {"study", "fleet", "totals", "groups", "warnings"}
    assert set(doc["fleet"]) >= {"vehicles", "trips", "distance_km", "duration_h"}
    assert [t["variant"] for t in doc["totals"]] == ["baseline", "tyres", "lighter", "both"]
    assert {"change", "change_pct", "energy_cost", "fuel_l", "battery_energy_kwh"} <= \
        set(doc["totals"][1])
    text = run_cli("fleet", fleet_dir / "study.yaml", "--quiet")
    assert text.returncode == 0
    assert max(len(x) for x in text.stdout.splitlines()) <= 100
    out = fleet_dir / "per_vehicle.csv"
    assert run_cli("fleet", fleet_dir / "study.yaml", "-o", out, "--quiet").returncode == 0
    table = pd.read_csv(out)
    assert len(table) == 4 * 4                             # vehicles × variants
    xlsx = fleet_dir / "fleet.xlsx"
    assert run_cli("fleet", fleet_dir / "study.yaml", "-o", xlsx, "--quiet").returncode == 0
    from openpyxl import load_workbook
    wb = load_workbook(xlsx)
    assert wb.sheetnames == ["Fleet summary", "Per vehicle", "Savings"]
    assert len(wb["Savings"]._charts) == 1
    r = run_cli("fleet", fleet_dir / "study.yaml", "-o", fleet_dir / "trips.csv")
    assert r.returncode == 2 and "input" in r.stderr


def test_us_units(fleet_dir):
    doc = api.fleet(fleet_dir / "study.yaml", units="us").to_dict()
    met = api.fleet(fleet_dir / "study.yaml").to_dict()
    # 1 mi = 1.609344 km exactly (NIST SP 811)
    assert doc["fleet"]["distance_mi"] == pytest.approx(met["fleet"]["distance_km"] / 1.609344)
    assert "fuel_gal" in doc["totals"][0]


def test_process_pool_equals_in_process(fleet_dir):
    # a sum does not depend on which process adds which chunk (identity of addition)
    one = api.fleet(fleet_dir / "study.yaml")
    pool = api.fleet(fleet_dir / "study.yaml", workers=2, chunk_rows=200)
    np.testing.assert_allclose(pool.per_vehicle["positive_energy_kwh"].to_numpy(float),
                               one.per_vehicle["positive_energy_kwh"].to_numpy(float),
                               rtol=1e-12)
