"""Monte Carlo propagation: zero width without uncertainty, analytic spread when linear.

References: JCGM 101:2008 (Monte Carlo propagation); JCGM 100:2008 eq. (10)
(the law of propagation of uncertainty, exact for a linear model).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from tractive.study.engine import run_study
from tractive.study.uncertainty import covariance_factor, interval
from tractive.units import KMH_MS, STANDARD_GRAVITY_MS2

CAR = """\
name: car
mass_kg: 1500
road_load:
  cda_m2: 0.62
  crr: 0.010
{extra}"""

STUDY = """\
name: mc
baseline:
  vehicle: car.yaml
modifications:
  - name: tyres
    changes: {{crr: -15%}}
  - name: ballast
    changes: {{mass_kg: +100}}
driving:
  profiles: {profiles}
uncertainty:
  draws: {draws}
  seed: {seed}
"""


def _run(tmp_path: Path, extra="", draws=2000, seed=11,
         profiles='["steady:90kmh:600s", udds]'):
    (tmp_path / "car.yaml").write_text(CAR.format(extra=extra))
    (tmp_path / "study.yaml").write_text(STUDY.format(draws=draws, seed=seed,
                                                      profiles=profiles))
    return run_study(tmp_path / "study.yaml")


def test_zero_uncertainty_gives_zero_width_intervals(tmp_path):
    res = _run(tmp_path, draws=500)
    for row in res.rows:
        for key, low in row.interval_low.items():
            if low is None:
                continue
            assert row.interval_high[key] - low == 0.0
            assert low == row.metrics[key]
        for key, low in row.change_low.items():
            assert row.change_high[key] - low == 0.0
            # a change with no uncertainty is distinguishable exactly when it is not zero
            assert row.distinguishable[key] == (row.change[key] != 0.0)


def test_linear_sensitivity_reproduces_the_analytic_standard_deviation(tmp_path):
    # at constant speed E = (Crr m g + 1/2 rho CdA v^2) d is linear in Crr, so
    # sd(E) = m g d sd(Crr) exactly (JCGM 100 eq. 10); a 95 % interval of a normal
    # output is mean -/+ 1.959964 sd (scipy.stats.norm.ppf(0.975)).
    sd_crr = 0.0008
    n = 20000
    res = _run(tmp_path, extra=f"  crr_std: {sd_crr}\n", draws=n,
               profiles='["steady:90kmh:600s"]')
    row = res.row("baseline", "steady:90kmh:600s")
    d = 90 * KMH_MS * 600
    sd_kwh = 1500 * STANDARD_GRAVITY_MS2 * d * sd_crr / 3.6e6
    z = stats.norm.ppf(0.975)
    width = row.interval_high["positive_energy_kwh"] - row.interval_low["positive_energy_kwh"]
    # tolerance basis (arithmetic; the 5 % itself is a common-practice choice): a sample
    # standard deviation has relative standard error about 1/sqrt(2(n-1)) = 0.5 % at
    # n = 20000; the interval is read from the sample 2.5/97.5 % quantiles, whose
    # asymptotic standard error sqrt(p(1-p)/n)/phi(z) (order statistics, normal output)
    # gives about 0.67 % of the width. 5 % is then more than 7 standard errors.
    se_sd = 1 / np.sqrt(2 * (n - 1))
    se_q = np.sqrt(0.975 * 0.025 / n) / stats.norm.pdf(z)
    se_width = np.sqrt(2 * se_q ** 2 - 2 * 0.025 ** 2 / n / stats.norm.pdf(z) ** 2) / (2 * z)
    assert 0.05 > 9 * se_sd and 0.05 > 7 * se_width  # arithmetic of the tolerance basis
    # analytic sd (JCGM 100 eq. 10) through the 95 % interval; 5 %: see above
    assert width / (2 * z) == pytest.approx(sd_kwh, rel=0.05)
    # sampling error of the mean: sd / sqrt(n) (standard error of a mean); allow 4
    # standard errors (common practice)
    assert abs(row.mean["positive_energy_kwh"] - row.metrics["positive_energy_kwh"]) < \
        4 * sd_kwh / np.sqrt(n)
    # the tyre change is -15 % of Crr: its own spread is 0.15 m g d sd(Crr)
    tyres = res.row("tyres", "steady:90kmh:600s")
    c_width = tyres.change_high["positive_energy_kwh"] - tyres.change_low["positive_energy_kwh"]
    # analytic sd of the change (JCGM 100 eq. 10); 5 %: same basis as above
    assert c_width / (2 * z) == pytest.approx(0.15 * sd_kwh, rel=0.05)
    assert tyres.distinguishable["positive_energy_kwh"]


def test_common_random_numbers_cancel_shared_uncertainty(tmp_path):
    # ballast changes mass only; at constant speed the change (dm g Crr d) depends on Crr:
    # sd(change) = dm g d sd(Crr) while the metric carries m g d sd(Crr)
    sd_crr = 0.0008
    res = _run(tmp_path, extra=f"  crr_std: {sd_crr}\n", draws=20000,
               profiles='["steady:90kmh:600s"]')
    row = res.row("ballast", "steady:90kmh:600s")
    d = 90 * KMH_MS * 600
    z = stats.norm.ppf(0.975)
    expected = 100 * STANDARD_GRAVITY_MS2 * d * sd_crr / 3.6e6
    c_width = row.change_high["positive_energy_kwh"] - row.change_low["positive_energy_kwh"]
    # analytic sd (JCGM 100 eq. 10); 5 % at 20000 draws: basis in the test above
    assert c_width / (2 * z) == pytest.approx(expected, rel=0.05)


def test_covariance_of_coefficients_propagates(tmp_path):
    # E = (f0 + f1 v + f2 v^2) d at constant speed v [km/h]: var(E) = d^2 g' S g with
    # g = (1, v, v^2) (JCGM 100 eq. 13, exact for a linear model)
    cov = np.array([[25.0, 0.2, -0.004], [0.2, 0.01, -0.0001], [-0.004, -0.0001, 4e-6]])
    rows = "\n".join(f"    - [{', '.join(f'{float(x):.6e}' for x in r)}]" for r in cov)
    (tmp_path / "car.yaml").write_text(f"""\
