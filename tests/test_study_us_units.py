"""A study in US units states every output in US units.

Exact conversion factors (NIST SP 811, Appendix B.8; NIST Handbook 44,
Appendix C): 1 mile = 1609.344 m, 1 US gallon = 3.785411784 L,
1 mph = 1.609344 km/h.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest

from tractive.errors import InputError
from tractive.study.engine import run_study

MILE_KM = 1.609344          # NIST SP 811, B.8 (exact)
GALLON_L = 3.785411784      # NIST SP 811, B.8 (exact)

CAR = """\
name: petrol hatch
mass_kg: 1250
road_load:
  cda_m2: 0.64
  crr: 0.0095
  crr_std: 0.0004
powertrain:
  kind: combustion
  fuel: gasoline
  tank_l: 45
  gear_ratios: [3.5, 2.0, 1.4, 1.05, 0.85]
  final_drive_ratio: 3.9
  tyre_radius_m: 0.3
  transmission_efficiency: 0.93
  idle_speed_rpm: 800
  rev_limit_rpm: 6200
  upshift_speeds_kmh: [18, 32, 50, 70]
  willans:
    marginal_efficiency: 0.38
    friction_mep_kpa: 130
    displacement_l: 1.4
  idle_fuel_l_per_h: 0.7
performance:
  driven_axle_load_share: 0.6
  tyre_road_friction: 1.0
  full_load:
    speed_rpm: [1000, 3000, 5500, 6200]
    power_kw: [15, 50, 80, 78]
  gear_ratios: [3.5, 2.0, 1.4, 1.05, 0.85]
  final_drive_ratio: 3.9
  tyre_radius_m: 0.3
  driveline_efficiency: 0.9
  shift_time_s: 0.3
"""

# the same economics in both unit systems: 12000 mi = 19312.128 km, 3.785411784 money per
# US gallon = 1 money per litre, 8706.4471032 g per US gallon = 2300 g per litre (exact)
METRIC_ECON = """\
economics:
  annual_distance_km: 19312.128
  fuel_price_per_l: 1.0
  fuel_co2_g_per_l: 2300
  discount_rate_pct: 3
  service_life_years: 6
"""
US_ECON = """\
economics:
  annual_distance_mi: 12000
  fuel_price_per_gal: 3.785411784
  fuel_co2_g_per_gal: 8706.4471032
  discount_rate_pct: 3
  service_life_years: 6
"""

STUDY = """\
name: hatch study
{units}
baseline:
  vehicle: car.yaml
modifications:
  - name: lighter
    cost: 500
    changes: {{mass_kg: -60, cda_m2: -0.02}}
driving:
  profiles: [hwfet, "steady:80kmh:300s"]
  mixes:
    - name: mixed
      shares_pct: {{hwfet: 40, "steady:80kmh:300s": 60}}
{econ}uncertainty:
  draws: 40
  seed: 3
