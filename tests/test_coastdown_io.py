"""Coast-down command, files and corrections: one-line errors, outputs that a
vehicle or study file accepts, reference-condition factors, GPX input and the
bundled example.

Outside references are named beside each check.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import yaml
from scipy import stats

from conftest import run_cli
from test_coastdown import MASS, TRUTH, as_log, simulate
from tractive.coastdown import analyze_coastdown, correction_factors, read_coastdown_log
from tractive.coastdown.corrections import REFERENCE_STATES
from tractive.errors import InputError
from tractive.vehicle import load_vehicle

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "coastdown" / "coastdown_log.csv"


def run(*args, cwd=None):
    """The command in-process (conftest.run_cli)."""
    return run_cli(*args, cwd=cwd)


def run_process(*args, cwd=None):
    """The command as its own process (end-to-end smoke test only)."""
    return subprocess.run([sys.executable, "-m", "tractive", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


@pytest.fixture(scope="module")
def csv_log(tmp_path_factory):
    sim = simulate(pairs=2, rate_hz=2.0)
    log = as_log(sim, seed=21)
    path = tmp_path_factory.mktemp("cd") / "log.csv"
    path.write_text("time_s,speed_kmh,heading_deg\n" + "\n".join(
        f"{t:.1f},{v * 3.6:.3f},{h:.0f}" for t, v, h in
        zip(log.time_s, log.speed_ms, log.heading_deg)) + "\n")
    return path


def _one_line_error(r, *needles):
    assert r.returncode == 2, (r.stdout, r.stderr)
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr, r.stderr
    for n in needles:
        assert n in lines[0], lines[0]
    return lines[0]


# -- malformed logs --------------------------------------------------------------

def test_no_speed_column(tmp_path):
    p = tmp_path / "nospeed.csv"
    p.write_text("time_s,velocity\n" + "\n".join(f"{i},{30 - i * 0.1}" for i in range(50)))
    _one_line_error(run("coastdown", p, "--mass-kg", 1500), "nospeed.csv", "no speed column")


def test_non_increasing_time_names_the_line(tmp_path):
    p = tmp_path / "time.csv"
    rows = [f"{i * 0.5},{100 - i * 0.2}" for i in range(40)]
    rows[20] = "9.0,96.0"                       # line 22 goes back in time
    p.write_text("time_s,speed_kmh\n" + "\n".join(rows))
    _one_line_error(run("coastdown", p, "--mass-kg", 1500), "time.csv:22", "time must increase")


def test_all_stationary(tmp_path):
    p = tmp_path / "parked.csv"
    p.write_text("time_s,speed_kmh,heading_deg\n" + "\n".join(
        f"{i * 0.5},{abs(np.sin(i)) * 0.3:.2f},90" for i in range(400)))
    _one_line_error(run("coastdown", p, "--mass-kg", 1500), "no coasting run", "stationary")


def test_one_direction_when_pairing_is_asked(tmp_path):
    sim = simulate(pairs=2, rate_hz=2.0, directions=(1.0,))
    log = as_log(sim, seed=22)
    p = tmp_path / "oneway.csv"
    p.write_text("time_s,speed_ms,heading_deg\n" + "\n".join(
        f"{t:.1f},{v:.4f},{h:.0f}" for t, v, h in zip(log.time_s, log.speed_ms,
                                                       log.heading_deg)))
    _one_line_error(run("coastdown", p, "--mass-kg", 1500, "--combine", "pairs"),
                    "both directions")
    ok = run("coastdown", p, "--mass-kg", 1500, "--combine", "none", "--json")
    assert ok.returncode == 0, ok.stderr


def test_bad_cells_and_options(tmp_path, csv_log):
    p = tmp_path / "text.csv"
    p.write_text("time_s,speed_kmh\n" + "\n".join(
        ["0,10", "1,abc"] + [f"{i},{20}" for i in range(2, 30)]))
    _one_line_error(run("coastdown", p, "--mass-kg", 1500), "text.csv:3", "speed_kmh",
                    "must be a number")
    _one_line_error(run("coastdown", csv_log, "--mass-kg", -5), "--mass-kg")
    _one_line_error(run("coastdown", csv_log, "--mass-kg", 1500, "--drop", 9), "drop",
                    "no run 9")
    _one_line_error(run("coastdown", tmp_path / "missing.csv", "--mass-kg", 1500),
                    "missing.csv", "file not found")


def test_wind_columns_need_heading(tmp_path):
    p = tmp_path / "wind.csv"
    p.write_text("time_s,speed_kmh,wind_speed_ms,wind_direction_deg\n" + "\n".join(
        f"{i},{100 - i},2,40" for i in range(30)))
    with pytest.raises(InputError, match="heading_deg"):
        read_coastdown_log(p)


# -- outputs ---------------------------------------------------------------------

def test_json_has_the_documented_keys(csv_log):
    r = run("coastdown", csv_log, "--mass-kg", MASS, "--frontal-area-m2", 2.2, "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    for k in ("f0_n", "f1_n_per_kmh", "f2_n_per_kmh2", "f0_std_n", "f1_std_n_per_kmh",
              "f2_std_n_per_kmh2", "covariance", "cda_m2", "crr", "cd", "r_squared", "runs",
              "corrections", "as_measured", "road_load"):
        assert k in d, k
    for run_ in d["runs"]:
        for k in ("direction", "start_s", "end_s", "used", "reason", "f0_n", "f2_n_per_kmh2"):
            assert k in run_, k
    cov = np.array(d["covariance"])
    assert cov.shape == (3, 3) and np.allclose(cov, cov.T)
    assert np.allclose(np.sqrt(np.diag(cov)), [d["f0_std_n"], d["f1_std_n_per_kmh"],
                                               d["f2_std_n_per_kmh2"]], rtol=1e-12)


def test_block_file_feeds_a_vehicle_and_plot_is_written(tmp_path, csv_log):
    out, png = tmp_path / "rl.yaml", tmp_path / "fit.png"
    r = run("coastdown", csv_log, "--mass-kg", MASS, "-o", out, "--plot", png, "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"          # PNG signature
    doc = yaml.safe_load(out.read_text())
    assert set(doc) == {"test_mass_kg", "test_rotating_mass_fraction", "road_load"}
    assert doc["test_mass_kg"] == MASS and doc["test_rotating_mass_fraction"] == 0.03
    assert set(doc["road_load"]) == {"f0_n", "f1_n_per_kmh", "f2_n_per_kmh2", "covariance"}
    car = tmp_path / "car.yaml"
    car.write_text("name: coasted\nmass_kg: 1500\nroad_load:\n  from_coastdown: rl.yaml\n")
    veh = load_vehicle(car)
    assert veh.road_load.f0_n == d["f0_n"]
    assert np.array_equal(veh.road_load.covariance, np.array(d["covariance"]))
    # the lines under road_load: can also be pasted into a vehicle's road_load: unchanged
    lines = out.read_text().splitlines()
    text = "name: pasted\nmass_kg: 1500\n" + "\n".join(
        lines[lines.index("road_load:"):]) + "\n"
    (tmp_path / "pasted.yaml").write_text(text)
    assert load_vehicle(tmp_path / "pasted.yaml").road_load.f2_n_per_kmh2 == d["f2_n_per_kmh2"]
    # and a saved --json document works too (its road_load entry is used)
    (tmp_path / "result.json").write_text(r.stdout)
    car.write_text("name: coasted\nmass_kg: 1500\nroad_load:\n  from_coastdown: result.json\n")
    assert load_vehicle(car).road_load.f1_n_per_kmh == d["f1_n_per_kmh"]


def test_from_coastdown_errors_name_both_files(tmp_path):
    car = tmp_path / "car.yaml"
    car.write_text("name: c\nmass_kg: 1500\nroad_load:\n  from_coastdown: nope.yaml\n")
    with pytest.raises(InputError) as err:
        load_vehicle(car)
    text = str(err.value)
    assert "nope.yaml" in text and "car.yaml:4" in text and "file not found" in text
    (tmp_path / "bad.yaml").write_text("f0_n: 120\nf1_n_per_kmh: 0.3\nf2_n_per_kmh2: -0.01\n")
    car.write_text("name: c\nmass_kg: 1500\nroad_load:\n  from_coastdown: bad.yaml\n")
    with pytest.raises(InputError) as err:
        load_vehicle(car)
    assert "bad.yaml:3" in str(err.value) and "f2_n_per_kmh2" in str(err.value)
    car.write_text("name: c\nmass_kg: 1500\nroad_load:\n  from_coastdown: bad.yaml\n"
                   "  f0_n: 100\n")
    with pytest.raises(InputError, match="remove the other keys"):
        load_vehicle(car)


def test_output_never_overwrites_an_input(csv_log):
    before = csv_log.read_bytes()
    _one_line_error(run("coastdown", csv_log, "--mass-kg", MASS, "-o", csv_log),
                    "input file")
    assert csv_log.read_bytes() == before


def test_help_carries_the_safety_cautions():
    for cmd in ("coastdown", "coastdown-quick"):
        r = run(cmd, "--help")
        assert r.returncode == 0
        text = " ".join(r.stdout.split())
        assert "closed roads or proving grounds" in text
        assert "neutral" in text and "local law" in text


def test_text_report_lists_runs(csv_log):
    # end-to-end: the installed module as its own process, as a user runs it
    r = run_process("coastdown", csv_log, "--mass-kg", MASS)
    assert r.returncode == 0, r.stderr
    assert "f0" in r.stdout and "reason / notes" in r.stdout and "Crr" in r.stdout
    for line in r.stdout.splitlines():           # not a terminal: 100 columns
        assert len(line) <= 100, line


# -- study --------------------------------------------------------------------------

STUDY = """\
name: coast-down road load in a study
baseline:
  vehicle: car.yaml