name: measured
mass_kg: 1500
road_load:
  f0_n: 150
  f1_n_per_kmh: 0.5
  f2_n_per_kmh2: 0.03
  covariance:
{rows}
""")
    (tmp_path / "study.yaml").write_text(STUDY.format(draws=20000, seed=3,
                                                      profiles='["steady:90kmh:600s"]'))
    res = run_study(tmp_path / "study.yaml")
    row = res.row("baseline", "steady:90kmh:600s")
    g = np.array([1.0, 90.0, 90.0 ** 2])
    d = 90 * KMH_MS * 600
    sd_kwh = np.sqrt(g @ cov @ g) * d / 3.6e6
    width = row.interval_high["positive_energy_kwh"] - row.interval_low["positive_energy_kwh"]
    # analytic sd (JCGM 100 eq. 13); 5 % at 20000 draws: basis in the linear-sensitivity test
    assert width / (2 * stats.norm.ppf(0.975)) == pytest.approx(sd_kwh, rel=0.05)


def test_seed_reproduces_and_changes_the_draws(tmp_path):
    a = _run(tmp_path / "a" if (tmp_path / "a").mkdir() is None else None,
             extra="  crr_std: 0.001\n", draws=200, seed=5)
    b = _run(tmp_path / "b" if (tmp_path / "b").mkdir() is None else None,
             extra="  crr_std: 0.001\n", draws=200, seed=5)
    c = _run(tmp_path / "c" if (tmp_path / "c").mkdir() is None else None,
             extra="  crr_std: 0.001\n", draws=200, seed=6)
    ra, rb, rc = (r.row("baseline", "udds") for r in (a, b, c))
    assert ra.interval_low == rb.interval_low and ra.mean == rb.mean
    assert ra.interval_low["positive_energy_kwh"] != rc.interval_low["positive_energy_kwh"]


def test_covariance_factor_reproduces_the_matrix():
    # L L' = S for a positive semi-definite S (numpy.linalg as the reference)
    s = np.array([[4.0, 1.0, 0.0], [1.0, 2.0, 0.5], [0.0, 0.5, 1.0]])
    f = covariance_factor(s)
    assert np.allclose(f @ f.T, s, rtol=1e-12, atol=1e-12)
    singular = np.array([[1.0, 1.0, 0.0], [1.0, 1.0, 0.0], [0.0, 0.0, 0.0]])
    f = covariance_factor(singular)
    assert np.allclose(f @ f.T, singular, atol=1e-12)


def test_interval_matches_numpy_percentiles():
    x = np.random.default_rng(0).normal(size=1001)
    mean, lo, hi = interval(x, 95.0)
    assert (lo, hi) == tuple(np.percentile(x, [2.5, 97.5]))
    assert mean == pytest.approx(np.mean(x))
    assert interval(np.array([1.0, np.inf]), 95.0) == (None, None, None)


# ---------------------------------------------------------------------------
# powertrain coefficients with a standard uncertainty
# ---------------------------------------------------------------------------

EV_PT = """\
name: van
mass_kg: 1800
road_load:
  cda_m2: 0.60
  crr: 0.009
