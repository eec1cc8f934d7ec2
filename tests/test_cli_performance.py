"""The `performance` command: JSON shape, conditions, text table, one-line errors."""

import json
from pathlib import Path

import pytest
from conftest import run_cli

from tractive.performance import performance_summary
from tractive.vehicle import load_vehicle

ROOT = Path(__file__).resolve().parents[1]
VEH = ROOT / "examples" / "vehicles"
LIMITS = {"power", "traction", "rev_limit", "motor_speed_limit", "governor", "search_limit",
          "cannot_move"}


def run(*args):
    """The command run in-process (see conftest.run_cli)."""
    return run_cli(*args)


def test_performance_json_keys_and_values_match_the_library():
    r = run("performance", VEH / "track_car.yaml", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    for key in ("top_speed_kmh", "top_speed_limit", "accel_0_100_kmh_s", "accel_80_120_kmh_s",
                "gears", "gradeability_pct", "gradeability_speed_kmh"):
        assert key in data
    # interface checks (JSON shape); 6 gears is the gearbox set in the example file
    assert data["top_speed_limit"] in LIMITS
    assert len(data["gears"]) == 6
    assert all(g["top_speed_limit"] in LIMITS for g in data["gears"])
    # consistency check (CLI vs library, no outside reference): the command reports the
    # library's figures
    lib = performance_summary(load_vehicle(VEH / "track_car.yaml")).to_dict()
    assert data["top_speed_kmh"] == pytest.approx(lib["top_speed_kmh"], rel=1e-12)
    assert data["accel_0_100_kmh_s"] == pytest.approx(lib["accel_0_100_kmh_s"], rel=1e-12)
    # model-definition check: the fastest gear's top speed is the vehicle's (the example
    # file sets no governor on this car)
    assert data["top_speed_kmh"] == pytest.approx(
        max(g["top_speed_kmh"] for g in data["gears"]), rel=1e-12)


def test_grade_and_wind_options_change_the_figures():
    base = json.loads(run("performance", VEH / "petrol_hatchback_map.yaml", "--json").stdout)
    up = json.loads(run("performance", VEH / "petrol_hatchback_map.yaml", "--grade-pct", "6",
                        "--json").stdout)
    head = json.loads(run("performance", VEH / "petrol_hatchback_map.yaml", "--wind-kmh",
                          "40", "--json").stdout)
    assert up["grade_pct"] == 6 and head["wind_kmh"] == 40    # interface: options echoed
    # physics (direction checks): a grade adds m g sin θ and a head wind raises the drag
    # at the higher air speed, so the top speed falls and 0-100 km/h takes longer
    assert up["top_speed_kmh"] < base["top_speed_kmh"]
    assert head["top_speed_kmh"] < base["top_speed_kmh"]
    assert up["accel_0_100_kmh_s"] > base["accel_0_100_kmh_s"]


def test_performance_text_table():
    # interface check (text output), no outside reference
    r = run("performance", VEH / "diesel_light_truck.yaml", "--grade-speed-kmh", "20")
    assert r.returncode == 0, r.stderr
    assert "top speed" in r.stdout and "0-100 km/h" in r.stdout
    assert "at 20 km/h" in r.stdout and "rev_limit" in r.stdout


@pytest.mark.parametrize("args, words", [
    (("performance", VEH.parent / "vehicles" / "hatchback.yaml"), "performance"),
    (("performance", "no_such_file.yaml"), "file not found"),
    (("performance", VEH / "track_car.yaml", "--grade-pct", "500"), "--grade-pct"),
    (("performance", VEH / "track_car.yaml", "--grade-speed-kmh", "-5"), "--grade-speed-kmh"),
])
def test_performance_errors_are_one_line_with_status_2(args, words):
    # interface check (project rule: one stderr line, exit status 2, no traceback)
    r = run(*args)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and words in lines[0]
    assert "Traceback" not in r.stderr and r.stdout == ""


@pytest.mark.parametrize("args, option", [
    (("--grade-pct", "nan"), "--grade-pct"),
    (("--grade-pct", "150"), "--grade-pct"),     # steeper than 45° (100 %)
    (("--grade-pct", "-inf"), "--grade-pct"),
    (("--wind-kmh", "nan"), "--wind-kmh"),
    (("--wind-kmh", "inf"), "--wind-kmh"),
    (("--wind-kmh", "400"), "--wind-kmh"),
    (("--grade-speed-kmh", "nan"), "--grade-speed-kmh"),
    (("--grade-speed-kmh", "1e300"), "--grade-speed-kmh"),
])
def test_performance_refuses_bad_numbers(args, option):
    # interface check (project rule: exit status 2, one stderr line naming the option,
    # nothing printed as a result)
    r = run("performance", VEH / "track_car.yaml", *args)
    assert r.returncode == 2 and r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and option in lines[0] and "Traceback" not in r.stderr


def test_performance_help_states_the_accepted_ranges():
    text = " ".join(run("performance", "--help").stdout.split())
    assert "at least -100 and at most 100 %" in text
    assert "at least -300 and at most 300 km/h" in text