modifications:
  - name: smoother mirrors
    changes: {f2_n_per_kmh2: -0.001}
driving:
  profiles: ["steady:90kmh:600s"]
uncertainty:
  draws: 20000
  seed: 5
"""


def test_fitted_covariance_widens_the_study_interval(tmp_path, csv_log):
    from tractive.study.engine import run_study

    out = tmp_path / "rl.yaml"
    assert run("coastdown", csv_log, "--mass-kg", MASS, "-o", out).returncode == 0
    (tmp_path / "car.yaml").write_text(
        "name: coasted\nmass_kg: 1500\nroad_load:\n  from_coastdown: rl.yaml\n")
    (tmp_path / "study.yaml").write_text(STUDY)
    res = run_study(tmp_path / "study.yaml")
    row = res.row("baseline", "steady:90kmh:600s")
    width = row.interval_high["positive_energy_kwh"] - row.interval_low["positive_energy_kwh"]
    # At constant speed E = (f0 + f1 V + f2 V^2) d is linear in (f0, f1, f2), so
    # sd(E) = d sqrt(g' C g) with g = (1, V, V^2) exactly (JCGM 100:2008 eq. 13);
    # the 95 % interval of a normal output is ±1.959964 sd (scipy.stats.norm).
    block = yaml.safe_load(out.read_text())["road_load"]
    cov = np.array(block["covariance"])
    g = np.array([1.0, 90.0, 90.0 ** 2])
    d_m = 90 / 3.6 * 600
    sd_kwh = d_m * np.sqrt(g @ cov @ g) / 3.6e6
    assert width > 0
    # 5 %: common-practice tolerance for a 20000-draw Monte Carlo interval
    assert width / (2 * stats.norm.ppf(0.975)) == pytest.approx(sd_kwh, rel=0.05)
    # the same coefficients without their covariance give a zero-width interval
    (tmp_path / "car.yaml").write_text(
        "name: fixed\nmass_kg: 1500\nroad_load:\n"
        f"  f0_n: {block['f0_n']!r}\n  f1_n_per_kmh: {block['f1_n_per_kmh']!r}\n"
        f"  f2_n_per_kmh2: {block['f2_n_per_kmh2']!r}\n")
    row0 = run_study(tmp_path / "study.yaml").row("baseline", "steady:90kmh:600s")
    assert row0.interval_high["positive_energy_kwh"] == row0.interval_low["positive_energy_kwh"]


# -- corrections -------------------------------------------------------------------

def test_reference_factors():
    t_c, p_pa = 11.0, 99200.0
    f, info = correction_factors("gtr15", temperature_c=t_c, pressure_pa=p_pa)
    # UN GTR No. 15 Annex 4 (from memory): f0, f1 × (1 + K0 (T - 20 °C)), K0 = 8.6e-3/K;
    # f2 × K2 = (T / 293 K)(100 kPa / p)
    assert f[0] == f[1] == pytest.approx(1 + 8.6e-3 * (t_c - 20.0), rel=1e-12)
    assert f[2] == pytest.approx((t_c + 273.15) / 293.0 * 100000.0 / p_pa, rel=1e-12)
    # SAE J2263 / 40 CFR 1066.805 reference state 20 °C, 98.21 kPa -> 1.1671 kg/m^3
    # (ideal gas, R = 287.05; REFERENCE-VALUES, computed)
    assert REFERENCE_STATES["j2263"].air_density_kg_m3 == pytest.approx(1.1671, abs=1e-4)
    f, info = correction_factors("j2263", temperature_c=t_c, pressure_pa=p_pa)
    rho = p_pa / (287.05 * (t_c + 273.15))
    assert f[2] == pytest.approx(1.1671 / rho, rel=1e-4)
    assert f[0] == 1.0 and info["not_applied"]
    f, info = correction_factors("none", temperature_c=t_c, pressure_pa=p_pa)
    assert np.all(f == 1.0)


def test_analysis_applies_the_factors_to_coefficients_and_covariance(csv_log):
    a = analyze_coastdown([csv_log], mass_kg=MASS, reference="none")
    b = analyze_coastdown([csv_log], mass_kg=MASS, reference="gtr15", air_temperature_c=5.0,
                          air_pressure_pa=101000.0)
    f, _ = correction_factors("gtr15", temperature_c=5.0, pressure_pa=101000.0)
    assert np.allclose(b.coefficients, a.coefficients * f, rtol=1e-12)
    assert np.allclose(b.covariance, a.covariance * np.outer(f, f), rtol=1e-12)
    assert np.allclose(b.measured, a.coefficients, rtol=1e-12)
    # CdA = f2 / (rho_ref / 2) with the GTR 15 reference density (293 K, 100 kPa; UN GTR
    # No. 15 Annex 4 reference state, from memory, as the air factor K2 above) through the
    # ideal-gas law with R = 287.05 J/(kg K) (ISA, ICAO Doc 7488)
    rho_ref = 100000.0 / (287.05 * 293.0)
    assert b.cda_m2 == pytest.approx(b.f2_n_per_kmh2 * 3.6 ** 2 / (0.5 * rho_ref), rel=1e-12)


# -- GPX ---------------------------------------------------------------------------

def _gpx(tmp_path, sim):
    # positions along a straight east-west road at 45° N, moving by the simulated
    # speed; east for sign +1, west for -1
    t, v, s = sim["time_s"], sim["speed_ms"], sim["sign"]
    x = np.concatenate([[0.0], np.cumsum(0.5 * (v[1:] + v[:-1]) * np.diff(t) * s[1:])])
    r_earth = 6378137.0
    lat0 = 45.0
    lon = 7.0 + np.degrees(x / (r_earth * np.cos(np.radians(lat0))))
    base = np.datetime64("2024-05-04T06:30:00.000")
    pts = "".join(
        f'<trkpt lat="{lat0:.10f}" lon="{lo:.10f}"><ele>120.0</ele>'
        f"<time>{base + np.timedelta64(int(round(ti * 1000)), 'ms')}Z</time></trkpt>\n"
        for ti, lo in zip(t, lon))
    p = tmp_path / "track.gpx"
    p.write_text('<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="test" '
                 'xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg>\n' + pts +
                 "</trkseg></trk></gpx>\n")
    return p


def test_gpx_track_gives_speeds_headings_and_coefficients(tmp_path):
    sim = simulate(pairs=2, rate_hz=2.0)
    path = _gpx(tmp_path, sim)
    log = read_coastdown_log(path)
    moving = sim["speed_ms"] > 5
    # central differences of positions on the sphere (haversine) reproduce the speed
    # used to place them to well under 0.5 % while coasting
    inner = moving.copy()
    inner[[0, -1]] = False
    rel = np.abs(log.speed_ms[inner] - sim["speed_ms"][inner]) / sim["speed_ms"][inner]
    assert np.median(rel) < 0.005  # 0.5 %: common-practice tolerance
    east = inner & (sim["sign"] > 0)
    # due east along a parallel is heading 90 deg (definition of azimuth); 0.5 deg:
    # common-practice tolerance
    assert np.allclose(log.heading_deg[east], 90.0, atol=0.5)
    res = analyze_coastdown([path], mass_kg=MASS, reference="none")
    # reference: the generated truth (solve_ivp); 3 % and 2 %: common-practice tolerances
    assert res.f0_n == pytest.approx(TRUTH[0], rel=0.03)
    assert res.f2_n_per_kmh2 == pytest.approx(TRUTH[2], rel=0.02)


# -- the bundled example -------------------------------------------------------------

def test_example_log_gives_back_its_truth():
    # examples/coastdown/make_log.py: truth at GTR 15 reference conditions
    # f0 = 132.0 N, f1 = 0.52 N/(km/h), f2 = 0.0315 N/(km/h)^2, test mass 1380 kg
    res = analyze_coastdown([EXAMPLE], mass_kg=1380.0, frontal_area_m2=2.2)
    truth = np.array([132.0, 0.52, 0.0315])
    lo, hi = res.interval95().T
    # the generator's truth lies inside the reported 95 % intervals
    assert np.all((lo <= truth) & (truth <= hi)), (res.coefficients, res.std)
    # reference: the generator's truth; 3 % is a common-practice tolerance for a log
    # with a rejected run, a spike and a dropout
    assert res.f0_n == pytest.approx(132.0, rel=0.03)
    assert res.f2_n_per_kmh2 == pytest.approx(0.0315, rel=0.03)
    runs = {r.run.run_id: r.run for r in res.runs}
    assert not runs[4].used and runs[4].reason.startswith("brake event")
    assert any("speed spike removed" in n for n in runs[2].notes)
    assert runs[5].used                           # a 0.8 s dropout is bridged
    # Crr = f0 / (m g) of a passenger car: 0.007-0.017, the range of US replacement
    # passenger-car tyres (TRB Special Report 286, 2006)
    assert 0.007 <= res.crr <= 0.017
    # Cd of a saloon/hatchback: 0.22-0.40 (common practice)
    assert 0.22 <= res.cd <= 0.40