powertrain:
  kind: electric
  battery_usable_kwh: 60
  drive_efficiency: 0.88
  regen: {efficiency: 0.7, fade_below_kmh: 8, recoverable_share: 0.6}
  auxiliary_power_kw: 0.5
"""

PT_STUDY = """\
name: powertrain mc
baseline:
  vehicle: car.yaml
  changes:
{baseline}
modifications:
  - name: ballast
    changes: {{mass_kg: +150}}
driving:
  profiles: [{profile}]
uncertainty:
  draws: {draws}
  seed: 17
"""


def _trip_csv(folder: Path) -> str:
    """A short invented stop-and-go trip: 0-50 km/h in 10 s, 20 s cruise, 10 s braking,
    10 s standing, twice (1 s steps)."""
    one = np.concatenate([np.linspace(0, 50, 11)[:-1], np.full(20, 50.0),
                          np.linspace(50, 0, 11)[:-1], np.zeros(10)])
    speed = np.concatenate([one, one, [0.0]])
    lines = ["time_s,speed_kmh"] + [f"{i}.0,{v:.6f}" for i, v in enumerate(speed)]
    (folder / "trip.csv").write_text("\n".join(lines) + "\n")
    return "trip.csv"


def _pt_study(tmp_path: Path, vehicle: str, baseline: str, draws=20000, profile="nycc"):
    (tmp_path / "car.yaml").write_text(vehicle)
    (tmp_path / "study.yaml").write_text(PT_STUDY.format(baseline=baseline, draws=draws,
                                                         profile=profile))
    return tmp_path / "study.yaml"


def _sd_from_interval(row, key, change=False):
    lo = (row.change_low if change else row.interval_low)[key]
    hi = (row.change_high if change else row.interval_high)[key]
    # a 95 % central interval of a normal output is mean -/+ 1.959964 sd
    return (hi - lo) / (2 * stats.norm.ppf(0.975))


def test_electric_powertrain_uncertainty_matches_the_law_of_propagation(tmp_path):
    # battery energy E = W+/eta_d - eta_r B + P_aux t is linear in eta_r, P_aux (and nearly
    # in eta_d for u/eta = 1 %); range R = U d / E. JCGM 100:2008 eq. (10):
    # u_c^2 = sum (df/dx_i)^2 u^2(x_i) for independent inputs, with sensitivities from the
    # model at the nominal point (the traction and regenerated energy of one run).
    # What this tests is the propagation (Monte Carlo vs the law of propagation): the
    # sensitivities are taken from the code's own consume(), so the energies themselves
    # are not checked against an outside value here (consistency of the model with itself).
    from tractive.demand import vehicle_wheel_demand
    from tractive.profiles import resolve_profile
    from tractive.vehicle import load_vehicle

    u = {"eta_d": 0.01, "eta_r": 0.03, "aux_kw": 0.2, "usable_kwh": 1.5}
    path = _pt_study(tmp_path, EV_PT, f"""\
    powertrain.drive_efficiency_std: {u['eta_d']}
    powertrain.regen.efficiency_std: {u['eta_r']}
    powertrain.auxiliary_power_std_kw: {u['aux_kw']}
    powertrain.battery_usable_std_kwh: {u['usable_kwh']}""")
    res = run_study(path)
    prof = resolve_profile("nycc")
    veh = load_vehicle(tmp_path / "car.yaml")
    r = veh.powertrain.consume(veh, vehicle_wheel_demand(veh, prof), prof)
    e_kwh = float(r.battery_energy_kwh)
    c = {"eta_d": -float(r.traction_energy_kwh) / 0.88,      # d(W+/eta)/d eta = -(W+/eta)/eta
         "eta_r": -float(r.regenerated_energy_kwh) / 0.7,    # regen = eta_r * recoverable
         "aux_kw": r.duration_s / 3600.0}                     # kWh per kW
    sd_e = np.sqrt(sum((c[k] * u[k]) ** 2 for k in c))
    row = res.row("baseline", "nycc")
    # consistency check: the study runs the same model as consume()
    assert row.metrics["battery_energy_kwh"] == pytest.approx(e_kwh, rel=1e-12)
    # propagation check (JCGM 100 eq. 10, sensitivities from the model); 5 % at 20000
    # draws: common-practice tolerance, basis in the linear-sensitivity test
    assert _sd_from_interval(row, "battery_energy_kwh") == pytest.approx(sd_e, rel=0.05)
    # range: dR/dU = d/E, dR/dE = -U d/E^2 (E itself carries sd_e)
    d_km = r.distance_km
    sd_r = np.sqrt((d_km / e_kwh * u["usable_kwh"]) ** 2 +
                   (60.0 * d_km / e_kwh ** 2 * sd_e) ** 2)
    # propagation check as above (JCGM 100 eq. 10); 5 %: common practice
    assert _sd_from_interval(row, "range_km") == pytest.approx(sd_r, rel=0.05)
    # the ballast changes the wheel energy only: with common random numbers its change
    # keeps the spread of eta_d and eta_r acting on the difference, none of the auxiliaries
    heavy = load_vehicle(tmp_path / "car.yaml")
    from dataclasses import replace
    heavy = replace(heavy, mass_kg=1950.0)
    r1 = heavy.powertrain.consume(heavy, vehicle_wheel_demand(heavy, prof), prof)
    c_change = {"eta_d": -(float(r1.traction_energy_kwh) - float(r.traction_energy_kwh)) / 0.88,
                "eta_r": -(float(r1.regenerated_energy_kwh) -
                           float(r.regenerated_energy_kwh)) / 0.7}
    sd_change = np.sqrt(sum((c_change[k] * u[k]) ** 2 for k in c_change))
    ballast = res.row("ballast", "nycc")
    # propagation check (JCGM 100 eq. 10, sensitivities from the model); 5 %: common practice
    assert _sd_from_interval(ballast, "battery_energy_kwh", change=True) == \
        pytest.approx(sd_change, rel=0.05)
    # consistency check: common random numbers leave the change less spread than the metric
    assert sd_change < 0.5 * sd_e
    text = " ".join(res.uncertainty["uncertain_parameters"])
    assert "powertrain.drive_efficiency" in text and "powertrain.battery_usable_kwh" in text


WILLANS_PT = """\
name: small diesel
mass_kg: 1500
road_load:
  cda_m2: 0.65
  crr: 0.009
