"""The `range-curve` command and the powertrain columns of `energy`."""

import json
from pathlib import Path

import numpy as np
import pytest
from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
VEH = ROOT / "examples" / "vehicles"


def run(*args):
    """The command run in-process (see conftest.run_cli)."""
    return run_cli(*args)


def test_range_curve_electric_json():
    r = run("range-curve", VEH / "electric_van.yaml", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    rows = data["rows"]
    assert [x["speed_kmh"] for x in rows] == list(np.arange(20.0, 161.0, 10.0))
    for x in rows:
        # range = usable battery energy / consumption per km (definition; 68 kWh usable is
        # the value set in the example file)
        assert x["range_km"] * x["battery_wh_per_km"] == pytest.approx(68000, rel=1e-12)
        # wall = battery / charger efficiency (definition of an efficiency; 0.84 is the
        # value set in the example file)
        assert x["wall_wh_per_km"] == pytest.approx(x["battery_wh_per_km"] / 0.84, rel=1e-12)
    # model-definition check: above the 130 km/h governor set in the example file (the
    # motor speed limit, 150.8 km/h, lies above it) the speed is not feasible
    assert [x["feasible"] for x in rows] == [s <= 130 for s in range(20, 161, 10)]
    # consistency checks: the best speed lies in the swept range, and its range is at
    # least every sampled one (1e-9 km for JSON rounding, common practice)
    assert 20 <= data["best_speed_kmh"] <= 160
    assert data["best_range_km"] >= max(x["range_km"] for x in rows) - 1e-9


def test_range_curve_combustion_text_and_json():
    r = run("range-curve", VEH / "diesel_light_truck.yaml", "--from-kmh", "30", "--to-kmh",
            "120", "--step-kmh", "15", "--json")
    assert r.returncode == 0, r.stderr
    rows = json.loads(r.stdout)["rows"]
    assert [x["speed_kmh"] for x in rows] == [30, 45, 60, 75, 90, 105, 120]
    for x in rows:
        # tank range = 90 L / (L/100 km) × 100 (definition; 90 L is the tank set in the
        # example file)
        assert x["range_km"] * x["fuel_l_per_100km"] == pytest.approx(9000, rel=1e-12)
    # interface check (text output), no outside reference
    t = run("range-curve", VEH / "diesel_light_truck.yaml")
    assert t.returncode == 0 and "L/100km" in t.stdout and "greatest range" in t.stdout


@pytest.mark.parametrize("args, words", [
    (("range-curve", VEH / "track_car.yaml"), "powertrain"),
    (("range-curve", VEH / "electric_van.yaml", "--step-kmh", "0"), "--step-kmh"),
    (("range-curve", VEH / "electric_van.yaml", "--from-kmh", "90", "--to-kmh", "50"),
     "--to-kmh"),
])
def test_range_curve_errors_are_one_line_with_status_2(args, words):
    # interface check (project rule: one stderr line, exit status 2, no traceback)
    r = run(*args)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0] and "Traceback" not in r.stderr


