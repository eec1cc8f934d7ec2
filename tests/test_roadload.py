"""Road-load forms and their conversions."""

import numpy as np
import pytest

from tractive import units
from tractive.atmosphere import air_density_kg_m3, ambient_air, isa_pressure_pa
from tractive.roadload import RoadLoad, frontal_area_m2


def test_nist_exact_factors():
    # NIST SP 811 Appendix B: 1 lbf = 4.4482216152605 N; 1 mph = 0.44704 m/s;
    # 1 lb = 0.45359237 kg; 1 US gal = 3.785411784 L (all exact)
    assert units.LBF_N == pytest.approx(4.4482216152605, rel=0, abs=1e-13)
    assert units.MPH_MS == 0.44704
    assert units.MPH_MS * 3.6 == pytest.approx(1.609344, rel=1e-15)
    assert units.LB_KG == 0.45359237
    assert units.US_GALLON_L == 3.785411784
    # 40 CFR 1066.210 / ISO: standard gravity 9.80665 m/s² (exact)
    assert units.STANDARD_GRAVITY_MS2 == 9.80665


def test_lbf_per_mph_conversions_against_reference_table():
    # REFERENCE-VALUES.md, computed from the NIST exact factors:
    # 1 lbf/mph = 2.763997 N/(km/h); 1 lbf/mph² = 1.717468 N/(km/h)²
    c = RoadLoad.from_dyno(1.0, 1.0, 1.0).coastdown_coefficients()
    assert c["f0_n"] == pytest.approx(4.4482216152605, rel=1e-14)
    assert c["f1_n_per_kmh"] == pytest.approx(2.763997, abs=5e-7)
    assert c["f2_n_per_kmh2"] == pytest.approx(1.717468, abs=5e-7)
    # and the same figures from the definitions directly (NIST SP 811)
    assert c["f1_n_per_kmh"] == pytest.approx(4.4482216152605 / 1.609344, rel=1e-14)
    assert c["f2_n_per_kmh2"] == pytest.approx(4.4482216152605 / 1.609344 ** 2, rel=1e-14)


@pytest.mark.parametrize("f", [(130.0, 0.40, 0.032), (95.2, 0.0, 0.0251), (210.0, -0.5, 0.05)])
def test_round_trip_coastdown_dyno(f):
    # exact linear maps: GTR 15 → 40 CFR 1066 → GTR 15 returns the input (physical identity)
    rl = RoadLoad.from_coastdown(*f)
    abc = rl.dyno_coefficients()
    back = RoadLoad.from_dyno(abc["a_lbf"], abc["b_lbf_per_mph"], abc["c_lbf_per_mph2"])
    got = back.coastdown_coefficients()
    assert got["f0_n"] == pytest.approx(f[0], rel=1e-14)
    assert got["f1_n_per_kmh"] == pytest.approx(f[1], rel=1e-13, abs=1e-15)
    assert got["f2_n_per_kmh2"] == pytest.approx(f[2], rel=1e-13)


def test_three_forms_give_the_same_force():
    # physical form: F = Crr m g + ½ ρ CdA v² (road-load equation, Gillespie ch. 4)
    mass, crr, cda, rho = 1450.0, 0.0095, 0.68, 1.2
    phys = RoadLoad.from_physical(mass_kg=mass, crr=crr, cda_m2=cda, air_density_kg_m3=rho)
    f0 = crr * mass * 9.80665
    f2_kmh = 0.5 * rho * cda / 3.6 ** 2
    coast = RoadLoad.from_coastdown(f0, 0.0, f2_kmh)
    abc = coast.dyno_coefficients()
    dyno = RoadLoad.from_dyno(abc["a_lbf"], abc["b_lbf_per_mph"], abc["c_lbf_per_mph2"])
    v = np.linspace(0, 50, 101)
    expected = f0 + 0.5 * rho * cda * v ** 2
    np.testing.assert_allclose(phys.force_n(v), expected, rtol=1e-14)
    np.testing.assert_allclose(coast.force_n(v), expected, rtol=1e-13)
    np.testing.assert_allclose(dyno.force_n(v), expected, rtol=1e-13)