powertrain:
  kind: combustion
  fuel: diesel
  tank_l: 50
  gear_ratios: [3.8, 2.1, 1.3, 0.95, 0.75]
  final_drive_ratio: 3.7
  tyre_radius_m: 0.31
  transmission_efficiency: 0.93
  idle_speed_rpm: 800
  rev_limit_rpm: 4500
  upshift_speeds_kmh: [18, 32, 50, 70]
  fuel_cutoff: true
  willans:
    marginal_efficiency: 0.40
    friction_power_kw: 2.5
  idle_fuel_l_per_h: 0.6
"""


def test_combustion_powertrain_uncertainty_matches_the_law_of_propagation(tmp_path):
    # Willans line m_f = (P_e + P_0)/(e H) with the gear set by speed: fuel is linear in the
    # friction power P_0 and in the idle rate, so sensitivities from a finite difference of
    # one run are exact; 1/e is linearised by a central difference (u/e = 2.5 %).
    # JCGM 100:2008 eq. (10) for independent inputs. What this tests is the propagation
    # (Monte Carlo vs the law of propagation): the sensitivities are taken from the code's
    # own consume(), so the fuel itself is not checked against an outside value here.
    import dataclasses

    from tractive.demand import vehicle_wheel_demand
    from tractive.profiles import resolve_profile
    from tractive.vehicle import load_vehicle

    u = {"p0_kw": 0.4, "idle_l_h": 0.1, "e": 0.01}
    trip = _trip_csv(tmp_path)
    path = _pt_study(tmp_path, WILLANS_PT, f"""\
    powertrain.willans.friction_power_std_kw: {u['p0_kw']}
    powertrain.idle_fuel_std_l_per_h: {u['idle_l_h']}
    powertrain.willans.marginal_efficiency_std: {u['e']}""", profile=trip)
    res = run_study(path)
    prof = resolve_profile(trip, base_dir=tmp_path)
    veh = load_vehicle(tmp_path / "car.yaml")
    pt = veh.powertrain
    demand = vehicle_wheel_demand(veh, prof)

    def fuel_l(p0_kw=2.5, idle_l_h=0.6, e=0.40):
        p = dataclasses.replace(pt, idle_fuel_kg_s=idle_l_h * pt.fuel.density_kg_per_l / 3600,
                                engine=dataclasses.replace(pt.engine, marginal_efficiency=e,
                                                           friction_power_w=p0_kw * 1000))
        return float(p.consume(veh, demand, prof).fuel_l)

    f0 = fuel_l()
    c = {"p0_kw": fuel_l(p0_kw=3.5) - f0,                       # per kW (linear)
         "idle_l_h": fuel_l(idle_l_h=1.6) - f0,                  # per L/h (linear)
         "e": (fuel_l(e=0.401) - fuel_l(e=0.399)) / 0.002}       # central difference
    sd = np.sqrt(sum((c[k] * u[k]) ** 2 for k in c))
    row = res.row("baseline", trip)
    # consistency check: the study runs the same model as consume()
    assert row.metrics["fuel_l"] == pytest.approx(f0, rel=1e-12)
    # propagation check (JCGM 100 eq. 10, sensitivities from the model); 5 % at 20000
    # draws: common practice, basis in the linear-sensitivity test
    assert _sd_from_interval(row, "fuel_l") == pytest.approx(sd, rel=0.05)
    # test-design check: each input contributes (none of the three is negligible here)
    assert min(abs(c[k] * u[k]) for k in c) > 0.2 * sd


def test_powertrain_change_with_its_own_uncertainty(tmp_path):
    # a modification that sets a new drive efficiency with its own standard uncertainty:
    # the variant's spread is that of the new value alone (no baseline uncertainty)
    (tmp_path / "car.yaml").write_text(EV_PT)
    (tmp_path / "study.yaml").write_text("""\
