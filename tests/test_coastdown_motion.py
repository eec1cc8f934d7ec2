"""Closed-form coasting, filter operators and the two-interval estimate.

Outside references: scipy.integrate.solve_ivp (numerical solution of the same
equation), scipy.signal.savgol_filter, numpy.interp, the 40 CFR 86.529-98
coast-down time table, and the closed-form derivation of the two-term model
(White and Korst, SAE 720099).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp
from scipy.signal import savgol_filter

from conftest import run_cli
from tractive.coastdown import coast_speed_ms, coast_time_s, two_interval_estimate
from tractive.coastdown.motion import (coast_speed_gradient, interpolation_operator,
                                       savgol_operator)
from tractive.errors import InputError

MASS = 1545.0
# (a N, b N/(m/s), c N/(m/s)^2): D = 4ac - b^2 positive, negative, zero, pure rolling,
# pure drag, and a large linear term
CASES = [(150.0, 1.8, 0.45), (150.0, 40.0, 0.01), (0.0, 0.0, 0.5), (100.0, 0.0, 0.0),
         (50.0, 30.0, 0.2), (9.0, 6.0, 1.0)]


@pytest.mark.parametrize("a,b,c", CASES)
def test_speed_solution_matches_solve_ivp(a, b, c):
    # reference: scipy.integrate.solve_ivp on m dv/dt = -(a + b v + c v^2)
    sol = solve_ivp(lambda t, v: -(a + b * v + c * v * v) / MASS, (0.0, 60.0), [30.0],
                    rtol=1e-12, atol=1e-12, dense_output=True)
    t = np.linspace(0.0, 60.0, 25)
    assert np.max(np.abs(coast_speed_ms(t, 30.0, a, b, c, MASS) - sol.sol(t)[0])) < 1e-8


@pytest.mark.parametrize("a,b,c", CASES)
def test_coast_time_is_the_integral_of_m_over_force(a, b, c):
    # reference: scipy.integrate.quad of m / F(v) (separation of variables)
    ref, _ = quad(lambda v: MASS / (a + b * v + c * v * v), 12.0, 30.0, epsabs=1e-12,
                  epsrel=1e-12)
    assert coast_time_s(30.0, 12.0, a, b, c, MASS) == pytest.approx(ref, rel=1e-10)


@pytest.mark.parametrize("mass,a_n,c_n,t_s", [
    (100, 0.0, 0.0224, 2.95), (150, 4.32, 0.0238, 3.99), (200, 8.69, 0.0252, 4.85),
    (300, 17.43, 0.0279, 6.18)])
def test_coast_time_reproduces_40_cfr_86_529_table(mass, a_n, c_n, t_s):
    # 40 CFR 86.529-98 road-load table: F = A + C V^2 (V in km/h); published coast
    # time 70 -> 60 km/h to 0.01 s. In SI: c = C * 3.6^2 N/(m/s)^2.
    t = coast_time_s(70 / 3.6, 60 / 3.6, a_n, 0.0, c_n * 3.6 ** 2, mass)
    assert t == pytest.approx(t_s, abs=0.02)


@pytest.mark.parametrize("a,b,c", CASES)
def test_gradient_matches_central_differences(a, b, c):
    # reference: central finite differences of the closed form (numerical identity)
    t = np.linspace(0.0, 50.0, 11)
    p = np.array([a, b, c, 28.0])
    _, grad = coast_speed_gradient(t, p[3], p[0], p[1], p[2], MASS)
    for i in range(4):
        h = 1e-5 * max(1.0, abs(p[i]))
        up, dn = p.copy(), p.copy()
        up[i] += h
        dn[i] -= h
        num = (coast_speed_ms(t, up[3], *up[:3], MASS)
               - coast_speed_ms(t, dn[3], *dn[:3], MASS)) / (2 * h)
        assert np.allclose(grad[:, i], num, rtol=1e-5, atol=1e-9)


@pytest.mark.parametrize("window,order,deriv", [(5, 2, 0), (7, 3, 0), (11, 2, 1), (9, 4, 1),
                                                (5, 1, 1)])
def test_savgol_operator_equals_scipy_filter(window, order, deriv):
    # reference: scipy.signal.savgol_filter(mode="interp")
    x = np.random.default_rng(3).normal(size=37)
    op = savgol_operator(37, window, order, deriv=deriv, delta=0.1)
    ref = savgol_filter(x, window, order, deriv=deriv, delta=0.1, mode="interp")
    assert np.allclose(op @ x, ref, rtol=1e-10, atol=1e-10)


def test_interpolation_operator_equals_numpy_interp():
    # reference: numpy.interp
    rng = np.random.default_rng(5)
    t = np.cumsum(rng.uniform(0.05, 0.3, 40))
    x = rng.normal(size=40)
    g = np.linspace(t[0], t[-1], 77)
    assert np.allclose(interpolation_operator(t, g) @ x, np.interp(g, t, x), atol=1e-14)


def _times_by_integration(mass_i, a, c_si, v1, v2, v3, v4):
    """Coast times between speeds [m/s] from solve_ivp events (independent of the closed form)."""
    def hit(target):
        ev = lambda t, v: v[0] - target  # noqa: E731
        ev.terminal = False
        return ev
    events = [hit(v) for v in (v1, v2, v3, v4)]
    sol = solve_ivp(lambda t, v: [-(a + c_si * v[0] ** 2) / mass_i], (0.0, 1000.0),
                    [v1 + 1.0], events=events, rtol=1e-12, atol=1e-12)
    te = [e[0] for e in sol.t_events]
    return te[1] - te[0], te[3] - te[2]


def test_two_interval_estimate_inverts_the_speed_time_solution():
    # White and Korst two-term model m dv/dt = -(A + B v^2): times from numerical
    # integration (solve_ivp), then the estimate must give A and B back.
    mass, rmf = 1400.0, 0.03
    a, f2_kmh = 140.0, 0.033
    c_si = f2_kmh * 3.6 ** 2
    t_hi, t_lo = _times_by_integration(mass * (1 + rmf), a, c_si, 110 / 3.6, 90 / 3.6,
                                       40 / 3.6, 20 / 3.6)
    est = two_interval_estimate(mass_kg=mass, rotating_mass_fraction=rmf, high_kmh=(110, 90),
                                high_time_s=t_hi, low_kmh=(40, 20), low_time_s=t_lo,
                                air_density_kg_m3=1.2)
    assert est.f0_n == pytest.approx(a, rel=1e-7)
    assert est.f2_n_per_kmh2 == pytest.approx(f2_kmh, rel=1e-7)
    # Crr = A / (m g) and CdA = B / (rho / 2): definitions
    assert est.crr == pytest.approx(a / (mass * 9.80665), rel=1e-7)
    assert est.cda_m2 == pytest.approx(c_si / 0.6, rel=1e-7)


def test_mean_deceleration_shortcut_error_shrinks_with_the_square_of_the_interval():
    # The shortcut takes the mean deceleration at the mean speed; for a smooth
    # deceleration curve its error is second order in the interval width
    # (midpoint rule), so halving the width should quarter the error.
    mass, a, c_si = 1400.0, 140.0, 0.033 * 12.96
    errors = []
    for half in (10.0, 5.0):
        hi, lo = (100 + half, 100 - half), (35 + half, 35 - half)
        t_hi = coast_time_s(hi[0] / 3.6, hi[1] / 3.6, a, 0.0, c_si, mass * 1.03)
        t_lo = coast_time_s(lo[0] / 3.6, lo[1] / 3.6, a, 0.0, c_si, mass * 1.03)
        est = two_interval_estimate(mass_kg=mass, high_kmh=hi, high_time_s=float(t_hi),
                                    low_kmh=lo, low_time_s=float(t_lo))
        errors.append(abs(est.mean_decel_f0_n - a))
        assert est.f0_n == pytest.approx(a, rel=1e-9)
    # midpoint-rule error order 2 (numerical analysis): ratio 1/4; ±0.05 is a
    # common-practice tolerance for the higher-order terms
    assert errors[1] / errors[0] == pytest.approx(0.25, abs=0.05)


def test_two_interval_estimate_refuses_impossible_times():
    with pytest.raises(InputError, match="time ratio"):
        # the 20 km/h drop from 110 km/h taking longer than the one from 40 km/h
        # would need negative drag
        two_interval_estimate(mass_kg=1400, high_kmh=(110, 90), high_time_s=30.0,
                              low_kmh=(40, 20), low_time_s=20.0)
    with pytest.raises(InputError, match="start speed"):
        two_interval_estimate(mass_kg=1400, high_kmh=(90, 110), high_time_s=5.0,
                              low_kmh=(40, 20), low_time_s=20.0)


def test_quick_command_json_matches_the_function():
    # consistency check (no outside reference): the command's JSON carries the library
    # result unchanged; the estimate itself is checked against solve_ivp above
    r = run_cli("coastdown-quick", "--mass-kg", "1400", "--high", "110", "90", "17.1",
                "--low", "40", "20", "47.1", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    est = two_interval_estimate(mass_kg=1400, high_kmh=(110, 90), high_time_s=17.1,
                                low_kmh=(40, 20), low_time_s=47.1)
    # consistency check: CLI output equals the library call
    assert data["f0_n"] == pytest.approx(est.f0_n, rel=1e-12)
    assert data["f2_n_per_kmh2"] == pytest.approx(est.f2_n_per_kmh2, rel=1e-12)
    # model definition: the estimate states its level-road assumption
    assert any("level road" in a for a in data["assumptions"])
