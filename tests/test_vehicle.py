"""Vehicle files: the three road-load forms, air density, and located errors."""

import textwrap

import numpy as np
import pytest

from tractive.errors import InputError
from tractive.vehicle import load_vehicle


def write(tmp_path, text, name="v.yaml"):
    p = tmp_path / name
    p.write_text(textwrap.dedent(text))
    return p


BASE = """\
name: Test car
mass_kg: 1450
rotating_mass_fraction: 0.03
road_load:
  f0_n: 130.0
  f1_n_per_kmh: 0.40
  f2_n_per_kmh2: 0.032
"""


def test_coefficient_form(tmp_path):
    # reading check: the values written come back in GTR 15 units; inertial mass is
    # m (1 + fraction) by its definition (GTR 15 / SAE J2263 rotating-mass allowance)
    v = load_vehicle(write(tmp_path, BASE))
    assert v.mass_kg == 1450
    assert v.inertial_mass_kg == pytest.approx(1450 * 1.03)
    c = v.resistance().coastdown_coefficients()
    assert c == pytest.approx({"f0_n": 130.0, "f1_n_per_kmh": 0.40, "f2_n_per_kmh2": 0.032})


def test_dyno_form_matches_coefficients(tmp_path):
    # 40 CFR 1066 A/B/C in lbf units; NIST SP 811 factors make this exact
    a, b, c = 130.0 / 4.4482216152605, 0.40 / 2.7639973, 0.032 / 1.7174677
    v = load_vehicle(write(tmp_path, f"""\
        name: Dyno car
        mass_kg: 1450
        road_load: {{a_lbf: {a!r}, b_lbf_per_mph: {b!r}, c_lbf_per_mph2: {c!r}}}
        """))
    got = v.resistance().coastdown_coefficients()
    assert got["f0_n"] == pytest.approx(130.0, rel=1e-12)
    assert got["f1_n_per_kmh"] == pytest.approx(0.40, rel=1e-6)
    assert got["f2_n_per_kmh2"] == pytest.approx(0.032, rel=1e-6)


def test_physical_forms_of_drag_area(tmp_path):
    common = "name: P\nmass_kg: 1000\nroad_load:\n  crr: 0.01\n  air_density_kg_m3: 1.2\n"
    a = load_vehicle(write(tmp_path, common + "  cda_m2: 0.66\n", "a.yaml"))
    b = load_vehicle(write(tmp_path, common + "  cd: 0.30\n  frontal_area_m2: 2.2\n", "b.yaml"))
    c = load_vehicle(write(tmp_path, common + "  cd: 0.30\n  width_m: 1.8\n  height_m: 1.5\n"
                           "  frontal_area_factor: 0.8148148148148148\n", "c.yaml"))
    for v in (a, b, c):
        assert v.road_load.cda_m2 == pytest.approx(0.66, rel=1e-12)
        # f0 = Crr m g (road-load equation); f2 = ½ ρ CdA / 3.6² in N/(km/h)²
        co = v.resistance().coastdown_coefficients()
        assert co["f0_n"] == pytest.approx(0.01 * 1000 * 9.80665)
        assert co["f2_n_per_kmh2"] == pytest.approx(0.5 * 1.2 * 0.66 / 12.96)


def test_default_air_is_isa_sea_level(tmp_path):
    v = load_vehicle(write(tmp_path, "name: P\nmass_kg: 1000\nroad_load: {crr: 0.01, cda_m2: 0.6}\n"))
    # ICAO standard atmosphere sea level: 1.225 kg/m³
    assert v.road_load.air_density_kg_m3 == pytest.approx(1.225, abs=5e-4)
    assert "ISA" in v.road_load.air_basis


def test_air_from_temperature_and_pressure(tmp_path):
    v = load_vehicle(write(tmp_path, "name: P\nmass_kg: 1000\nroad_load: {crr: 0.01, cda_m2: 0.6,"
                           " air_temperature_c: 20, air_pressure_pa: 98210}\n"))
    # SAE J2263 reference state → 1.1671 kg/m³ (REFERENCE-VALUES.md, computed)
    assert v.road_load.air_density_kg_m3 == pytest.approx(1.1671, abs=1e-4)


@pytest.mark.parametrize("text, field, line, words", [
    (BASE.replace("mass_kg: 1450", "mass_kg: -5"), "mass_kg", 2, "greater than 0"),
    (BASE.replace("mass_kg: 1450", "mass_kg: .nan"), "mass_kg", 2, "NaN"),
    (BASE.replace("mass_kg: 1450", "mass_kg: heavy"), "mass_kg", 2, "must be a number"),
    (BASE.replace("mass_kg: 1450\n", ""), "mass_kg", None, "missing"),
    (BASE.replace("f0_n", "fo_n"), "road_load.f0_n", 5, "is 'fo_n' a misspelling"),
    (BASE + "colour: red\n", "colour", 8, "unknown key"),
    (BASE.replace("  f2_n_per_kmh2: 0.032\n", "  f2_n_per_kmh2: 0.032\n  cda_m2: 0.6\n"),
     "road_load", 4, "only one"),
    (BASE.replace("f2_n_per_kmh2: 0.032", "f2_n_per_kmh2: [1, 2]"), "road_load.f2_n_per_kmh2",
     7, "must be a number"),
])
def test_errors_name_file_field_and_line(tmp_path, text, field, line, words):
    p = write(tmp_path, text)
    with pytest.raises(InputError) as exc:
        load_vehicle(p)
    e = exc.value
    assert e.file == str(p)
    assert e.field == field
    if line is not None:
        assert e.line == line
    assert words in str(e)
    assert "\n" not in str(e)


def test_malformed_yaml_and_missing_file(tmp_path):
    p = write(tmp_path, "name: x\nmass_kg: [1, 2\n")
    with pytest.raises(InputError) as exc:
        load_vehicle(p)
    assert str(p) in str(exc.value) and "YAML" in str(exc.value)
    with pytest.raises(InputError, match="file not found"):
        load_vehicle(tmp_path / "nope.yaml")


def test_covariance_is_checked(tmp_path):
    bad = BASE + "  covariance: [[1, 0, 0], [0, 1, 0]]\n"
    with pytest.raises(InputError, match="3×3"):
        load_vehicle(write(tmp_path, bad))
    good = BASE + "  f0_std_n: 4.0\n  f2_std_n_per_kmh2: 0.001\n"
    v = load_vehicle(write(tmp_path, good, "g.yaml"))
    np.testing.assert_allclose(np.diag(v.road_load.covariance), [16.0, 0.0, 1e-6])


def test_exponent_without_dot_is_a_number(tmp_path):
    # YAML 1.2 core schema (yaml.org, 2009): 1e-5 is a float (YAML 1.1 read it as text)
    v = load_vehicle(write(tmp_path, "name: P\nmass_kg: 1.2e3\nroad_load: {crr: 9e-3, "
                           "crr_per_kmh: 1e-5, cda_m2: 0.6}\n"))
    assert v.mass_kg == 1200.0
    assert v.road_load.crr == 0.009 and v.road_load.crr_per_kmh == 1e-5