def test_downforce_adds_rolling_resistance():
    # downforce ½ρClA v² adds to wheel load; rolling force = Crr × load (Gillespie ch. 4)
    base = RoadLoad.from_physical(mass_kg=1000, crr=0.012, cda_m2=0.8, air_density_kg_m3=1.225)
    wing = RoadLoad.from_physical(mass_kg=1000, crr=0.012, cda_m2=0.8, air_density_kg_m3=1.225,
                                  cla_m2=1.5)
    v = 40.0
    extra = wing.rolling_force_n(v) - base.rolling_force_n(v)
    assert extra == pytest.approx(0.012 * 0.5 * 1.225 * 1.5 * v * v, rel=1e-14)
    assert wing.aero_force_n(v) == base.aero_force_n(v)


def test_speed_dependent_rolling_term():
    # Crr(v) = crr + k·v_kmh on the static load; e.g. k = 0.01/160 gives the classic
    # f_r = 0.01 (1 + V/160) (Wong, Theory of Ground Vehicles, from memory)
    rl = RoadLoad.from_physical(mass_kg=1200, crr=0.01, crr_per_kmh=0.01 / 160,
                                cda_m2=0.7, air_density_kg_m3=1.2)
    v_kmh = 100.0
    assert rl.rolling_force_n(v_kmh / 3.6) == pytest.approx(
        0.01 * (1 + v_kmh / 160) * 1200 * 9.80665, rel=1e-13)


def test_vehicle_axis_broadcasts():
    # the GTR 15 Annex 4 polynomial per vehicle, with the exact km/h → m/s factors
    # (1 N/(km/h) = 3.6 N/(m/s); 1 N/(km/h)² = 12.96 N/(m/s)²)
    rl = RoadLoad.from_coastdown(np.array([100.0, 120.0]), np.array([0.0, 0.1]),
                                 np.array([0.03, 0.04]))
    v = np.array([0.0, 10.0, 20.0])
    f = rl.force_n(v)
    assert f.shape == (2, 3)
    np.testing.assert_allclose(f[1], 120 + 0.1 * 3.6 * v + 0.04 * 12.96 * v ** 2)


def test_isa_sea_level_and_density():
    # ICAO Doc 7488 / US Standard Atmosphere 1976: 288.15 K, 101325 Pa, 1.225 kg/m³
    assert float(air_density_kg_m3(15.0, 101325.0)) == pytest.approx(1.225, abs=5e-4)
    # SAE J2263 reference state 20 °C, 98.21 kPa → 1.1671 kg/m³ (REFERENCE-VALUES.md, computed)
    assert float(air_density_kg_m3(20.0, 98210.0)) == pytest.approx(1.1671, abs=1e-4)
    # US Standard Atmosphere 1976 table: 1000 m → 89 875 Pa, 2000 m → 79 495 Pa (from memory)
    assert float(isa_pressure_pa(1000.0)) == pytest.approx(89875, rel=2e-4)
    assert float(isa_pressure_pa(2000.0)) == pytest.approx(79495, rel=2e-4)
    air = ambient_air(altitude_m=1000.0)
    # US Standard Atmosphere 1976: density at 1000 m = 1.1117 kg/m³ (from memory)
    assert air["density_kg_m3"] == pytest.approx(1.1117, abs=5e-4)


def test_frontal_area_factor():
    # frontal area ≈ factor × width × height, factor 0.80-0.85 for cars (common practice,
    # REFERENCE-VALUES.md); the default lies in that band and an explicit factor is used as is
    from tractive.roadload import DEFAULT_FRONTAL_AREA_FACTOR
    assert 0.80 <= DEFAULT_FRONTAL_AREA_FACTOR <= 0.85
    assert float(frontal_area_m2(1.8, 1.5, 0.8)) == pytest.approx(0.8 * 1.8 * 1.5, rel=1e-15)
