"""Speed logs as they come: any time and speed column, clock times, reading options
given once on the command line for every file a command reads.

References: the distance of a trace is the integral of its speed (trapezoidal rule,
numpy.trapezoid) — a consistency check of the reading, not of physics.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from conftest import run_cli

PHONE = """time,lat,lon,speed,bearing
23:59:55,51.0,0.1,0,90
23:59:56,51.0,0.1,5,90
23:59:57,51.0,0.1,10,90
23:59:58,51.0,0.1,15,90
23:59:59,51.0,0.1,18,90
00:00:00,51.0,0.1,20,90
00:00:01,51.0,0.1,20,90
00:00:02,51.0,0.1,15,90
00:00:03,51.0,0.1,5,90
00:00:04,51.0,0.1,0,90
"""
SPEEDS_KMH = [0, 5, 10, 15, 18, 20, 20, 15, 5, 0]


@pytest.fixture
def phone(tmp_path):
    path = tmp_path / "phone.csv"
    path.write_text(PHONE)
    return path


def test_a_phone_log_is_read_with_the_two_options(phone):
    done = run_cli("cycles", phone, "--time-column", "time", "--speed-column", "speed:kmh",
                   "--json")
    assert done.returncode == 0, done.stderr
    row = json.loads(done.stdout)["profiles"][0]
    # clock times roll over midnight: 10 samples 1 s apart
    assert row["duration_s"] == pytest.approx(9.0)
    expected_km = np.trapezoid(np.array(SPEEDS_KMH) / 3.6, dx=1.0) / 1000.0
    assert row["distance_km"] == pytest.approx(expected_km, rel=1e-12)


def test_without_the_options_the_error_lists_the_columns_and_the_mapping(phone):
    done = run_cli("energy", "examples/vehicles/hatchback.yaml", "-c", phone)
    assert done.returncode == 2
    line = done.stderr.strip()
    assert len(line.splitlines()) == 1
    assert "time, lat, lon, speed, bearing" in line and "--speed-column speed:kmh" in line


def test_compare_reads_the_study_files_with_the_options(phone, tmp_path):
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    study = tmp_path / "s.yaml"
    study.write_text(f"name: s\nbaseline:\n  vehicle: {root / 'examples/vehicles/hatchback.yaml'}"
                     f"\nmodifications:\n  - name: lighter\n    changes: {{mass_kg: -50}}\n"
                     f"driving:\n  profiles: [phone.csv*3]\nuncertainty: {{draws: 0}}\n")
    bad = run_cli("compare", study)
    assert bad.returncode == 2 and "--speed-column" in bad.stderr
    done = run_cli("compare", study, "--time-column", "time", "--speed-column", "speed:kmh",
                   "--json", "--smooth-s", "3")
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["profiles"][0]["distance_km"] > 0
