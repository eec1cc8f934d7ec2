"""Economics: payback, net present value, annual cost.

References: present value of an ordinary annuity, a(r, L) = (1 - (1 + r)^-L) / r
(Brealey, Myers & Allen, Principles of Corporate Finance, ch. 2, chapter from memory;
NIST Handbook 135,
uniform present value factor); simple payback = cost / annual saving (NIST
Handbook 135).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tractive.study.economics import (annuity_factor, net_present_value,
                                      simple_payback_years)
from tractive.study.engine import run_study


def test_annuity_factor_equals_the_discounted_sum():
    # definition: sum over t = 1..L of (1 + r)^-t
    for r in (0.0, 0.03, 0.08, 0.25):
        for years in (1, 5, 12):
            direct = sum((1 + r) ** -t for t in range(1, years + 1))
            assert float(annuity_factor(r, years)) == pytest.approx(direct, rel=1e-12)
    # closed form at 5 %, 10 years: (1 - 1.05^-10) / 0.05 = 7.72173...
    assert float(annuity_factor(0.05, 10)) == pytest.approx((1 - 1.05 ** -10) / 0.05,
                                                            rel=1e-14)
    assert float(annuity_factor(0.05, 10)) == pytest.approx(7.7217, abs=5e-5)


def test_npv_and_payback_closed_forms():
    assert float(net_present_value(1000.0, 300.0, 0.06, 5)) == pytest.approx(
        -1000 + 300 * (1 - 1.06 ** -5) / 0.06, rel=1e-12)
    assert float(simple_payback_years(1000.0, 250.0)) == 4.0
    assert np.isnan(simple_payback_years(1000.0, -5.0))
    assert np.isnan(simple_payback_years(1000.0, 0.0))
    out = simple_payback_years(np.array([100.0, 100.0]), np.array([50.0, 0.0]))
    assert out[0] == 2.0 and np.isnan(out[1])


EV = """\
name: van
mass_kg: 2200
road_load:
  cda_m2: 0.95
  crr: 0.0095
powertrain:
  kind: electric
  battery_usable_kwh: 55
  drive_efficiency: 0.86
  charger_efficiency: 0.9
  auxiliary_power_kw: 0.4
"""

STUDY = """\
name: money
currency: GBP
baseline:
  vehicle: van.yaml
modifications:
  - name: tyres
    cost: 480
    changes: {crr: -18%}
  - name: rack
    cost: 150
    changes: {cda_m2: +0.15}
combinations:
  - name: both
    modifications: [tyres, rack]
driving:
  profiles: [udds, hwfet]
  mixes:
    - name: duty
      shares_pct: {udds: 70, hwfet: 30}
economics:
  annual_distance_km: 30000
  electricity_price_per_kwh: 0.28
  electricity_co2_g_per_kwh: 200
  discount_rate_pct: 6
  service_life_years: 4
uncertainty:
  draws: 0
"""


@pytest.fixture(scope="module")
def money(tmp_path_factory):
    folder: Path = tmp_path_factory.mktemp("money")
    (folder / "van.yaml").write_text(EV)
    (folder / "study.yaml").write_text(STUDY)
    return run_study(folder / "study.yaml")


def test_annual_cost_is_energy_per_km_times_distance_times_price(money):
    for row in money.rows:
        m = row.metrics
        # the powertrain states wall energy (charger efficiency); the money follows it.
        # Model definition (arithmetic): energy = Wh/km x 30 000 km; cost = kWh x 0.28 per
        # kWh; CO2 = kWh x 200 g/kWh, all from the study file
        assert m["annual_grid_energy_kwh"] == pytest.approx(m["wall_wh_per_km"] * 30.0,
                                                            rel=1e-12)
        assert m["annual_energy_cost"] == pytest.approx(m["annual_grid_energy_kwh"] * 0.28,
                                                        rel=1e-12)
        assert m["annual_co2_kg"] == pytest.approx(m["annual_grid_energy_kwh"] * 0.2, rel=1e-12)


def test_payback_is_cost_over_annual_saving(money):
    n = 0
    for row in money.rows:
        if row.is_baseline:
            assert "payback_years" not in row.metrics
            continue
        m = row.metrics
        base = money.row("baseline", row.profile).metrics
        # definition: saving = baseline cost - variant cost
        assert m["annual_saving"] == pytest.approx(base["annual_energy_cost"]
                                                   - m["annual_energy_cost"], rel=1e-12)
        if m["annual_saving"] > 0:
            # simple payback = cost / annual saving (NIST Handbook 135)
            assert m["payback_years"] == pytest.approx(m["modification_cost"]
                                                       / m["annual_saving"], rel=1e-12)
            n += 1
        else:
            assert m["payback_years"] is None
        # NPV = -cost + saving * a(6 %, 4 years), annuity factor (NIST Handbook 135,
        # uniform present value factor)
        assert m["npv"] == pytest.approx(-m["modification_cost"] + m["annual_saving"]
                                         * (1 - 1.06 ** -4) / 0.06, rel=1e-12)
    # test-design check: the payback branch is exercised on at least three rows (tyres
    # save on every profile)
    assert n >= 3
    # model definition: a combination costs the sum of its modifications, 480 + 150 from
    # the study file (arithmetic)
    assert money.row("both", "duty").metrics["modification_cost"] == 480.0 + 150.0 == 630.0
    # consistency check: the currency label is echoed from the study file
    assert money.currency == "GBP"


@pytest.mark.parametrize("charging", [None, 0.85])
def test_charging_loss_is_stated_or_warned(tmp_path, charging):
    # bought energy = battery energy / charging efficiency; US DOE VTO Fact #750 (2012):
    # charging loses 16-19 %, so a study that counts none says so
    (tmp_path / "van.yaml").write_text(EV.replace("  charger_efficiency: 0.9\n", ""))
    study = STUDY.replace("  electricity_co2_g_per_kwh: 200\n",
                          "  electricity_co2_g_per_kwh: 200\n" +
                          (f"  charging_efficiency: {charging}\n" if charging else ""))
    (tmp_path / "study.yaml").write_text(study)
    res = run_study(tmp_path / "study.yaml")
    notes = [w for w in res.warnings if "charging loss" in w]
    for row in res.rows:
        m = row.metrics
        assert "wall_wh_per_km" not in m
        battery = m["battery_wh_per_km"] * 30.0          # kWh per 30 000 km
        assert m["annual_grid_energy_kwh"] == pytest.approx(battery / (charging or 1.0),
                                                            rel=1e-12)
        assert m["annual_co2_kg"] == pytest.approx(m["annual_grid_energy_kwh"] * 0.2,
                                                   rel=1e-12)
    if charging is None:
        assert len(notes) == 1 and "16-19 %" in notes[0] and "US DOE VTO Fact #750" in notes[0]
        assert "baseline" in notes[0] and "economics.charging_efficiency" in notes[0]
        assert res.economics["charging_efficiency"] is None
    else:
        assert notes == []


def test_no_charging_note_when_the_powertrain_states_its_charger(money):
    assert not any("charging loss" in w for w in money.warnings)
