"""Fleet totals, uncertain prices and costs, and the payback verdict of a study.

References: fleet totals are N × one vehicle's amount (identity); a normal price
draw's central 95 % interval is nominal ± z(0.975)·σ with z from scipy.stats.norm
(JCGM 101:2008 Monte Carlo propagation of a linear model); simple payback
cost / saving and its probability P(cost / s ≤ L) = Φ((L·s − cost) / σ_cost) for a
normal cost (scipy.stats.norm).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from tractive.study.engine import run_study

ROOT = Path(__file__).resolve().parents[1]
TRUCK = ROOT / "examples" / "vehicles" / "diesel_light_truck.yaml"

STUDY = """\
name: fleet money
currency: EUR
baseline:
  vehicle: {truck}
modifications:
  - name: low-rolling tyres
    cost: {cost}
    {cost_std}
    changes:
      crr: -8%
driving:
  profiles:
    - name: town
      profile: udds
economics:
  annual_distance_km: 30000
  fuel_price_per_l: 1.70
  {price_std}
  discount_rate_pct: 4
  service_life_years: {life}
  vehicles: 40
uncertainty:
  draws: {draws}
  seed: 7
"""


def _study(tmp_path, *, cost=600.0, cost_std="", price_std="", life=3, draws=4000):
    path = tmp_path / "study.yaml"
    path.write_text(STUDY.format(truck=TRUCK, cost=cost, cost_std=cost_std,
                                 price_std=price_std, life=life, draws=draws))
    return run_study(path, series=False)


def test_fleet_totals_are_the_fleet_size_times_one_vehicle(tmp_path):
    res = _study(tmp_path, draws=0)
    for r in res.rows:
        m = r.metrics
        # identity: fleet amount = N × one vehicle's annual amount
        assert m["fleet_annual_fuel_l"] == pytest.approx(40 * m["annual_fuel_l"], rel=1e-14)
        assert m["fleet_annual_co2_t"] == pytest.approx(40 * m["annual_co2_kg"] / 1000,
                                                        rel=1e-14)
        assert m["fleet_annual_energy_cost"] == pytest.approx(40 * m["annual_energy_cost"],
                                                              rel=1e-14)
    mod = res.row("low-rolling tyres", "town")
    assert mod.metrics["fleet_annual_saving"] == pytest.approx(
        40 * mod.metrics["annual_saving"], rel=1e-14)
    assert mod.metrics["fleet_npv"] == pytest.approx(40 * mod.metrics["npv"], rel=1e-14)
    # the fleet's change is the fleet's cost difference (identity)
    assert mod.change["fleet_annual_energy_cost"] == pytest.approx(
        -mod.metrics["fleet_annual_saving"], rel=1e-12)


def test_price_uncertainty_widens_the_cost_interval_as_a_normal_quantile(tmp_path):
    res = _study(tmp_path, price_std="fuel_price_std_per_l: 0.15")
    base = res.row("baseline", "town")
    fuel = base.metrics["annual_fuel_l"]
    z = stats.norm.ppf(0.975)          # 1.95996... (scipy)
    # cost = fuel × price with fuel fixed: its interval is fuel × (1.70 ± z·0.15);
    # Monte Carlo tolerance for 4000 draws (quantile standard error ~2 %), common practice
    assert base.interval_low["annual_energy_cost"] == pytest.approx(
        fuel * (1.70 - z * 0.15), rel=0.01)
    assert base.interval_high["annual_energy_cost"] == pytest.approx(
        fuel * (1.70 + z * 0.15), rel=0.01)
    assert any("fuel price" in p for p in res.uncertainty["uncertain_parameters"])
    # the price is common to every variant: the saving scales with it, so its interval
    # is saving × (price draws / nominal price)
    mod = res.row("low-rolling tyres", "town")
    s0 = mod.metrics["annual_saving"]
    assert mod.interval_high["annual_saving"] == pytest.approx(
        s0 * (1.70 + z * 0.15) / 1.70, rel=0.01)


def test_uncertain_cost_gives_a_payback_interval_and_a_probability(tmp_path):
    res = _study(tmp_path, cost=600.0, cost_std="cost_std: 120", life=4)
    mod = res.row("low-rolling tyres", "town")
    s = mod.metrics["annual_saving"]
    z = stats.norm.ppf(0.975)
    assert mod.interval_low["payback_years"] == pytest.approx((600 - z * 120) / s, rel=0.02)
    assert mod.interval_high["payback_years"] == pytest.approx((600 + z * 120) / s, rel=0.02)
    p = stats.norm.cdf((4 * s - 600) / 120) * 100
    assert mod.verdict["pays_back_within_life_pct"] == pytest.approx(p, abs=2.0)


def test_payback_beyond_the_service_life_is_flagged(tmp_path):
    res = _study(tmp_path, cost=5000.0, life=2, draws=200)
    mod = res.row("low-rolling tyres", "town")
    assert mod.metrics["payback_years"] > 2
    assert mod.verdict["payback_exceeds_life"] is True
    assert mod.verdict["npv_negative"] is True
    assert mod.to_dict()["verdict"]["payback_exceeds_life"] is True
    cheap = _study(tmp_path, cost=50.0, life=6, draws=200).row("low-rolling tyres", "town")
    assert cheap.verdict == {"payback_exceeds_life": False, "npv_negative": False,
                             "pays_back_within_life_pct": 100.0}
    assert "verdict" not in res.row("baseline", "town").to_dict()


def test_price_std_without_a_price_is_refused(tmp_path):
    from conftest import run_cli

    text = STUDY.format(truck=TRUCK, cost=100, cost_std="", life=3, draws=0,
                        price_std="electricity_price_std_per_kwh: 0.02")
    path = tmp_path / "s.yaml"
    path.write_text(text)
    done = run_cli("compare", path)
    assert done.returncode == 2
    assert "electricity_price_std_per_kwh" in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1
