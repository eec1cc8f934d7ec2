"""Study engine: changes, duty mixes, modification rules, attribution.

Outside references are named beside each check.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest

from tractive.study import engine
from tractive.study.attribution import one_at_a_time, shapley_values, subsets
from tractive.study.engine import run_study
from tractive.units import KMH_MS, MILE_M, STANDARD_GRAVITY_MS2, US_GALLON_L

EV = """\
name: Test EV
mass_kg: 1800
road_load:
  cda_m2: 0.60
  crr: 0.009
  crr_std: 0.0006
  cda_std_m2: 0.02
powertrain:
  kind: electric
  battery_usable_kwh: 60
  drive_efficiency: 0.88
  charger_efficiency: 0.9
  auxiliary_power_kw: 0.3
"""

EV_STUDY = """\
name: ev study
baseline:
  vehicle: ev.yaml
modifications:
  - name: rack
    cost: 300
    changes: {cda_m2: +0.1, mass_kg: +12}
  - name: tyres
    cost: 400
    changes:
      crr: -20%
      crr_std: 0.0003
  - name: bigger pack
    changes: {powertrain.battery_usable_kwh: +15, mass_kg: +90}
  - name: wing
    changes: {cla_m2: +0.4, cda_m2: +0.03}
combinations:
  - name: everything
    modifications: all
driving:
  profiles: [udds, hwfet, "steady:100kmh:600s"]
  mixes:
    - name: mixed
      shares_pct: {udds: 55, hwfet: 45}
economics:
  annual_distance_km: 20000
  electricity_price_per_kwh: 0.3
  discount_rate_pct: 4
  service_life_years: 5
uncertainty:
  draws: 300
  seed: 7
"""

PHYS = """\
name: plain car
mass_kg: {mass}
road_load:
  cda_m2: 0.62
  crr: 0.010
"""

COEF = """\
name: measured car
mass_kg: 1500
road_load:
  f0_n: 150.0
  f1_n_per_kmh: 0.5
  f2_n_per_kmh2: 0.03
"""


def _write(folder: Path, files: dict) -> Path:
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder / "study.yaml"


def _steady_study(vehicle_text: str, changes: str, profile="steady:90kmh:600s", extra=""):
    return {"car.yaml": vehicle_text, "study.yaml": f"""\
name: steady
baseline:
  vehicle: car.yaml
modifications:
  - name: mod
    changes: {changes}
driving:
  profiles: ["{profile}"]