baseline: {vehicle: car.yaml}
modifications:
  - name: new inverter
    changes:
      powertrain.drive_efficiency: 0.92
      powertrain.drive_efficiency_std: 0.01
driving:
  profiles: ["steady:80kmh:600s"]
uncertainty: {draws: 20000, seed: 2}
""")
    res = run_study(tmp_path / "study.yaml")
    base = res.row("baseline", "steady:80kmh:600s")
    row = res.row("new inverter", "steady:80kmh:600s")
    assert base.interval_high["battery_energy_kwh"] == base.interval_low["battery_energy_kwh"]
    # at steady speed E = W/eta + P t: dE/d eta = -W/eta^2 (JCGM 100 eq. 10, one input)
    w_kwh = row.metrics["positive_energy_kwh"]
    assert _sd_from_interval(row, "battery_energy_kwh") == \
        pytest.approx(w_kwh / 0.92 ** 2 * 0.01, rel=0.05)
    assert row.change["battery_energy_kwh"] == pytest.approx(w_kwh / 0.92 - w_kwh / 0.88,
                                                             rel=1e-12)


def test_drawn_efficiencies_are_clipped_at_one_with_a_warning(tmp_path):
    path = _pt_study(tmp_path, EV_PT.replace("drive_efficiency: 0.88", "drive_efficiency: 0.97"),
                     "    powertrain.drive_efficiency_std: 0.03", draws=2000,
                     profile='"steady:80kmh:300s"')
    res = run_study(path)
    notes = [w for w in res.warnings if "powertrain.drive_efficiency" in w]
    assert notes and "clipped" in notes[0]
    # no draw gets above 100 % efficiency: the battery energy never falls below the
    # wheel energy plus the auxiliaries (energy conservation)
    row = res.row("baseline", "steady:80kmh:300s")
    floor = row.metrics["positive_energy_kwh"] + 0.5 * 300 / 3600
    assert row.interval_low["battery_energy_kwh"] >= floor * (1 - 1e-12)


@pytest.mark.parametrize("changes,words", [
    ("    powertrain.motor.peak_power_std_kw: 5",
     "cannot carry a standard uncertainty; possible: "),
    ("    powertrain.charger_efficiency_std: 0.01", "no key 'charger_efficiency'"),
    ("    powertrain.willans.marginal_efficiency_std: 0.01",
     "cannot carry a standard uncertainty; possible with this electric powertrain"),
])
def test_powertrain_uncertainty_mistakes_name_the_field(tmp_path, changes, words):
    from tractive.errors import InputError

    path = _pt_study(tmp_path, EV_PT, changes, draws=10, profile='"steady:80kmh:60s"')
    with pytest.raises(InputError) as err:
        run_study(path)
    msg = str(err.value)
    assert msg.startswith(str(path)) and "baseline.changes" in msg and words in msg, msg


def test_lone_powertrain_uncertainty_needs_the_baseline_or_a_vehicle(tmp_path):
    from tractive.errors import InputError

    (tmp_path / "car.yaml").write_text(EV_PT)
    study = """\
