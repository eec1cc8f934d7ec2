"""Wheel energy (UN GTR No. 15 Annex 7) against exact identities and scipy."""

import numpy as np
import pytest
from scipy import integrate

from tractive.demand import wheel_demand
from tractive.roadload import RoadLoad

F0, F1, F2 = 130.0, 0.40, 0.032          # N, N/(km/h), N/(km/h)² (invented example)
MASS, RMF = 1450.0, 0.03


def _rl():
    return RoadLoad.from_coastdown(F0, F1, F2)


@pytest.mark.parametrize("v_kmh", [20.0, 50.0, 90.0, 130.0])
def test_constant_speed_energy_per_distance_equals_road_load(v_kmh):
    # at constant speed on a level road, energy per distance is exactly
    # f0 + f1 v + f2 v² (GTR 15 Annex 4 road-load equation; work = force × distance)
    t = np.arange(0.0, 601.0)
    v = np.full_like(t, v_kmh / 3.6)
    d = wheel_demand(_rl(), MASS, MASS * (1 + RMF), t, v)
    force = F0 + F1 * v_kmh + F2 * v_kmh ** 2
    assert float(d.positive_energy_j) / d.distance_m == pytest.approx(force, rel=1e-12)
    assert float(d.negative_energy_j) == 0.0
    assert not np.signbit(d.negative_energy_j)          # reported as 0.0, not -0.0
    assert float(d.components_j["inertia"]) == 0.0
    assert float(d.components_j["rolling"]) / d.distance_m == pytest.approx(F0 + F1 * v_kmh,
                                                                             rel=1e-12)
    assert float(d.components_j["aero"]) / d.distance_m == pytest.approx(F2 * v_kmh ** 2,
                                                                          rel=1e-12)


def _trace(seed=3, n=900):
    """An invented stop-and-go trace, 1 Hz, starting and ending at rest."""
    rng = np.random.default_rng(seed)
    t = np.arange(float(n))
    v = np.clip(np.cumsum(rng.normal(0, 0.6, n)), 0, None)
    v = np.convolve(v, np.ones(5) / 5, mode="same")
    v[:3] = 0
    v[-3:] = 0
    return t, v


def test_net_energy_identity():
    # positive − negative = Σ road-load·d + m_inertial (v_end² − v_0²)/2 + m g Σ sin θ·d:
    # the inertia term telescopes, Σ m a v̄ Δt = m (v_end² − v_0²)/2 (work-energy theorem);
    # the road-load and climb sums are written out here from the raw trace
    t, v = _trace()
    grade = 0.03 * np.sin(t / 60.0)
    d = wheel_demand(_rl(), MASS, MASS * 1.03, t, v, grade)
    v_mid_kmh = 1.8 * (v[1:] + v[:-1])                  # mean speed of each second [km/h]
    dist_m = 0.5 * (v[1:] + v[:-1]) * np.diff(t)
    road = np.sum((F0 + F1 * v_mid_kmh + F2 * v_mid_kmh ** 2) * dist_m)
    g_mid = 0.5 * (grade[1:] + grade[:-1])
    climb = np.sum(MASS * 9.80665 * np.sin(np.arctan(g_mid)) * dist_m)
    ke = 0.5 * MASS * 1.03 * (v[-1] ** 2 - v[0] ** 2)
    net = float(d.positive_energy_j - d.negative_energy_j)
    assert net == pytest.approx(road + climb + ke, rel=1e-12)
    assert float(d.negative_energy_j) > 0.0


def test_components_add_up_to_positive_energy():
    t, v = _trace(seed=5)
    grade = np.where(t > 400, -0.04, 0.02)
    d = wheel_demand(_rl(), MASS, MASS * 1.03, t, v, grade)
    total = sum(float(x) for x in d.components_j.values())
    assert total == pytest.approx(float(d.positive_energy_j), rel=1e-12)


def test_matches_scipy_integration_of_the_same_force_model():
    # independent integration with scipy.integrate.quad of max(F(t), 0)·v(t) over the
    # piecewise-linear trace (constant acceleration in each interval, as GTR 15 Annex 7
    # assumes); the Annex 7 sum evaluates F at the interval's mean speed, so the two agree
    # to second order in the step (within 1 % on a 1 Hz trace)
    t, v = _trace(seed=11)
    rl = _rl()
    m_i = MASS * 1.03
    d = wheel_demand(rl, MASS, m_i, t, v)

    def power(tt):
        i = min(int(np.searchsorted(t, tt, side="right")) - 1, len(t) - 2)
        a = (v[i + 1] - v[i]) / (t[i + 1] - t[i])
        vv = v[i] + a * (tt - t[i])
        f = float(rl.force_n(vv)) + m_i * a
        return max(f, 0.0) * vv

    total = 0.0
    for i in range(len(t) - 1):
        total += integrate.quad(power, t[i], t[i + 1], epsabs=1e-9, limit=20)[0]
    assert float(d.positive_energy_j) == pytest.approx(total, rel=0.01)


def test_vehicle_axis_matches_single_runs():
    # consistency, not an outside reference: a vehicle axis is a batch of independent
    # vehicles, so each entry must equal a single-vehicle run
    t, v = _trace(seed=2)
    f0 = np.array([110.0, 130.0, 150.0])
    f2 = np.array([0.028, 0.032, 0.036])
    mass = np.array([1300.0, 1450.0, 1600.0])
    rl = RoadLoad.from_coastdown(f0, np.full(3, F1), f2)
    many = wheel_demand(rl, mass, mass * 1.03, t, v)
    assert many.positive_energy_j.shape == (3,)
    for k in range(3):
        one = wheel_demand(RoadLoad.from_coastdown(f0[k], F1, f2[k]), mass[k], mass[k] * 1.03,
                           t, v)
        assert float(one.positive_energy_j) == many.positive_energy_j[k]
        assert float(one.negative_energy_j) == many.negative_energy_j[k]


