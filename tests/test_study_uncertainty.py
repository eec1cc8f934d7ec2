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
    # the sample 2.5/97.5 % quantiles scatter by about 1.5 % of the width at n = 20000
    assert width / (2 * z) == pytest.approx(sd_kwh, rel=0.05)
    # sampling error of the mean: sd / sqrt(n); allow 4 standard errors
    assert abs(row.mean["positive_energy_kwh"] - row.metrics["positive_energy_kwh"]) < \
        4 * sd_kwh / np.sqrt(n)
    # the tyre change is -15 % of Crr: its own spread is 0.15 m g d sd(Crr)
    tyres = res.row("tyres", "steady:90kmh:600s")
    c_width = tyres.change_high["positive_energy_kwh"] - tyres.change_low["positive_energy_kwh"]
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