baseline: {{vehicle: car.yaml}}
modifications:
  - name: other van
{vehicle}    changes:
      powertrain.auxiliary_power_std_kw: 0.2
driving:
  profiles: ["steady:80kmh:600s"]
uncertainty: {{draws: 4000, seed: 2}}
"""
    (tmp_path / "study.yaml").write_text(study.format(vehicle=""))
    with pytest.raises(InputError) as err:
        run_study(tmp_path / "study.yaml")
    assert "needs a change of powertrain.auxiliary_power_kw" in str(err.value)
    # with a vehicle file it states the uncertainty of that vehicle's own value:
    # E = ... + P t at steady speed, so sd(E) = t sd(P) (JCGM 100 eq. 10)
    (tmp_path / "study.yaml").write_text(study.format(vehicle="    vehicle: car.yaml\n"))
    res = run_study(tmp_path / "study.yaml")
    row = res.row("other van", "steady:80kmh:600s")
    assert _sd_from_interval(row, "battery_energy_kwh") == \
        pytest.approx(0.2 * 600 / 3600, rel=0.06)


def test_tyre_label_crr_is_drawn_uniformly_over_its_class(tmp_path):
    # JCGM 101:2008 6.4.2 (section from memory): a quantity known only to lie in [a, b]
    # has a rectangular distribution and is propagated by sampling it; its standard
    # deviation is (b - a) / sqrt(12) (JCGM 100:2008 4.3.7, section from memory). Checked
    # with scipy's Kolmogorov-Smirnov test against scipy.stats.uniform.
    from tractive.spec import read_yaml
    from tractive.study import modify
    from tractive.study.spec import Change
    from tractive.study.uncertainty import expand, standard_normal_draws
    from tractive.vehicle import load_vehicle

    (tmp_path / "car.yaml").write_text(CAR.format(extra=""))
    veh = load_vehicle(tmp_path / "car.yaml")
    nom, _, _ = modify.nominal_params(veh, read_yaml(tmp_path / "car.yaml"),
                                      air_density_kg_m3=None)
    n = 20000
    ps, _ = expand(nom, {}, None, {}, n)
    label = modify.parse_tyre_label("C2/B 2020/740")       # 5.6-6.7 kg/t
    z = standard_normal_draws(np.random.default_rng(5), n)
    out = modify.apply_change(ps, Change("tyre_label", "set", label), z)
    crr = out.params["crr"]
    lo, hi = 5.5e-3, 6.7e-3
    assert crr[0] == pytest.approx((lo + hi) / 2, rel=1e-12)        # nominal: class middle
    drawn = crr[1:]
    assert drawn.min() > lo and drawn.max() < hi                     # inside the class
    width = hi - lo
    # sampling error of a standard deviation of n uniform values: about 0.3 % here
    assert drawn.std() == pytest.approx(width / np.sqrt(12), rel=0.02)
    assert drawn.std() == pytest.approx(modify.tyre_label_crr(label)[1], rel=0.02)
    assert stats.kstest(drawn, stats.uniform(loc=lo, scale=width).cdf).pvalue > 1e-3
    # a normal draw with the same standard deviation would leave the class in 8 % of draws
    assert 2 * stats.norm.sf(0.5 * np.sqrt(12)) > 0.05


def test_tyre_label_interval_is_the_rectangular_one(tmp_path):
    # at constant speed the traction energy is linear in Crr (road-load equation,
    # Gillespie ch. 4, chapter from memory), so the 95 % interval of the change maps the
    # 2.5 % and 97.5 % quantiles of the rectangular distribution of Crr over the class:
    # a + 0.025 (b - a) and a + 0.975 (b - a) (JCGM 101:2008 6.4.2, section from memory);
    # a normal distribution with the same standard deviation would give the middle
    # -/+ 1.96 (b - a) / sqrt(12), outside it
    (tmp_path / "car.yaml").write_text(CAR.format(extra=""))
    (tmp_path / "study.yaml").write_text("""\