def test_energy_adds_battery_results_and_a_weighted_mix():
    r = run("energy", VEH / "electric_van.yaml", "-c", "udds", "-c", "hwfet", "--mix-shares",
            "0.55,0.45", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    res = data["results"]
    for x in res:
        for key in ("battery_energy_kwh", "battery_wh_per_km", "range_km",
                    "regenerated_energy_kwh", "wall_wh_per_km"):
            assert isinstance(x[key], float)
    # 40 CFR 600 App. II combines city and highway economies 55/45 by the harmonic mean,
    # 1/(0.55/city + 0.45/highway) (its worked example is in mpg). Consumption per distance
    # is 1/economy, so the share-weighted arithmetic mean Σ share × Wh/km is that same
    # harmonic mean of the economies (km/Wh)
    per_km = 0.55 * res[0]["battery_wh_per_km"] + 0.45 * res[1]["battery_wh_per_km"]
    assert data["mix"]["battery_wh_per_km"] == pytest.approx(per_km, rel=1e-12)
    economy = [1 / x["battery_wh_per_km"] for x in res]
    assert 1 / data["mix"]["battery_wh_per_km"] == pytest.approx(
        1 / (0.55 / economy[0] + 0.45 / economy[1]), rel=1e-12)
    # range = usable / consumption per km (definition; 68 kWh set in the example file)
    assert data["mix"]["range_km"] == pytest.approx(68000 / per_km, rel=1e-12)
    # interface check (text output), no outside reference
    text = run("energy", VEH / "electric_van.yaml", "-c", "udds")
    assert "battery kWh" in text.stdout and "range km" in text.stdout


def test_energy_adds_fuel_results():
    r = run("energy", VEH / "petrol_hatchback_map.yaml", "-c", "wltc3b", "--json")
    assert r.returncode == 0, r.stderr
    x = json.loads(r.stdout)["results"][0]
    for key in ("fuel_l", "fuel_l_per_100km", "co2_g_per_km", "range_km", "mpg_us", "mpg_uk"):
        assert isinstance(x[key], float)          # interface check (JSON keys)
    # tank range = 45 L / (L/100 km) × 100 (definition; 45 L is the tank set in the
    # example file)
    assert x["fuel_l_per_100km"] * x["range_km"] == pytest.approx(45 * 100, rel=1e-12)
    # interface check (project rule: one stderr line, exit status 2)
    bad = run("energy", VEH / "petrol_hatchback_map.yaml", "-c", "udds", "--mix-shares", "0.5")
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1


# -- option values -------------------------------------------------------------------

def _one_line(r, option):
    # project rule: exit status 2, one stderr line naming the option, nothing on stdout
    assert r.returncode == 2, (r.stdout, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and "Traceback" not in r.stderr, r.stderr
    assert r.stdout == ""


@pytest.mark.parametrize("args, option", [
    (("--from-kmh", "1e300", "--to-kmh", "1e300"), "--from-kmh"),   # was a ValueError
    (("--from-kmh", "nan"), "--from-kmh"),
    (("--from-kmh", "-5"), "--from-kmh"),
    (("--to-kmh", "inf"), "--to-kmh"),
    (("--to-kmh", "600"), "--to-kmh"),        # above 500 km/h, faster than any road vehicle
    (("--step-kmh", "nan"), "--step-kmh"),
    (("--from-kmh", "1", "--to-kmh", "500", "--step-kmh", "0.01"), "--step-kmh"),
    (("--ambient-c", "nan"), "--ambient-c"),  # printed every row as "-" with status 0
    (("--ambient-c", "1e9"), "--ambient-c"),
    (("--ambient-c", "-80"), "--ambient-c"),  # outside the -60..60 °C a vehicle file takes
])
def test_range_curve_refuses_bad_numbers(args, option):
    _one_line(run("range-curve", VEH / "electric_van.yaml", *args), option)


def test_ambient_changes_a_temperature_table_by_the_auxiliary_power_per_km():
    base = json.loads(run("range-curve", VEH / "electric_van.yaml", "--json").stdout)
    cold = json.loads(run("range-curve", VEH / "electric_van.yaml", "--ambient-c", "5",
                          "--json").stdout)
    assert cold["ambient_temperature_c"] == 5 and cold["notes"] == []
    assert base["ambient_temperature_c"] == 20          # the vehicle file's value
    # constant speed: battery energy per distance = power / speed, so the auxiliary power
    # difference P(5 °C) - P(20 °C) [W] adds (ΔP / v) J/m = ΔP / v / 3.6 Wh/km (definition;
    # the table is linear between the example file's points, interpolated as numpy.interp)
    d_w = 1000 * (np.interp(5, [-10, 0, 10, 20, 30, 40], [4.0, 2.8, 1.5, 0.7, 1.2, 2.2])
                  - 0.7)
    for b, c in zip(base["rows"], cold["rows"]):
        v_ms = b["speed_kmh"] / 3.6
        assert c["battery_wh_per_km"] - b["battery_wh_per_km"] == pytest.approx(
            d_w / v_ms / 3.6, rel=1e-9)


def test_ambient_on_a_constant_auxiliary_load_is_said_to_be_unused(tmp_path):
    text = (VEH / "electric_van.yaml").read_text()
    start = text.index("  auxiliary_power_by_temperature:")
    end = text.index("  charger_efficiency:")
    van = tmp_path / "van.yaml"
    van.write_text(text[:start] + "  auxiliary_power_kw: 1.0\n" + text[end:])
    plain = json.loads(run("range-curve", van, "--json").stdout)
    asked = json.loads(run("range-curve", van, "--ambient-c", "5", "--json").stdout)
    assert asked["rows"] == plain["rows"]            # the value changes nothing ...
    assert asked["ambient_temperature_c"] is None
    assert len(asked["notes"]) == 1 and "--ambient-c 5" in asked["notes"][0]  # ... and says so
    assert "not used" in asked["notes"][0]
    t = run("range-curve", van, "--ambient-c", "5")
    assert t.returncode == 0 and "note: --ambient-c 5 °C is not used" in t.stdout
    diesel = json.loads(run("range-curve", VEH / "diesel_light_truck.yaml", "--ambient-c",
                            "5", "--json").stdout)
    assert diesel["notes"] and "combustion" in diesel["notes"][0]
