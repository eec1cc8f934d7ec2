"""The road-load block a coast-down fit writes carries the air density its f2 holds at."""

from pathlib import Path

import pytest

from tractive.atmosphere import air_density_kg_m3
from tractive.coastdown import analyze_coastdown
from tractive.coastdown.output import write_road_load_yaml
from tractive.vehicle import load_vehicle

LOG = Path(__file__).resolve().parents[1] / "examples" / "coastdown" / "coastdown_log.csv"


@pytest.fixture(scope="module")
def corrected():
    return analyze_coastdown([LOG], mass_kg=1380.0, reference="gtr15")


def test_corrected_block_states_the_reference_density(corrected):
    # GTR 15 Annex 4 reference state 293 K, 100 kPa (from memory, REFERENCE-VALUES.md);
    # density by the ideal-gas law ρ = p / (R T), R = 287.05 J/(kg K) (ICAO Doc 7488)
    block = corrected.road_load_block()
    assert block["reference_air_density_kg_m3"] == pytest.approx(100000 / (287.05 * 293.0),
                                                                 rel=1e-4)


def test_uncorrected_block_states_the_test_density():
    # without correction f2 holds at the air of the test: the log's mean temperature and
    # pressure through the ideal-gas law
    res = analyze_coastdown([LOG], mass_kg=1380.0, reference="none")
    info = res.corrections
    expected = float(air_density_kg_m3(info["test_temperature_c"], info["test_pressure_pa"]))
    assert res.road_load_block()["reference_air_density_kg_m3"] == pytest.approx(expected,
                                                                                 rel=1e-12)


def test_block_file_is_read_back_with_its_density(corrected, tmp_path):
    out = tmp_path / "rl.yaml"
    write_road_load_yaml(corrected, out, inputs=[LOG])
    car = tmp_path / "car.yaml"
    car.write_text("name: c\nmass_kg: 1380\nroad_load: {from_coastdown: rl.yaml}\n")
    v = load_vehicle(car)
    assert v.road_load.reference_air_density_kg_m3 == pytest.approx(
        corrected.road_load_block()["reference_air_density_kg_m3"], rel=1e-12)
    assert v.road_load.f2_n_per_kmh2 == pytest.approx(corrected.f2_n_per_kmh2, rel=1e-12)