baseline: {vehicle: car.yaml}
modifications:
  - name: tyres
    changes: {tyre_label: C1/B 2020/740}
driving:
  profiles: ["steady:90kmh:600s"]
uncertainty: {draws: 4000, seed: 3}
""")
    res = run_study(tmp_path / "study.yaml")
    row = res.row("tyres", "steady:90kmh:600s")
    per_crr_kwh = 1500 * STANDARD_GRAVITY_MS2 * 90 * KMH_MS * 600 / 3.6e6
    lo, hi = 6.5e-3, 7.7e-3                   # C1 B: 6.6-7.7 kg/t, continuous (6.5, 7.7]
    width = hi - lo
    base = 0.010
    assert row.change["positive_energy_kwh"] == pytest.approx(
        ((lo + hi) / 2 - base) * per_crr_kwh, rel=1e-9)
    low = row.change_low["positive_energy_kwh"] / per_crr_kwh + base
    high = row.change_high["positive_energy_kwh"] / per_crr_kwh + base
    # quantile sampling error at n = 4000: sqrt(p (1 - p) / n) (b - a) = 0.0025 (b - a)
    assert low == pytest.approx(lo + 0.025 * width, abs=0.01 * width)
    assert high == pytest.approx(lo + 0.975 * width, abs=0.01 * width)
    assert any("uniform" in u and "C1/B" in u for u in res.uncertainty["uncertain_parameters"])


RACER = """\
name: racer
mass_kg: 980
mass_std_kg: 8
rotating_mass_fraction: 0.05
road_load:
  cda_m2: 0.69
  cda_std_m2: 0.02
  cla_m2: 0.15
  cla_std_m2: 0.05
  crr: 0.013
  crr_std: 0.001
