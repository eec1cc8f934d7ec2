"""Study engine: changes, duty mixes, modification rules, attribution.

Outside references are named beside each check.
"""

from __future__ import annotations

import csv
import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from tractive.study import engine
from tractive.study.attribution import one_at_a_time, shapley_values, subsets
from tractive.study.engine import run_study
from tractive.units import KMH_MS, MILE_M, STANDARD_GRAVITY_MS2, US_GALLON_L
from study_vehicles import DIESEL, EV


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
    # road-load equation (Gillespie ch. 4; Wong ch. 1; chapters from memory): rolling
    # force = Crr m g, so at constant speed on a level road the traction energy changes
    # by dCrr * m * g * distance
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
    # f0 and f1 in proportion; a signed Crr adds dCrr m g to f0; a change of the measured
    # f2 is at its reference air (GTR 15: 293 K, 100 kPa, from memory; ideal gas
    # rho = p / (R T), R = 287.05 J/(kg K) as in ICAO Doc 7488) and the study air scales it
    v_kmh = 90.0
    d_m = v_kmh * KMH_MS * 600
    rho = 1.1
    rho_ref = 100000.0 / (287.05 * 293.0)
    cases = {
        "{cda_m2: +0.12}": 0.5 * rho * 0.12 * (v_kmh * KMH_MS) ** 2,
        "{crr: -15%}": -0.15 * (150.0 + 0.5 * v_kmh),
        "{crr: -0.001}": -0.001 * 1500 * STANDARD_GRAVITY_MS2,
        "{mass_kg: -180}": (150.0 + 0.5 * v_kmh) * (-180 / 1500),
        "{f2_n_per_kmh2: -0.002}": -0.002 * (rho / rho_ref) * v_kmh ** 2,
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
    # tractive.roadload; Katz, Race Car Aerodynamics, ch. 1, chapter from memory)
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
    # symmetry axiom (Shapley 1953): the pair interaction 4.0 is split equally, 2.0 each
    assert phi2["mass"] - w["mass"] == pytest.approx(2.0) and \
        phi2["rolling"] - w["rolling"] == pytest.approx(2.0)


def test_time_series_match_the_totals(ev_result):
    s = [x for x in ev_result.series if x.variant == "rack" and x.profile == "udds"][0]
    row = ev_result.row("rack", "udds")
    # consistency check (no outside reference): the series ends at the row's total
    assert s.cumulative_energy_kwh[-1] == pytest.approx(row.metrics["positive_energy_kwh"],
                                                        rel=1e-12)
    # power = force x speed (definition of mechanical power), km/h -> m/s by 1/3.6 (exact)
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


# ---------------------------------------------------------------------------
# range against constant speed, in the result
# ---------------------------------------------------------------------------

def test_range_curves_in_the_result_equal_the_powertrain_sweep(ev_result):
    from dataclasses import replace

    from tractive.powertrain import range_curve
    from tractive.vehicle import load_vehicle

    # Mostly consistency checks (no outside reference): the study's range curves must
    # equal the public range_curve() sweep of the same vehicles; range_curve itself is
    # tested against outside references in tests/test_powertrain_electric.py. The range =
    # energy / consumption and charger-efficiency lines below are definitions.
    folder = Path(ev_result.source).parent
    curves = {c.variant: c for c in ev_result.range_curves}
    assert list(curves) == [v.name for v in ev_result.variants]
    veh = load_vehicle(folder / "ev.yaml")
    speeds = np.arange(10.0, 161.0, 5.0)
    # the baseline curve is the unmodified vehicle file swept through the public API
    # (consistency check: study vs range_curve)
    ref = range_curve(veh, speeds)
    base = curves["baseline"]
    assert base.speed_key == "speed_kmh" and base.consumption_key == "battery_wh_per_km"
    np.testing.assert_array_equal(base.columns["speed_kmh"], speeds)
    np.testing.assert_array_equal(base.columns["range_km"], ref.range_km)
    np.testing.assert_array_equal(base.columns["battery_wh_per_km"],
                                  ref.columns["battery_wh_per_km"])
    assert base.best["best_speed_kmh"] == ref.best_speed_kmh
    # range = usable battery energy / consumption per km (definition of range): 60 kWh,
    # and 60 + 15 kWh where the pack grows
    for name, usable in (("baseline", 60.0), ("bigger pack", 75.0), ("everything", 75.0),
                         ("rack", 60.0)):
        c = curves[name]
        np.testing.assert_allclose(c.columns["range_km"] * c.columns["battery_wh_per_km"]
                                   / 1000.0, usable, rtol=1e-12)
    # the charger efficiency 0.9 relates wall and battery energy (definition of efficiency)
    np.testing.assert_allclose(base.columns["wall_wh_per_km"] * 0.9,
                               base.columns["battery_wh_per_km"], rtol=1e-12)
    # a modified variant is its nominal vehicle: rack = CdA + 0.1, mass + 12 kg
    # (consistency check: study vs range_curve of the hand-modified vehicle)
    rack = replace(veh, mass_kg=1812.0,
                   road_load=replace(veh.road_load, cda_m2=veh.road_load.cda_m2 + 0.1))
    np.testing.assert_allclose(curves["rack"].columns["range_km"],
                               range_curve(rack, speeds).range_km, rtol=1e-12)
    # in the JSON, under range_curves, with their unit keys (consistency check: JSON echo)
    data = json.loads(json.dumps(ev_result.to_dict()))
    j = data["range_curves"][0]
    assert j["variant"] == "baseline" and j["powertrain"] == "electric"
    assert j["range_km"] == ref.range_km.tolist() and j["speed_kmh"] == speeds.tolist()
    assert j["best_range_km"] == ref.best_range_km


def test_range_curves_in_us_units(tmp_path):
    # exact factors: 1 mile = 1609.344 m, 1 mph = 0.44704 m/s (NIST SP 811, Appendix B)
    from tractive.powertrain import range_curve
    from tractive.vehicle import load_vehicle

    text = EV_STUDY.replace("name: ev study", "name: us\nunits: us")
    res = run_study(_write(tmp_path, {"ev.yaml": EV, "study.yaml": text}), draws=0,
                    series=False)
    c = res.range_curves[0]
    assert list(c.columns)[:3] == ["speed_mph", "range_mi", "battery_wh_per_mi"]
    mph = c.columns["speed_mph"]
    np.testing.assert_allclose(mph, np.arange(5.0, 100.1, 2.5), rtol=1e-12)
    ref = range_curve(load_vehicle(tmp_path / "ev.yaml"), mph * 0.44704 * 3.6)
    np.testing.assert_allclose(c.columns["range_mi"], ref.range_km * 1000 / 1609.344,
                               rtol=1e-12)
    # mi × Wh/mi = Wh: the usable energy in any unit of distance
    np.testing.assert_allclose(c.columns["range_mi"] * c.columns["battery_wh_per_mi"] / 1000,
                               60.0, rtol=1e-12)
    assert c.best["best_speed_mph"] == pytest.approx(ref.best_speed_kmh / 1.609344, rel=1e-12)
    assert set(c.to_dict()) >= {"speed_mph", "range_mi", "best_range_mi", "feasible"}


def test_range_curves_of_a_combustion_vehicle(tmp_path):
    # tank range = tank / fuel per km (definition): range × L/100 km / 100 = 50 L
    from tractive.powertrain import range_curve
    from tractive.vehicle import load_vehicle

    res = run_study(_write(tmp_path, _steady_study(DIESEL, "{mass_kg: +100}")))
    c = res.range_curves[0]
    assert c.powertrain == "combustion" and c.consumption_key == "fuel_l_per_100km"
    np.testing.assert_allclose(c.columns["range_km"] * c.columns["fuel_l_per_100km"] / 100,
                               50.0, rtol=1e-12)
    ref = range_curve(load_vehicle(tmp_path / "car.yaml"), c.columns["speed_kmh"])
    np.testing.assert_array_equal(c.columns["range_km"], ref.range_km)
    np.testing.assert_array_equal(c.feasible, ref.feasible)
    # heavier: more rolling resistance at every speed, so less range
    heavy = res.range_curves[1]
    assert heavy.variant == "mod" and np.all(heavy.columns["range_km"] < c.columns["range_km"])


def test_no_range_curves_without_a_powertrain(tmp_path):
    res = run_study(_write(tmp_path, _steady_study(PHYS.format(mass=1500), "{crr: -5%}")))
    assert res.range_curves == () and res.to_dict()["range_curves"] == []


# ---------------------------------------------------------------------------
# Monte Carlo in chunks along the vehicle axis
# ---------------------------------------------------------------------------

BSFC_CAR = """\
name: map car
mass_kg: 1300
mass_std_kg: 30
road_load:
  cda_m2: 0.66
  crr: 0.0095
  crr_std: 0.0005
powertrain:
  kind: combustion
  fuel: gasoline
  tank_l: 45
  gear_ratios: [3.5, 2.0, 1.4, 1.05, 0.85, 0.7]
  final_drive_ratio: 3.9
  tyre_radius_m: 0.3
  transmission_efficiency: 0.94
  idle_speed_rpm: 800
  rev_limit_rpm: 6200
  shift_rule: efficient
  idle_fuel_l_per_h: 0.8
  full_load:
    speed_rpm: [800, 2000, 4000, 6200]
    torque_nm: [90, 150, 160, 130]
  bsfc_map:
    speed_rpm: [1000, 2500, 4000, 6000]
    torque_nm: [10, 50, 100, 160]
    bsfc_g_per_kwh:
      - [640, 660, 700, 800]
      - [310, 300, 315, 340]
      - [265, 255, 262, 285]
      - [250, 245, 250, 275]
"""

MAP_EV = """\
name: map van
mass_kg: 2000
road_load:
  cda_m2: 0.9
  crr: 0.008
  cda_std_m2: 0.03
powertrain:
  kind: electric
  battery_usable_kwh: 70
  gear_ratio: 9.5
  gear_efficiency: 0.97
  tyre_radius_m: 0.33
  efficiency_map:
    speed_rpm: [500, 3000, 8000, 12000]
    torque_nm: [5, 50, 150, 250]
    efficiency:
      - [0.60, 0.72, 0.65, 0.55]
      - [0.86, 0.93, 0.92, 0.88]
      - [0.84, 0.94, 0.95, 0.93]
      - [0.80, 0.92, 0.95, 0.94]
  regen: {fade_below_kmh: 8, recoverable_share: 0.65, max_power_kw: 50}
  auxiliary_power_kw: 0.8
"""


@pytest.mark.parametrize("vehicle,extra", [
    (BSFC_CAR, "    powertrain.idle_fuel_std_l_per_h: 0.1\n"),
    (MAP_EV, "    powertrain.auxiliary_power_std_kw: 0.2\n"
             "    powertrain.gear_efficiency_std: 0.01\n"),
])
def test_chunked_and_unchunked_monte_carlo_are_identical(tmp_path, vehicle, extra):
    # the same draws evaluated in chunks of 7 vehicles or in one call give the same
    # doubles everywhere (element-wise arithmetic does not depend on the batch)
    study = f"""\
name: chunks
baseline:
  vehicle: car.yaml
  changes:
{extra}modifications:
  - name: lighter
    changes: {{mass_kg: -80, crr: -10%}}
driving:
  profiles: [nycc, "steady:70kmh:120s"]
  mixes:
    - name: both
      shares_pct: {{nycc: 50, "steady:70kmh:120s": 50}}
uncertainty: {{draws: 60, seed: 9}}
"""
    path = _write(tmp_path, {"car.yaml": vehicle, "study.yaml": study})
    whole = run_study(path, chunk_size=10 ** 6)
    for size in (7, 1):
        chunked = run_study(path, chunk_size=size)
        assert chunked.to_dict(include_series=True) == whole.to_dict(include_series=True)
    row = whole.row("baseline", "nycc")
    key = "fuel_l" if "fuel_l" in row.metrics else "battery_energy_kwh"
    assert row.interval_high[key] > row.interval_low[key]      # the draws do differ


@pytest.mark.parametrize("vehicle", [BSFC_CAR, MAP_EV, PHYS.format(mass=1500)])
def test_chunk_size_keeps_the_evaluation_within_its_memory_budget(tmp_path, vehicle):
    # tracemalloc (Python standard library; numpy reports its buffers to it) measures the
    # peak of one evaluation; the estimate behind the chunk size must not be lower
    import tracemalloc

    from tractive.profiles import resolve_profile
    from tractive.spec import read_yaml
    from tractive.study import modify
    from tractive.study.uncertainty import UNCERTAIN_PARAMS, expand, standard_normal_draws
    from tractive.vehicle import load_vehicle

    (tmp_path / "car.yaml").write_text(vehicle)
    veh = load_vehicle(tmp_path / "car.yaml")
    nom, stds, cov = modify.nominal_params(veh, read_yaml(tmp_path / "car.yaml"),
                                           air_density_kg_m3=None)
    rng = np.random.default_rng(0)
    z = {k: standard_normal_draws(rng, 299) for k in UNCERTAIN_PARAMS + ("coef0", "coef1",
                                                                           "coef2")}
    ps, _ = expand(nom, {"mass_kg": 20.0}, cov, z, 299)
    profiles = [("udds", resolve_profile("udds"))]
    budget = 40 * 2 ** 20
    n = engine.chunk_size_for(ps, profiles, budget)
    assert 1 <= n < ps.size
    tracemalloc.start()
    try:
        engine._evaluate(ps.take(slice(0, n)), profiles, chunk_size=n)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak <= budget
    # and the budget is used, not wasted (the estimate is within a factor 2 of the peak)
    assert peak >= budget / 2 or vehicle.startswith("name: plain")


PHYS_SLOPE = """\
name: plain car with a speed-dependent tyre
mass_kg: 1500
road_load:
  cda_m2: 0.62
  crr: 0.010
  crr_per_kmh: 0.00002
  air_density_kg_m3: 1.2
"""

# the same road load as measured coefficients (GTR 15 form): f0 = Crr m g,
# f1 = k m g, f2 = 1/2 rho CdA / 3.6^2
COEF_SAME = f"""\
name: the same car, coefficients
mass_kg: 1500
road_load:
  f0_n: {0.010 * 1500 * STANDARD_GRAVITY_MS2!r}
  f1_n_per_kmh: {0.00002 * 1500 * STANDARD_GRAVITY_MS2!r}
  f2_n_per_kmh2: {0.5 * 1.2 * 0.62 * KMH_MS ** 2!r}
  reference_air_density_kg_m3: 1.2
"""


def test_percent_crr_scales_the_whole_rolling_coefficient(tmp_path):
    # road-load equation with a speed slope (Gillespie ch. 4, chapter from memory):
    # rolling force (Crr + k v) m g; a tyre's rolling coefficient scaled as a whole
    # (common practice) changes both parts, and the coefficient form (f0 and f1 scaled)
    # gives the same
    v_kmh, secs, mass = 90.0, 600, 1500.0
    d_m = v_kmh * KMH_MS * secs
    expected = -0.15 * (0.010 + 0.00002 * v_kmh) * mass * STANDARD_GRAVITY_MS2 * d_m / 3.6e6
    changes = {}
    for name, car in (("phys", PHYS_SLOPE), ("coef", COEF_SAME)):
        folder = tmp_path / name
        folder.mkdir()
        res = run_study(_write(folder, _steady_study(car, "{crr: -15%}")))
        changes[name] = res.row("mod", "steady:90kmh:600s").change["positive_energy_kwh"]
    assert changes["phys"] == pytest.approx(expected, rel=1e-12)
    assert changes["coef"] == pytest.approx(expected, rel=1e-12)


def test_tyre_label_scales_the_speed_slope_with_crr(tmp_path):
    # a new tyre replaces the coefficient as a whole: Crr -> label middle, k -> k Crr'/Crr;
    # Regulation (EU) 2020/740 C1 class A: <= 6.5 kg/t, taken one class-B width (6.6-7.7)
    # wide (assumption of the tool for an open-ended class): (5.3, 6.5], middle 5.9
    v_kmh, mass = 90.0, 1500.0
    d_m = v_kmh * KMH_MS * 600
    crr_new = 5.9e-3
    k_new = 0.00002 * crr_new / 0.010
    expected = ((crr_new - 0.010) + (k_new - 0.00002) * v_kmh) * mass * \
        STANDARD_GRAVITY_MS2 * d_m / 3.6e6
    res = run_study(_write(tmp_path, _steady_study(PHYS_SLOPE, "{tyre_label: C1/A}")))
    assert res.row("mod", "steady:90kmh:600s").change["positive_energy_kwh"] == \
        pytest.approx(expected, rel=1e-12)


def _coef_car(extra_keys=""):
    return f"""\
name: measured car
mass_kg: 1500
road_load:
  f0_n: 150.0
  f1_n_per_kmh: 0.5
  f2_n_per_kmh2: 0.03
{extra_keys}"""


@pytest.mark.parametrize("car, ambient, rho_ref, rho_air", [
    # stated reference density, study ambient air: f2 scaled by rho / rho_ref
    (_coef_car("  reference_air_density_kg_m3: 1.20\n"),
     "ambient:\n  air_density_kg_m3: 1.10\n", 1.20, 1.10),
    # no reference stated, no ambient: the GTR 15 reference state 293 K, 100 kPa (from
    # memory), rho = p / (R T) with R = 287.05 J/(kg K) (ICAO Doc 7488)
    (_coef_car(), "", 100000.0 / (287.05 * 293.0), 100000.0 / (287.05 * 293.0)),
    # A/B/C coefficients: the SAE J2263 / 40 CFR 1066.805 reference 20 C, 98.21 kPa,
    # 1.1671 kg/m^3 (computed in the reference table)
    ("""\
name: dyno car
mass_kg: 1500
road_load:
  a_lbf: 30.0
  b_lbf_per_mph: 0.2
  c_lbf_per_mph2: 0.018
""", "", 1.1671, 1.1671),
    ("""\
name: dyno car
mass_kg: 1500
road_load:
  a_lbf: 30.0
  b_lbf_per_mph: 0.2
  c_lbf_per_mph2: 0.018
""", "ambient:\n  air_density_kg_m3: 1.0\n", 1.1671, 1.0),
])
def test_measured_coefficients_hold_at_their_reference_air(tmp_path, car, ambient, rho_ref,
                                                          rho_air):
    # drag force 1/2 rho CdA v^2: the measured aero term scales with rho / rho_ref, and an
    # added drag area costs 1/2 rho_air dCdA v^2 d of energy at constant speed
    from tractive.vehicle import load_vehicle

    v_kmh = 90.0
    v = v_kmh * KMH_MS
    d_m = v * 600
    study = _steady_study(car, "{cda_m2: +0.1}", extra=ambient)
    res = run_study(_write(tmp_path, study))
    f2 = load_vehicle(tmp_path / "car.yaml").road_load.f2_n_per_kmh2
    base = res.row("baseline", "steady:90kmh:600s")
    assert base.metrics["aero_energy_kwh"] == pytest.approx(
        f2 * rho_air / rho_ref * v_kmh ** 2 * d_m / 3.6e6, rel=1e-4)
    change = res.row("mod", "steady:90kmh:600s").change
    assert change["aero_energy_kwh"] == pytest.approx(0.5 * rho_air * 0.1 * v ** 2 * d_m
                                                      / 3.6e6, rel=1e-4)
    assert change["positive_energy_kwh"] == pytest.approx(change["aero_energy_kwh"],
                                                          rel=1e-12)


def test_reference_air_density_from_a_coastdown_file(tmp_path):
    # road_load: {from_coastdown: FILE} carries the reference density of the fit
    (tmp_path / "fit.yaml").write_text("f0_n: 150.0\nf1_n_per_kmh: 0.5\nf2_n_per_kmh2: 0.03\n"
                                       "reference_air_density_kg_m3: 1.25\n")
    car = "name: c\nmass_kg: 1500\nroad_load: {from_coastdown: fit.yaml}\n"
    res = run_study(_write(tmp_path, _steady_study(
        car, "{cda_m2: +0.1}", extra="ambient:\n  air_density_kg_m3: 1.0\n")))
    base = res.row("baseline", "steady:90kmh:600s")
    d_m = 90 * KMH_MS * 600
    # 1/2 rho CdA v^2 scaling of the measured f2: rho / rho_ref = 1.0 / 1.25
    assert base.metrics["aero_energy_kwh"] == pytest.approx(0.03 * 0.8 * 90 ** 2 * d_m / 3.6e6,
                                                            rel=1e-12)


def test_reference_air_density_is_range_checked(tmp_path):
    from tractive.errors import InputError
    from tractive.vehicle import load_vehicle

    (tmp_path / "car.yaml").write_text(_coef_car("  reference_air_density_kg_m3: 12\n"))
    with pytest.raises(InputError) as err:
        load_vehicle(tmp_path / "car.yaml")
    assert err.value.field == "road_load.reference_air_density_kg_m3"


SMALL_MOTOR_EV = """\
name: small-motor EV
mass_kg: 1500
road_load:
  cda_m2: 0.62
  crr: 0.010
  air_density_kg_m3: 1.2
powertrain:
  kind: electric
  battery_usable_kwh: 30
  drive_efficiency: 0.88
  charger_efficiency: 0.9
  auxiliary_power_kw: 0
  motor:
    peak_power_kw: 15
    peak_torque_nm: 120
    max_speed_rpm: 14000
  gear_ratio: 8.0
  gear_efficiency: 0.97
  tyre_radius_m: 0.3
"""


def test_a_drive_that_cannot_follow_the_profile_is_reported(tmp_path):
    # steady speed on a level road needs the road-load power F v = (Crr m g + 1/2 rho CdA
    # v^2) v (Gillespie ch. 4, chapter from memory), at the motor shaft F v / eta_gear: at
    # 130 km/h that is above the 15 kW peak for the whole run, at 50 km/h below it
    for v_kmh, over in ((130.0, True), (50.0, False)):
        v = v_kmh * KMH_MS
        shaft_w = (0.010 * 1500 * STANDARD_GRAVITY_MS2 + 0.5 * 1.2 * 0.62 * v ** 2) * v / 0.97
        assert (shaft_w > 15000.0) is over
    folder = tmp_path / "s"
    folder.mkdir()
    study = _steady_study(SMALL_MOTOR_EV, "{mass_kg: +10}", profile="steady:130kmh:600s")
    study["study.yaml"] = study["study.yaml"].replace(
        'profiles: ["steady:130kmh:600s"]', 'profiles: ["steady:130kmh:600s", '
        '"steady:50kmh:600s"]')
    res = run_study(_write(folder, study))
    fast = res.row("baseline", "steady:130kmh:600s").metrics
    slow = res.row("baseline", "steady:50kmh:600s").metrics
    assert fast["motor_limit_exceeded_s"] == pytest.approx(600.0)
    assert slow["motor_limit_exceeded_s"] == 0.0
    notes = [w for w in res.warnings if "cannot follow" in w]
    assert any(w.startswith("baseline cannot follow the profile 'steady:130kmh:600s'")
               for w in notes)
    assert any(w.startswith("mod cannot follow") for w in notes)
    assert not any("steady:50kmh" in w for w in notes)
    assert "motor_limit_exceeded_s" in res.to_dict()["metric_units"]


def test_absolute_value_far_from_the_baseline_is_warned(tmp_path, capsys):
    # a short-form absolute value that moves mass, CdA or Crr by more than 50 % is likely a
    # forgotten sign (rule of this tool: |new - old| / old > 0.5; 25 kg against 1500 kg is
    # -98 %, 1400 kg -6.7 %, 0.2 m^2 against 0.62 m^2 -68 %)
    cases = {"{mass_kg: 25}": "mass_kg: 25 is an absolute value",
             "{cda_m2: 0.2}": "cda_m2: 0.2 is an absolute value",
             "{crr: 0.02}": "crr: 0.02 is an absolute value",
             "{mass_kg: 1400}": None, "{mass_kg: {set: 25}}": None, "{mass_kg: +25}": None}
    for text, words in cases.items():
        folder = tmp_path / f"a{abs(hash(text))}"
        folder.mkdir()
        res = run_study(_write(folder, _steady_study(PHYS.format(mass=1500), text)))
        notes = [w for w in res.warnings if "is an absolute value" in w]
        if words is None:
            assert notes == [], text
        else:
            assert len(notes) == 1 and words in notes[0] and "modification 'mod'" in notes[0]
    # the command prints it with the table
    from tractive.cli import main
    folder = tmp_path / "cli"
    folder.mkdir()
    path = _write(folder, _steady_study(PHYS.format(mass=1500), "{mass_kg: 25}"))
    capsys.readouterr()
    with pytest.raises(SystemExit) as e:
        main(["compare", str(path), "--draws", "0"])
    assert e.value.code == 0
    assert "note: modification 'mod': mass_kg: 25 is an absolute value" in \
        capsys.readouterr().out


RACER_NO_POWERTRAIN = """\
name: racer
mass_kg: 980
rotating_mass_fraction: 0.05
road_load:
  cda_m2: 0.69
  crr: 0.013
  air_density_kg_m3: 1.2
performance:
  driven_axle_load_share: 0.55
  tyre_road_friction: 1.3
  full_load:
    speed_rpm: [2000, 5000, 8000]
    power_kw: [60, 150, 200]
  gear_ratios: [3.1, 2.2, 1.7, 1.36, 1.13, 0.96]
  final_drive_ratio: 3.4
  tyre_radius_m: 0.31
  driveline_efficiency: 0.9
  shift_time_s: 0.1
"""


def test_a_profile_beyond_the_available_wheel_force_is_reported(tmp_path):
    # steady-speed wheel power = road-load force x speed (Gillespie ch. 4, chapter from
    # memory): at 280 km/h (Crr m g + 1/2 rho CdA v^2) v exceeds 0.9 x 200 kW, at
    # 150 km/h it does not
    def wheel_kw(v_kmh):
        v = v_kmh * KMH_MS
        return (0.013 * 980 * STANDARD_GRAVITY_MS2 + 0.5 * 1.2 * 0.69 * v * v) * v / 1000
    assert wheel_kw(280) > 0.9 * 200 > wheel_kw(150)
    study = _steady_study(RACER_NO_POWERTRAIN, "{mass_kg: +7}", profile="steady:280kmh:30s")
    study["study.yaml"] = study["study.yaml"].replace(
        'profiles: ["steady:280kmh:30s"]', 'profiles: ["steady:280kmh:30s", '
        '"steady:150kmh:30s"]')
    res = run_study(_write(tmp_path, study))
    notes = [w for w in res.warnings if "cannot follow" in w]
    assert any(w.startswith("baseline cannot follow the profile 'steady:280kmh:30s': for "
                            "30.0 s") and "more wheel force than its drive" in w for w in notes)
    assert not any("steady:150kmh" in w for w in notes)


def test_available_wheel_force_is_the_drive_envelope_capped_by_traction():
    # electric van (one reduction gear): below base speed the force is torque-limited,
    # T i η / r, above it power-limited, P η / v (Gillespie ch. 2, chapter from memory;
    # F v = T ω η); values of examples/vehicles/electric_van.yaml: 300 N m, 150 kW,
    # i = 10.2, η = 0.97, r = 0.34 m
    from tractive.performance import available_wheel_force_n
    from tractive.vehicle import load_vehicle

    van = load_vehicle(Path(__file__).resolve().parents[1] / "examples" / "vehicles"
                       / "electric_van.yaml")
    v = np.array([0.0, 5.0, 20.0, 30.0, 40.0])
    got = available_wheel_force_n(van, v)
    expected = np.minimum(300 * 10.2 * 0.97 / 0.34, 150e3 * 0.97 / np.maximum(v, 1e-9))
    np.testing.assert_allclose(got, expected, rtol=1e-12)
    # on ice (μ = 0.1) the tyres limit instead. Front drive with load transfer under
    # acceleration (Gillespie ch. 2, chapter from memory): F ≤ μ (W_f − (h/L) m a) with
    # m_inertial a = F − R(v), so F = μ (W_f + (h/L)(m/m_i) R) / (1 + μ (h/L)(m/m_i));
    # W_f = 0.55 m g, h = 0.75 m, L = 3.3 m, m/m_i = 1/1.04 (the van's file)
    icy = replace(van, performance=replace(van.performance, tyre_road_friction=0.1))
    got = available_wheel_force_n(icy, v)
    w = 2250 * STANDARD_GRAVITY_MS2
    k = 0.75 / 3.3 / 1.04
    road = np.asarray(van.resistance().force_n(v))
    np.testing.assert_allclose(got, 0.1 * (0.55 * w + k * road) / (1 + 0.1 * k), rtol=1e-12)
    assert np.all(got < expected)


def test_the_reference_air_used_is_echoed_with_its_source(tmp_path):
    res = run_study(_write(tmp_path, _steady_study(COEF, "{cda_m2: +0.1}")))
    item = [i for i in res.inputs if i.key == "road_load.reference_air_density_kg_m3"]
    # GTR 15 reference state 293 K, 100 kPa (from memory): rho = p / (R T), ICAO R
    assert len(item) == 1 and item[0].source == "default" and "GTR No. 15" in item[0].note
    assert item[0].value == pytest.approx(100000.0 / (287.05 * 293.0), rel=1e-12)