def _fleet(n, seed=7):
    """Invented coefficient spread: ±40 % road load, some negative f1 (common in fits)."""
    rng = np.random.default_rng(seed)
    f0 = F0 * rng.uniform(0.6, 1.4, n)
    f1 = rng.uniform(-0.3, 0.8, n)
    f2 = F2 * rng.uniform(0.6, 1.4, n)
    mass = MASS * rng.uniform(0.7, 1.5, n)
    return f0, f1, f2, mass


def test_each_vehicle_alone_equals_its_entry_in_a_batch_of_20000():
    # consistency, not an outside reference: a vehicle's result must not depend on
    # the batch it is computed in, to the last bit (WLTC class 3b, hilly road)
    from tractive.profiles import load_cycle
    prof = load_cycle("wltc3b")
    grade = 0.04 * np.sin(prof.time_s / 90.0)
    f0, f1, f2, mass = _fleet(20000)
    many = wheel_demand(RoadLoad.from_coastdown(f0, f1, f2), mass, mass * 1.03, prof.time_s,
                        prof.speed_ms, grade)
    for k in (0, 1, 777, 12345, 19999):
        one = wheel_demand(RoadLoad.from_coastdown(f0[k], f1[k], f2[k]), mass[k],
                           mass[k] * 1.03, prof.time_s, prof.speed_ms, grade)
        assert float(one.positive_energy_j) == many.positive_energy_j[k]
        assert float(one.negative_energy_j) == many.negative_energy_j[k]
        for name in one.components_j:
            assert float(one.components_j[name]) == many.components_j[name][k], name
        assert np.array_equal(one.force_n, many.force_n[k])


def test_energies_equal_correctly_rounded_sums_of_the_force():
    # math.fsum gives the correctly rounded sum (Shewchuk's algorithm): the energies
    # must equal Σ max(F, 0)·d and Σ max(−F, 0)·d over the intervals to rounding
    import math
    t, v = _trace(seed=9)
    grade = np.where(t > 450, -0.03, 0.05)
    f0, f1, f2, mass = _fleet(40, seed=3)
    d = wheel_demand(RoadLoad.from_coastdown(f0, f1, f2), mass, mass * 1.03, t, v, grade)
    dist = d.intervals.distance_m
    for k in range(40):
        force = d.force_n[k]
        pos = math.fsum(np.where(force > 0, force * dist, 0.0))
        neg = math.fsum(np.where(force < 0, -force * dist, 0.0))
        assert float(d.positive_energy_j[k]) == pytest.approx(pos, rel=1e-12)
        assert float(d.negative_energy_j[k]) == pytest.approx(neg, rel=1e-12)


def test_force_is_computed_only_when_read():
    # F = f0 + f1 v + f2 v² + m_inertial a + m g sin θ (GTR 15 Annex 7 with grade term)
    t, v = _trace(seed=4)
    grade = 0.02 * np.cos(t / 40.0)
    d = wheel_demand(_rl(), MASS, MASS * 1.03, t, v, grade)
    assert "force_n" not in vars(d)
    iv = d.intervals
    v_kmh = iv.speed_ms * 3.6
    expected = (F0 + F1 * v_kmh + F2 * v_kmh ** 2 + MASS * 1.03 * iv.accel_ms2
                + MASS * 9.80665 * iv.sin_grade)
    np.testing.assert_allclose(d.force_n, expected, rtol=1e-12, atol=1e-9)
    assert "force_n" in vars(d)


def test_grade_uses_test_mass_and_acceleration_uses_inertial_mass():
    # F = m_inertial a + m g sin θ (GTR 15 Annex 7 with grade term)
    t = np.array([0.0, 1.0])
    v = np.array([10.0, 11.0])
    g = np.array([0.1, 0.1])
    zero = RoadLoad(0.0, 0.0, 0.0)
    d = wheel_demand(zero, 1000.0, 1100.0, t, v, g)
    assert float(d.force_parts_n["inertia"][0]) == pytest.approx(1100.0)
    assert float(d.force_parts_n["grade"][0]) == pytest.approx(1000 * 9.80665 * 0.1 / np.sqrt(1.01))


def test_a_trace_changed_in_place_is_computed_again():
    # consistency, not an outside reference: the per-trace work kept between calls
    # must follow the samples, so a speed array edited in place gives the result of
    # a fresh copy, and the kept interval arrays cannot be written
    t, v = _trace(seed=5)
    first = wheel_demand(_rl(), MASS, MASS * 1.03, t, v)
    again = wheel_demand(_rl(), MASS, MASS * 1.03, t, v)
    assert float(again.positive_energy_j) == float(first.positive_energy_j)
    v[100:200] += 1.0
    edited = wheel_demand(_rl(), MASS, MASS * 1.03, t, v)
    fresh = wheel_demand(_rl(), MASS, MASS * 1.03, t.copy(), v.copy())
    assert float(edited.positive_energy_j) == float(fresh.positive_energy_j)
    assert float(edited.positive_energy_j) != float(first.positive_energy_j)
    assert edited.distance_m == fresh.distance_m != first.distance_m
    with pytest.raises(ValueError):
        edited.intervals.speed_ms[0] = 1.0