performance:
  driven_axle_load_share: 0.55
  tyre_road_friction: 1.3
  driven_axle: rear
  cg_height_m: 0.42
  wheelbase_m: 2.40
  downforce_driven_share: 0.6
  full_load:
    speed_rpm: [2000, 4000, 6000, 7600, 8000]
    power_kw: [55, 125, 185, 203, 196]
  rev_limit_rpm: 8000
  gear_ratios: [3.10, 2.20, 1.70, 1.36, 1.13, 0.96]
  final_drive_ratio: 3.40
  tyre_radius_m: 0.31
  driveline_efficiency: 0.90
  shift_time_s: 0.10
"""


def test_performance_of_every_draw_equals_the_one_vehicle_result(tmp_path):
    # consistency check: the vectorized top speed and acceleration of N drawn vehicles
    # equal tractive.performance on each vehicle alone, in any chunk size
    from tractive.performance import performance_summary
    from tractive.spec import read_yaml
    from tractive.study import engine, modify
    from tractive.study.uncertainty import UNCERTAIN_PARAMS, expand, standard_normal_draws
    from tractive.vehicle import load_vehicle

    (tmp_path / "racer.yaml").write_text(RACER)
    veh = load_vehicle(tmp_path / "racer.yaml")
    nom, stds, cov = modify.nominal_params(veh, read_yaml(tmp_path / "racer.yaml"),
                                           air_density_kg_m3=1.18)
    rng = np.random.default_rng(8)
    n = 24
    z = {k: standard_normal_draws(rng, n) for k in UNCERTAIN_PARAMS + ("coef0", "coef1",
                                                                       "coef2")}
    ps, _ = expand(nom, stds, cov, z, n)
    whole = engine._performance(ps)
    chunked = engine._performance(ps, chunk_size=5)
    assert set(whole) == set(engine.PERFORMANCE_KEYS)
    for i in range(ps.size):
        one = performance_summary(ps.vehicle(i))
        for key in engine.PERFORMANCE_KEYS:
            assert whole[key][i] == pytest.approx(getattr(one, key), rel=1e-9, abs=1e-9)
            assert chunked[key][i] == whole[key][i]
    assert np.std(whole["top_speed_kmh"][1:]) > 0.1       # the draws differ


def test_top_speed_and_acceleration_carry_intervals(tmp_path):
    (tmp_path / "racer.yaml").write_text(RACER)
    (tmp_path / "study.yaml").write_text("""\
baseline: {vehicle: racer.yaml}
modifications:
  - name: wing
    changes: {cda_m2: +0.13, cda_std_m2: 0.03, cla_m2: +1.05}
driving:
  profiles: ["steady:100kmh:60s"]
uncertainty: {draws: 200, seed: 4}
""")
    res = run_study(tmp_path / "study.yaml")
    assert not any("nominal vehicle only" in w for w in res.warnings)
    row = res.row("wing", "steady:100kmh:60s")
    for key in ("top_speed_kmh", "accel_0_100_kmh_s", "accel_80_120_kmh_s"):
        assert row.interval_low[key] < row.metrics[key] < row.interval_high[key]
    # more drag costs top speed in every draw (common random numbers): the change
    # interval lies below zero
    assert row.change_high["top_speed_kmh"] < 0 and row.distinguishable["top_speed_kmh"]
