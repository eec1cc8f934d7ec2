"""--units us on energy, performance and range-curve; range curves of several vehicles;
figures of compare and range-curve.

References: exact conversion factors 1 mi = 1.609344 km and 1 US gal = 3.785411784 L
(NIST SP 811, Appendix B); 60 mph = 96.56064 km/h by the same factor.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
VEH = ROOT / "examples" / "vehicles"
MI_KM = 1.609344
GAL_L = 3.785411784


def _json(*args):
    done = run_cli(*args, "--json")
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def test_energy_in_us_units_uses_the_exact_factors():
    metric = _json("energy", VEH / "diesel_light_truck.yaml", "-c", "udds")["results"][0]
    us = _json("energy", VEH / "diesel_light_truck.yaml", "-c", "udds", "--units", "us")
    r = us["results"][0]
    assert us["units"] == "us"
    assert r["distance_mi"] == pytest.approx(metric["distance_km"] / MI_KM, rel=1e-15)
    assert r["fuel_gal"] == pytest.approx(metric["fuel_l"] / GAL_L, rel=1e-15)
    assert r["positive_energy_wh_per_mi"] == pytest.approx(
        metric["positive_energy_wh_per_km"] * MI_KM, rel=1e-15)
    # the economy from L/100 km is the powertrain's own US mpg (one definition)
    assert r["fuel_economy_mpg"] == pytest.approx(metric["mpg_us"], rel=1e-12)
    assert "distance_km" not in r and "fuel_l" not in r
    text = run_cli("energy", VEH / "diesel_light_truck.yaml", "-c", "udds", "--units", "us")
    assert "Wh/mi" in text.stdout and "Wh/km" not in text.stdout


def test_performance_in_us_units_gives_0_60_and_mph():
    from tractive.performance import acceleration_time_s
    from tractive.vehicle import load_vehicle

    metric = _json("performance", VEH / "track_car.yaml")
    us = _json("performance", VEH / "track_car.yaml", "--units", "us")
    assert us["top_speed_mph"] == pytest.approx(metric["top_speed_kmh"] / MI_KM, rel=1e-15)
    t, _ = acceleration_time_s(load_vehicle(VEH / "track_car.yaml"), 0.0, 60 * MI_KM)
    assert us["accel_0_60_mph_s"] == pytest.approx(float(t), rel=1e-12)
    # 60 mph is below 100 km/h, so it is reached sooner (monotone speed trace)
    assert us["accel_0_60_mph_s"] < metric["accel_0_100_kmh_s"]
    assert "accel_0_100_kmh_s" not in us and "top_speed_kmh" not in us
    assert all("top_speed_mph" in g for g in us["gears"])


def test_range_curve_in_us_units_sweeps_miles_per_hour():
    us = _json("range-curve", VEH / "electric_van.yaml", "--units", "us")
    speeds = [r["speed_mph"] for r in us["rows"]]
    assert speeds[0] == pytest.approx(10.0, rel=1e-12)
    assert speeds[-1] == pytest.approx(100.0, rel=1e-12)
    assert "range_mi" in us["rows"][0] and "best_range_mi" in us
    mph = _json("range-curve", VEH / "electric_van.yaml", "--from-mph", "30", "--to-mph",
                "40", "--step-mph", "10")
    assert [r["speed_kmh"] for r in mph["rows"]] == pytest.approx([30 * MI_KM, 40 * MI_KM])
    both = run_cli("range-curve", VEH / "electric_van.yaml", "--from-kmh", "30",
                   "--to-mph", "40")
    assert both.returncode == 2 and "not both" in both.stderr


def test_several_vehicles_and_a_plot(tmp_path):
    out = tmp_path / "curves.png"
    data = _json("range-curve", VEH / "electric_van.yaml", VEH / "diesel_light_truck.yaml",
                 "--plot", out)
    assert [c["vehicle"] for c in data["curves"]] == ["Example electric van",
                                                     "Example diesel light truck"]
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    # a figure never replaces an input
    before = (VEH / "electric_van.yaml").read_bytes()
    bad = run_cli("range-curve", VEH / "electric_van.yaml", "--plot",
                  VEH / "electric_van.yaml")
    assert bad.returncode == 2 and (VEH / "electric_van.yaml").read_bytes() == before
    wrong = run_cli("range-curve", VEH / "electric_van.yaml", "--plot", tmp_path / "x.gif")
    assert wrong.returncode == 2


def test_compare_plot_in_svg(tmp_path):
    out = tmp_path / "changes.svg"
    done = run_cli("compare", ROOT / "examples" / "ev-van-conversion" / "study.yaml",
                   "--draws", "50", "--plot", out)
    assert done.returncode == 0, done.stderr
    text = out.read_text()
    assert text.lstrip().startswith("<?xml") and "range [km]" in text


def test_compare_plot_of_a_lap_study_draws_each_variants_lap(tmp_path):
    out = tmp_path / "wing.svg"
    done = run_cli("compare", ROOT / "examples" / "track-wing" / "study.yaml", "--draws", "20",
                   "--plot", out)
    assert done.returncode == 0, done.stderr
    text = out.read_text()
    assert "simulated lap of each variant" in text and "lap time [s]" in text
