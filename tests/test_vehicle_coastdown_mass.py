"""A vehicle that reads a coast-down road load at another mass.

References: rolling resistance proportional to the normal load (Wong, Theory of
Ground Vehicles, 4th ed., ch. 1: F_r = f_r · W); aerodynamic drag independent of
mass; scaling the rolling terms by m / m_test is common practice for a measured
road load carried to another mass.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import run_cli
from tractive.vehicle import load_vehicle

ROOT = Path(__file__).resolve().parents[1]
LOG = ROOT / "examples" / "coastdown" / "coastdown_log.csv"


@pytest.fixture(scope="module")
def block(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cd")
    out = folder / "road_load.yaml"
    done = run_cli("coastdown", LOG, "--mass-kg", "1380", "-o", out)
    assert done.returncode == 0, done.stderr
    return out


def _vehicle(tmp_path, block, mass, rmf=0.03):
    path = tmp_path / "v.yaml"
    path.write_text(f"name: v\nmass_kg: {mass}\nrotating_mass_fraction: {rmf}\n"
                    f"road_load:\n  from_coastdown: {block}\n")
    return load_vehicle(path)


def test_rolling_terms_scale_with_mass_and_aero_does_not(tmp_path, block):
    same = _vehicle(tmp_path, block, 1380)
    heavy = _vehicle(tmp_path, block, 1518)
    ratio = 1518 / 1380
    assert heavy.road_load.f0_n == pytest.approx(same.road_load.f0_n * ratio, rel=1e-14)
    assert heavy.road_load.f1_n_per_kmh == pytest.approx(same.road_load.f1_n_per_kmh * ratio,
                                                         rel=1e-14)
    assert heavy.road_load.f2_n_per_kmh2 == same.road_load.f2_n_per_kmh2
    assert same.notes == () and same.warnings == ()
    assert any("scaled by 1.1" in n and "common practice" in n for n in heavy.notes)


def test_another_rotating_mass_fraction_is_warned(tmp_path, block):
    v = _vehicle(tmp_path, block, 1380, rmf=0.05)
    assert v.warnings and "rotating-mass fraction" in v.warnings[0]
    text = json.dumps(v.to_dict())
    assert "rotating-mass fraction" in text


def test_the_note_reaches_energy_and_studies(tmp_path, block):
    v = tmp_path / "heavy.yaml"
    v.write_text(f"name: heavy\nmass_kg: 1600\nroad_load:\n  from_coastdown: {block}\n")
    done = run_cli("energy", v, "-c", "udds")
    assert done.returncode == 0 and "note: road load from" in done.stdout
    study = tmp_path / "s.yaml"
    study.write_text(f"name: s\nbaseline:\n  vehicle: {v.name}\nmodifications:\n"
                     "  - name: lighter\n    changes: {mass_kg: -50}\n"
                     "driving:\n  profiles: [udds]\nuncertainty: {draws: 0}\n")
    data = json.loads(run_cli("compare", study, "--json").stdout)
    assert any("scaled by" in w for w in data["warnings"])