"""


def _run(folder: Path, units: str, econ: str, **kw):
    folder.mkdir(exist_ok=True)
    (folder / "car.yaml").write_text(CAR, encoding="utf-8")
    text = STUDY.format(units="units: us" if units == "us" else "", econ=econ)
    (folder / "study.yaml").write_text(text, encoding="utf-8")
    return run_study(folder / "study.yaml", **kw)


@pytest.fixture(scope="module")
def pair(tmp_path_factory):
    root = tmp_path_factory.mktemp("units")
    return (_run(root / "metric", "metric", METRIC_ECON),
            _run(root / "us", "us", US_ECON))


#: unit suffixes a US key may carry (US customary, or units both systems use)
US_SUFFIX = re.compile(r"_(mi|mph|mph_s|per_mi|mpg|gal|kwh|s|kg|pct|years)$")
#: keys without a unit: money in the study currency, and a count
UNITLESS = {"annual_energy_cost", "annual_saving", "modification_cost", "npv"}
METRIC_MARK = re.compile(r"(km|kmh|_l$|_l_|per_l|per_100km)")


def test_every_numeric_key_of_a_us_row_is_in_us_units(pair):
    _, us = pair
    doc = json.loads(json.dumps(us.to_dict()))
    keys = set()
    for row in doc["rows"]:
        keys |= {k for k, v in row.items() if isinstance(v, (int, float)) or v is None}
        for part in ("change", "mean", "interval_low", "interval_high"):
            keys |= set(row[part])
    assert keys, "no numeric keys found"
    for k in sorted(keys):
        assert not METRIC_MARK.search(k), k
        assert k in UNITLESS or k == "payback_years" or US_SUFFIX.search(k), k
    assert "accel_0_60_mph_s" in keys and "accel_50_70_mph_s" in keys
    for section in ("economics",):
        for k in doc[section]:
            assert not METRIC_MARK.search(k), k
    for p in doc["profiles"]:
        assert not METRIC_MARK.search(" ".join(k for k in p if k != "spec")), p
    for a in doc["attribution"]:
        assert not METRIC_MARK.search(a["metric"]), a["metric"]


def test_us_values_are_the_metric_values_by_the_exact_factors(pair):
    metric, us = pair
    factors = {  # US key: (metric key, factor applied to the metric value)
        "distance_mi": ("distance_km", 1 / MILE_KM),
        "positive_energy_wh_per_mi": ("positive_energy_wh_per_km", MILE_KM),
        "co2_g_per_mi": ("co2_g_per_km", MILE_KM),
        "fuel_gal": ("fuel_l", 1 / GALLON_L),
        "range_mi": ("range_km", 1 / MILE_KM),
        "top_speed_mph": ("top_speed_kmh", 1 / MILE_KM),
        "annual_distance_mi": ("annual_distance_km", 1 / MILE_KM),
        "annual_fuel_gal": ("annual_fuel_l", 1 / GALLON_L),
        "annual_energy_cost": ("annual_energy_cost", 1.0),
        "annual_co2_kg": ("annual_co2_kg", 1.0),
        "npv": ("npv", 1.0),
    }
    checked = 0
    for rm, ru in zip(metric.rows, us.rows):
        assert (rm.variant, rm.profile) == (ru.variant, ru.profile)
        for uk, (mk, f) in factors.items():
            if mk not in rm.metrics:
                continue
            assert ru.metrics[uk] == pytest.approx(rm.metrics[mk] * f, rel=1e-12), uk
            assert ru.interval_high[uk] == pytest.approx(
                (rm.interval_low if f < 0 else rm.interval_high)[mk] * f, rel=1e-12), uk
            checked += 1
        # mpg = (100 / 1.609344) / (L/100 km / 3.785411784) (definition of both units)
        if "fuel_l_per_100km" in rm.metrics:
            assert ru.metrics["fuel_economy_mpg"] == pytest.approx(
                100 / MILE_KM * GALLON_L / rm.metrics["fuel_l_per_100km"], rel=1e-12)
    assert checked > 30


def test_us_economics_are_echoed_per_mile_and_gallon(pair):
    metric, us = pair
    # input values back, exact factors (consistency with the study file)
    assert us.economics["annual_distance_mi"] == pytest.approx(12000, rel=1e-14)
    assert us.economics["fuel_price_per_gal"] == pytest.approx(3.785411784, rel=1e-14)
    assert us.economics["fuel_co2_g_per_gal"] == pytest.approx(8706.4471032, rel=1e-14)
    assert not {"annual_distance_km", "fuel_price_per_l", "fuel_co2_g_per_l"} & \
        set(us.economics)
    assert metric.economics["annual_distance_km"] == pytest.approx(19312.128, rel=1e-14)
    assert metric.economics["fuel_co2_g_per_l"] == pytest.approx(2300, rel=1e-14)


def test_us_profile_distances_are_in_miles(pair):
    metric, us = pair
    for pm, pu in zip(metric.to_dict()["profiles"], us.to_dict()["profiles"]):
        assert "distance_km" not in pu
        if pm["distance_km"] is None:
            assert pu["distance_mi"] is None
        else:
            assert pu["distance_mi"] == pytest.approx(pm["distance_km"] / MILE_KM, rel=1e-12)
    # the steady profile: 80 km/h for 300 s = 20/3 km (distance = speed x time)
    steady = [p for p in us.to_dict()["profiles"] if p["name"] == "steady:80kmh:300s"][0]
    assert steady["distance_mi"] == pytest.approx(80 * 300 / 3600 / MILE_KM, rel=1e-9)


def test_us_acceleration_times_are_0_60_and_50_70_mph(pair, tmp_path):
    from tractive.performance import acceleration_time_s
    from tractive.vehicle import load_vehicle

    metric, us = pair
    (tmp_path / "car.yaml").write_text(CAR, encoding="utf-8")
    veh = load_vehicle(tmp_path / "car.yaml")
    base = us.row("baseline", "hwfet").metrics
    # 60 mph = 96.56064 km/h, 50 mph = 80.4672 km/h, 70 mph = 112.65408 km/h (exact mile)
    t60, _ = acceleration_time_s(veh, 0.0, 96.56064)
    t5070, _ = acceleration_time_s(veh, 80.4672, 112.65408)
    assert base["accel_0_60_mph_s"] == pytest.approx(t60, rel=1e-12)
    assert base["accel_50_70_mph_s"] == pytest.approx(t5070, rel=1e-12)
    # 60 mph is below 100 km/h: it takes less time (monotone speed rise at full load)
    assert base["accel_0_60_mph_s"] < metric.row("baseline", "hwfet").metrics[
        "accel_0_100_kmh_s"]
    # profile independent: the mix and every profile give the same time
    assert {r.metrics["accel_0_60_mph_s"] for r in us.rows if r.variant == "baseline"} == \
        {base["accel_0_60_mph_s"]}
    # the lighter variant accelerates faster and its change is attributed
    lighter = us.row("lighter", "hwfet")
    assert lighter.change["accel_0_60_mph_s"] < 0
    assert any(a.metric == "accel_0_60_mph_s" for a in us.attribution)
    assert us.unit_of("accel_0_60_mph_s") == "s"


def test_both_fuel_co2_keys_are_refused(tmp_path):
    econ = US_ECON + "  fuel_co2_g_per_l: 2300\n"
    with pytest.raises(InputError, match="fuel_co2_g_per_l or fuel_co2_g_per_gal"):
        _run(tmp_path, "us", econ)


def test_workbook_numbers_equal_the_json(pair, tmp_path):
    from openpyxl import load_workbook

    from tractive.report.xlsx import write_workbook

    _, us = pair
    write_workbook(us, tmp_path / "us.xlsx")
    wb = load_workbook(tmp_path / "us.xlsx")
    # profile sheet: speed in mph = the series' km/h over 1.609344 (exact mile)
    series = [s for s in us.series if s.profile == "steady:80kmh:300s"]
    ws = [wb[n] for n in wb.sheetnames if n.startswith("Profile") and "steady" in n][0]
    assert ws.cell(row=2, column=2).value == "speed, interval mean [mph]"
    speeds = [ws.cell(row=3 + i, column=2).value for i in range(len(series[0].time_s))]
    np.testing.assert_allclose(speeds, np.asarray(series[0].speed_kmh) / MILE_KM, rtol=1e-12)
    assert speeds[-1] == pytest.approx(80 / MILE_KM, rel=1e-12)
    heads = [c.value for c in ws[2] if c.value]
    assert not any("km/h" in h for h in heads)
    # the study sheet's profile distances in miles equal the JSON
    st = wb["Study"]
    cells = {c.coordinate: c.value for row in st.iter_rows() for c in row}
    assert "Distance [mi]" in cells.values()
    want = {p["name"]: p["distance_mi"] for p in us.to_dict()["profiles"]}
    found = 0
    for row in st.iter_rows():
        name = row[0].value
        if name in want and want[name] is not None and isinstance(row[3].value, float):
            assert row[3].value == want[name]
            found += 1
    assert found == 2
    # every number of the "All results" sheet is a number of the JSON rows
    doc = us.to_dict()
    json_numbers = set()
    for r in doc["rows"]:
        for part in (r, r["change"], r["mean"], r["interval_low"], r["interval_high"],
                     r["change_low"], r["change_high"], r["change_pct"], r["change_mean"]):
            json_numbers |= {v for v in part.values() if isinstance(v, float)}
    ws = wb["All results"]
    numbers = [c.value for row in ws.iter_rows(min_row=2) for c in row
               if isinstance(c.value, float)]
    assert numbers and all(v in json_numbers for v in numbers)