uncertainty:
  draws: 0
{extra}"""}


@pytest.fixture(scope="module")
def ev_result(tmp_path_factory):
    folder = tmp_path_factory.mktemp("ev")
    path = _write(folder, {"ev.yaml": EV, "study.yaml": EV_STUDY})
    return run_study(path)


def test_change_is_variant_minus_baseline_in_rows_and_json(ev_result):
    # identity: change = variant - baseline (definition of the change column)
    res = ev_result
    data = json.loads(json.dumps(res.to_dict()))
    checked = 0
    for row, jrow in zip(res.rows, data["rows"]):
        base = res.row("baseline", row.profile)
        assert jrow["variant"] == row.variant and jrow["profile"] == row.profile
        if row.is_baseline:
            assert row.change == {}
            continue
        for key, change in row.change.items():
            assert change == row.metrics[key] - base.metrics[key]
            assert jrow["change"][key] == jrow[key] - data["rows"][res.rows.index(base)][key]
            if base.metrics[key] != 0:
                assert row.change_pct[key] == pytest.approx(100 * change / base.metrics[key],
                                                            rel=1e-12)
            checked += 1
    assert checked > 100
    assert data["study"] == "ev study"
    assert {r["variant"] for r in data["rows"]} == {"baseline", "rack", "tyres", "bigger pack",
                                                    "wing", "everything"}


def test_change_is_variant_minus_baseline_in_csv(ev_result, tmp_path):
    from tractive.report.csv import write_summary_csv

    out = write_summary_csv(ev_result, tmp_path / "summary.csv")
    with open(out, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    base = {r["profile"]: r for r in rows if r["variant"] == "baseline"}
    keys = [k for k in ev_result.metric_keys()]
    n = 0
    for r in rows:
        if r["variant"] == "baseline":
            continue
        for k in keys:
            if r[f"change_{k}"] == "":
                continue
            # identity, with numbers read back from the file (repr round-trips floats)
            assert float(r[f"change_{k}"]) == float(r[k]) - float(base[r["profile"]][k])
            n += 1
    assert n > 100


def test_profile_independent_metrics_and_mix_rows(ev_result):
    mixed = ev_result.row("baseline", "mixed")
    assert "positive_energy_kwh" not in mixed.metrics      # totals are not mixed
    assert mixed.profile_kind == "mix"
    udds = ev_result.row("baseline", "udds").metrics
    hwfet = ev_result.row("baseline", "hwfet").metrics
    # distance-weighted mean of per-km values (40 CFR 600 App. II weighting)
    assert mixed.metrics["battery_wh_per_km"] == pytest.approx(
        0.55 * udds["battery_wh_per_km"] + 0.45 * hwfet["battery_wh_per_km"], rel=1e-12)
    # range combines harmonically: stored energy / mixed energy per km
    assert mixed.metrics["range_km"] == pytest.approx(
        1 / (0.55 / udds["range_km"] + 0.45 / hwfet["range_km"]), rel=1e-12)


def test_epa_55_45_harmonic_worked_example():
    # 40 CFR 600 Appendix II: city 27.7 mpg, highway 36.9 mpg -> combined 31.2 mpg
    def l_per_100km(mpg):
        return np.array([100.0 * US_GALLON_L / (mpg * MILE_M / 1000.0)])

    per = {"city": {"fuel_l_per_100km": l_per_100km(27.7)},
           "hwy": {"fuel_l_per_100km": l_per_100km(36.9)}}
    mixed = engine._mix(per, {"city": 55.0, "hwy": 45.0})
    us = engine._to_units(mixed, "us")
    assert round(float(us["fuel_economy_mpg"][0]), 1) == 31.2
    assert float(us["fuel_economy_mpg"][0]) == pytest.approx(1 / (0.55 / 27.7 + 0.45 / 36.9),
                                                             rel=1e-12)


def test_distance_weighted_harmonic_mean_worked_example():
    # EPA420-R-09-014 Appendix A: 704 mi at 16 mpg + 216 mi at 24 mpg -> 17.4 mpg
    def l_per_100km(mpg):
        return np.array([100.0 * US_GALLON_L / (mpg * MILE_M / 1000.0)])

    per = {"a": {"fuel_l_per_100km": l_per_100km(16.0)},
           "b": {"fuel_l_per_100km": l_per_100km(24.0)}}
    mixed = engine._mix(per, {"a": 100 * 704 / 920, "b": 100 * 216 / 920})
    assert round(float(engine._to_units(mixed, "us")["fuel_economy_mpg"][0]), 1) == 17.4


def test_low_rolling_resistance_tyres_at_constant_speed_save_the_analytic_amount(tmp_path):
    # road-load equation (Gillespie ch. 4; Wong ch. 1): rolling force = Crr m g, so at
    # constant speed on a level road the traction energy changes by dCrr * m * g * distance
    mass = 1500.0
    path = _write(tmp_path, _steady_study(PHYS.format(mass=mass), "{crr: 0.0085}"))
    res = run_study(path)
    row = res.row("mod", "steady:90kmh:600s")
    distance_m = 90 * KMH_MS * 600
    expected_kwh = (0.0085 - 0.010) * mass * STANDARD_GRAVITY_MS2 * distance_m / 3.6e6
    assert row.change["positive_energy_kwh"] == pytest.approx(expected_kwh, rel=1e-12)
    assert row.change["rolling_energy_kwh"] == pytest.approx(expected_kwh, rel=1e-12)
    assert row.change["aero_energy_kwh"] == pytest.approx(0.0, abs=1e-15)


def test_percent_and_signed_changes_on_physical_road_load(tmp_path):
    # -15 % of Crr 0.010 is 0.0015; the same saving as the absolute value 0.0085
    mass = 1500.0
    distance_m = 90 * KMH_MS * 600
    expected_kwh = -0.0015 * mass * STANDARD_GRAVITY_MS2 * distance_m / 3.6e6
    for text in ("{crr: -15%}", "{crr: -0.0015}", "{crr: {percent: -15}}"):
        folder = tmp_path / str(abs(hash(text)))
        folder.mkdir()
        res = run_study(_write(folder, _steady_study(PHYS.format(mass=mass), text)))
        assert res.row("mod", "steady:90kmh:600s").change["positive_energy_kwh"] == \
            pytest.approx(expected_kwh, rel=1e-12), text


def test_coefficient_rules_for_physical_changes(tmp_path):
    # GTR 15 road load F = f0 + f1 v + f2 v^2 (v in km/h); rules documented in modify.py
    # (common practice): CdA adds 1/2 rho dCdA to f2; Crr % scales f0 and f1; mass scales
    # f0 and f1 in proportion; a signed Crr adds dCrr m g to f0.
    v_kmh = 90.0
    d_m = v_kmh * KMH_MS * 600
    rho = 1.1
    cases = {
        "{cda_m2: +0.12}": 0.5 * rho * 0.12 * (v_kmh * KMH_MS) ** 2,
        "{crr: -15%}": -0.15 * (150.0 + 0.5 * v_kmh),
        "{crr: -0.001}": -0.001 * 1500 * STANDARD_GRAVITY_MS2,
        "{mass_kg: -180}": (150.0 + 0.5 * v_kmh) * (-180 / 1500),
        "{f2_n_per_kmh2: -0.002}": -0.002 * v_kmh ** 2,
    }
    for text, d_force_n in cases.items():
        folder = tmp_path / f"c{abs(hash(text))}"
        folder.mkdir()
        study = _steady_study(COEF, text, extra=f"ambient:\n  air_density_kg_m3: {rho}\n")
        res = run_study(_write(folder, study))
        change_kwh = res.row("mod", "steady:90kmh:600s").change["positive_energy_kwh"]
        assert change_kwh == pytest.approx(d_force_n * d_m / 3.6e6, rel=1e-10), text


def test_coefficient_road_load_refuses_what_it_cannot_know(tmp_path):
    from tractive.errors import InputError

    for text in ("{crr: 0.008}", "{cla_m2: +0.5}", "{cda_m2: 0.7}"):
        folder = tmp_path / f"e{abs(hash(text))}"
        folder.mkdir()
        with pytest.raises(InputError) as err:
            run_study(_write(folder, _steady_study(COEF, text)))
        assert "study.yaml" in str(err.value) and "changes" in str(err.value)


def test_downforce_adds_rolling_resistance(tmp_path):
    # downforce load 1/2 rho ClA v^2 carried by the tyres adds Crr * that load (module doc of
    # tractive.roadload; Katz, Race Car Aerodynamics, ch. 1)
    v = 90 * KMH_MS
    rho = 1.2
    res = run_study(_write(tmp_path, _steady_study(
        PHYS.format(mass=1500), "{cla_m2: +1.5}",
        extra=f"ambient:\n  air_density_kg_m3: {rho}\n")))
    change = res.row("mod", "steady:90kmh:600s").change
    expected = 0.010 * 0.5 * rho * 1.5 * v * v * v * 600 / 3.6e6
    assert change["rolling_energy_kwh"] == pytest.approx(expected, rel=1e-12)
    assert change["aero_energy_kwh"] == pytest.approx(0.0, abs=1e-15)


def test_attribution_parts_add_up_to_the_total(ev_result):
    # Shapley (1953) efficiency: the parts sum to f(all) - f(none)
    assert ev_result.attribution
    for a in ev_result.attribution:
        row = ev_result.row(a.variant, a.profile)
        assert a.total == row.change[a.metric]
        assert sum(a.parts.values()) == pytest.approx(a.total, rel=1e-9, abs=1e-12)
        assert a.interaction == pytest.approx(a.total - sum(a.one_at_a_time.values()),
                                              abs=1e-12)
    everything = [a for a in ev_result.attribution if a.variant == "everything"]
    groups = set(everything[0].parts)
    assert groups == {"aero", "rolling", "mass", "downforce", "powertrain"}
    # the battery alone does not change the energy per km, only the range
    pack = [a for a in ev_result.attribution if a.variant == "bigger pack"
            and a.metric == "battery_wh_per_km"]
    assert all(a.parts["powertrain"] == pytest.approx(0.0, abs=1e-12) for a in pack)


def test_attribution_single_group_equals_total(ev_result):
    for a in ev_result.attribution:
        if a.variant == "tyres":
            assert list(a.parts) == ["rolling"]
            assert a.parts["rolling"] == pytest.approx(a.total, rel=1e-12)
            assert a.one_at_a_time["rolling"] == pytest.approx(a.total, rel=1e-12)


def test_shapley_values_textbook_game():
    # two-player game v(0)=0, v(1)=1, v(2)=2, v(12)=6: phi_1 = (1 + 4)/2 = 2.5,
    # phi_2 = (2 + 5)/2 = 3.5 (Shapley 1953 formula, average of the two orders)
    v = {frozenset(): 0.0, frozenset({"a"}): 1.0, frozenset({"b"}): 2.0,
         frozenset({"a", "b"}): 6.0}
    phi = shapley_values(["a", "b"], v)
    assert phi["a"] == pytest.approx(2.5) and phi["b"] == pytest.approx(3.5)
    assert one_at_a_time(["a", "b"], v) == {"a": 1.0, "b": 2.0}


def test_shapley_values_of_an_additive_game_are_the_single_contributions():
    # additivity/dummy axioms: for f(S) = sum of w_i over S, phi_i = w_i exactly
    w = {"aero": 3.0, "rolling": -1.5, "mass": 0.25, "downforce": 2.0, "powertrain": -7.0}
    f = {s: sum(w[g] for g in s) for s in subsets(w)}
    phi = shapley_values(list(w), f)
    for g in w:
        assert phi[g] == pytest.approx(w[g], abs=1e-12)
    # and with a product interaction the parts still add up (efficiency)
    f2 = {s: f[s] + (4.0 if {"mass", "rolling"} <= s else 0.0) for s in subsets(w)}
    phi2 = shapley_values(list(w), f2)
    assert sum(phi2.values()) == pytest.approx(f2[frozenset(w)] - f2[frozenset()], abs=1e-12)
    assert phi2["mass"] - w["mass"] == pytest.approx(2.0) and \
        phi2["rolling"] - w["rolling"] == pytest.approx(2.0)


def test_time_series_match_the_totals(ev_result):
    s = [x for x in ev_result.series if x.variant == "rack" and x.profile == "udds"][0]
    row = ev_result.row("rack", "udds")
    assert s.cumulative_energy_kwh[-1] == pytest.approx(row.metrics["positive_energy_kwh"],
                                                        rel=1e-12)
    assert np.allclose(s.power_kw, s.force_n * s.speed_kmh / 3.6 / 1000)


def test_us_units_rename_and_convert(tmp_path):
    files = _steady_study(PHYS.format(mass=1500), "{crr: -10%}")
    files["study.yaml"] = files["study.yaml"].replace("name: steady", "name: steady\nunits: us")
    res = run_study(_write(tmp_path, files))
    base = res.row("baseline", "steady:90kmh:600s").metrics
    assert "positive_energy_wh_per_mi" in base and "positive_energy_wh_per_km" not in base
    assert base["distance_mi"] == pytest.approx(90 * KMH_MS * 600 / MILE_M, rel=1e-12)


def test_whole_vehicle_modification(tmp_path):
    files = _steady_study(PHYS.format(mass=1500), "{}")
    files["other.yaml"] = PHYS.format(mass=1400).replace("crr: 0.010", "crr: 0.009")
    files["study.yaml"] = files["study.yaml"].replace("    changes: {}", "    vehicle: other.yaml")
    res = run_study(_write(tmp_path, files))
    change = res.row("mod", "steady:90kmh:600s").change["positive_energy_kwh"]
    d = 90 * KMH_MS * 600
    expected = (0.009 * 1400 - 0.010 * 1500) * STANDARD_GRAVITY_MS2 * d / 3.6e6
    assert change == pytest.approx(expected, rel=1e-12)
    parts = [a for a in res.attribution if a.metric == "positive_energy_wh_per_km"][0].parts
    assert set(parts) == {"rolling", "mass"}
