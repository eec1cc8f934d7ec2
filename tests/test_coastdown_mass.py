"""A road load measured at one mass, used by a vehicle of another mass."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tractive import api
from tractive.coastdown.mass import road_load_at_mass
from tractive.vehicle import load_vehicle

LOG = Path(__file__).resolve().parents[1] / "examples" / "coastdown" / "coastdown_log.csv"
M_TEST = 1380.0


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cdmass")
    report = api.coastdown([LOG], mass_kg=M_TEST, output=folder / "rl.yaml")
    api.coastdown([LOG], mass_kg=M_TEST, output=folder / "rl.json")
    return folder, report.result


def _vehicle(folder, name, mass_kg, rmf=None, block="rl.yaml"):
    extra = "" if rmf is None else f"rotating_mass_fraction: {rmf}\n"
    path = folder / f"{name}.yaml"
    path.write_text(f"name: {name}\nmass_kg: {mass_kg}\n{extra}"
                    f"road_load: {{from_coastdown: {block}}}\n")
    return load_vehicle(path)


@pytest.mark.parametrize("block", ["rl.yaml", "rl.json"])
def test_block_records_the_test_mass_and_fraction(written, block):
    folder, result = written
    rl = _vehicle(folder, "same" + block[3:], M_TEST, block=block).road_load
    assert rl.given["test_mass_kg"] == M_TEST
    assert rl.given["test_rotating_mass_fraction"] == result.rotating_mass_fraction


def test_rolling_terms_scale_with_mass_and_aero_stays(written):
    folder, result = written
    m_new = 1.1 * M_TEST
    veh = _vehicle(folder, "heavier", M_TEST)       # read at the test mass: unscaled
    rl, notes, warnings = road_load_at_mass(veh.road_load, m_new,
                                            veh.rotating_mass_fraction)
    ratio = m_new / M_TEST
    # rolling resistance proportional to the normal load (Wong, Theory of Ground Vehicles,
    # ch. 1; scaling a measured f0 and f1 by mass: common practice); drag independent of mass
    assert rl.f0_n == pytest.approx(result.f0_n * ratio, rel=1e-12)
    assert rl.f1_n_per_kmh == pytest.approx(result.f1_n_per_kmh * ratio, rel=1e-12)
    assert rl.f2_n_per_kmh2 == result.f2_n_per_kmh2
    # covariance of a linear map D x is D C D (JCGM 100:2008 eq. 13)
    d = np.diag([ratio, ratio, 1.0])
    assert np.allclose(rl.covariance, d @ result.covariance @ d, rtol=1e-12, atol=0)
    assert len(notes) == 1 and "f2 unchanged" in notes[0] and "common practice" in notes[0]
    assert warnings == ()
    # a vehicle file at the new mass gets the same road load when it is read, once
    heavy = _vehicle(folder, "heavier2", m_new)
    assert heavy.road_load.f0_n == pytest.approx(rl.f0_n, rel=1e-14)
    again, notes2, _ = road_load_at_mass(heavy.road_load, m_new, heavy.rotating_mass_fraction)
    assert again.f0_n == heavy.road_load.f0_n and notes2 == ()


def test_same_mass_is_left_alone(written):
    folder, result = written
    veh = _vehicle(folder, "same", M_TEST)
    rl, notes, warnings = road_load_at_mass(veh.road_load, veh.mass_kg,
                                            veh.rotating_mass_fraction)
    assert rl is veh.road_load and notes == () and warnings == ()


def test_another_rotating_mass_fraction_is_warned_about(written):
    folder, result = written
    veh = _vehicle(folder, "spinny", M_TEST, rmf=0.05)
    rl, notes, warnings = road_load_at_mass(veh.road_load, veh.mass_kg,
                                            veh.rotating_mass_fraction)
    assert rl.f0_n == veh.road_load.f0_n                # not changed: the user decides
    # coefficients = inertial mass x deceleration: (1 + 0.05) / (1 + 0.03) (Newton's law)
    assert len(warnings) == 1 and f"{1.05 / 1.03:.4g}" in warnings[0]


def test_a_block_without_test_mass_is_used_as_written(tmp_path):
    (tmp_path / "old.yaml").write_text("f0_n: 150.0\nf1_n_per_kmh: 0.5\nf2_n_per_kmh2: 0.03\n")
    veh = _vehicle(tmp_path, "legacy", 2000.0, block="old.yaml")
    rl, notes, warnings = road_load_at_mass(veh.road_load, veh.mass_kg,
                                            veh.rotating_mass_fraction)
    assert rl.f0_n == 150.0 and notes == () and warnings == ()
