"""Coast-down settings: one checked place for every option; fits report how they ended."""

from __future__ import annotations

import math

import numpy as np
import pytest

from test_coastdown import MASS, TRUTH, as_log, simulate
from tractive.coastdown import (CoastdownSettings, DetectionSettings, FitSettings, TestVehicle,
                                analyze_coastdown)
from tractive.errors import InputError


@pytest.fixture(scope="module")
def log():
    return as_log(simulate(pairs=2, rate_hz=2.0), seed=3)


def test_flat_options_and_settings_give_the_same_result(log):
    flat = analyze_coastdown([log], mass_kg=MASS, reference="none", combine="pairs")
    settings = CoastdownSettings.from_options(mass_kg=MASS, reference="none", combine="pairs")
    nested = analyze_coastdown([log], settings)
    # identical inputs through two doors: the same floating-point numbers (numpy equality)
    assert np.array_equal(flat.coefficients, nested.coefficients)
    assert np.array_equal(flat.covariance, nested.covariance)
    assert settings.fit.combine == "pairs" and settings.vehicle.mass_kg == MASS
    assert settings.options()["combine"] == "pairs"
    changed = analyze_coastdown([log], settings, combine="joint")
    assert changed.combine == "joint"


@pytest.mark.parametrize("make, field", [
    (lambda: TestVehicle(mass_kg=math.nan), "mass_kg"),
    (lambda: TestVehicle(mass_kg=1500, mass_std_kg=1500), "mass_std_kg"),
    (lambda: TestVehicle(mass_kg=1500, frontal_area_m2=0.0), "frontal_area_m2"),
    (lambda: FitSettings(method="newton"), "method"),
    (lambda: FitSettings(terms=4), "terms"),
    (lambda: FitSettings(xtol=0.0), "xtol"),
    (lambda: FitSettings(gtol=math.inf), "gtol"),
    (lambda: FitSettings(max_nfev_per_parameter=0), "max_nfev_per_parameter"),
    (lambda: DetectionSettings(speed_window_kmh=(100.0, 20.0)), "speed_window_kmh"),
    (lambda: DetectionSettings(min_span_kmh=200.0), "min_span_kmh"),
    (lambda: CoastdownSettings.from_options(mass_kg=1500, reference="nedc"), "reference"),
])
def test_each_setting_is_checked_when_made(make, field):
    with pytest.raises(InputError) as err:
        make()
    assert err.value.field == field


def test_unknown_option_is_a_programming_error():
    with pytest.raises(TypeError, match="unknown coast-down option 'mas_kg'"):
        CoastdownSettings.from_options(mass_kg=1500, mas_kg=1400)


def test_fit_reports_success_message_and_evaluations(log):
    res = analyze_coastdown([log], mass_kg=MASS, reference="none")
    fit = res.fit
    assert fit.success is True and fit.nfev > 0 and isinstance(fit.message, str)
    dec = analyze_coastdown([log], mass_kg=MASS, reference="none", method="deceleration")
    assert dec.fit.success and dec.fit.nfev == 0       # closed-form regression


def test_solver_tolerances_reach_the_solver(log):
    # scipy.optimize.least_squares stops at max_nfev evaluations with status 0 ("The
    # maximum number of function evaluations is exceeded."): one evaluation per parameter
    # with tolerances near machine precision is too few for this nonlinear fit, so it must
    # report no success and say so.
    res = analyze_coastdown([log], mass_kg=MASS, reference="none", max_nfev_per_parameter=1,
                            xtol=1e-15, ftol=1e-15, gtol=1e-15)
    assert res.fit.success is False
    assert "function evaluations" in res.fit.message
    assert any("stopped before converging" in n for n in res.notes)
    # loose tolerances stop earlier than the default ones, with fewer evaluations
    tight = analyze_coastdown([log], mass_kg=MASS, reference="none")
    loose = analyze_coastdown([log], mass_kg=MASS, reference="none", xtol=1e-3, ftol=1e-3,
                              gtol=1e-3)
    assert loose.fit.nfev < tight.fit.nfev
    # both still near the generated truth (solve_ivp log; 3 %: common practice)
    assert loose.f2_n_per_kmh2 == pytest.approx(TRUTH[2], rel=0.03)
