"""Coast-down commands: every option value checked, output files checked before work.

A user mistake must give exit status 2 and one stderr line naming the option
(or file), never a traceback, never a number printed with status 0, and no
output file. Physical ranges are justified beside each check.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import yaml

from test_coastdown import MASS, as_log, simulate
from tractive.cli import main
from tractive.coastdown import analyze_coastdown, correction_factors, two_interval_estimate
from tractive.coastdown.output import _num, plot_coastdown, write_road_load
from tractive.errors import InputError
from tractive.vehicle import load_vehicle

QUICK = ["--high", "110", "90", "17.1", "--low", "40", "20", "47.1"]


def cli(capsys, *args):
    """Run the console entry point in-process; (exit status, stdout, stderr)."""
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in args])
    out = capsys.readouterr()
    code = exc.value.code
    return (0 if code is None else code), out.out, out.err


def one_line_error(result, *needles):
    code, out, err = result
    assert code == 2, (out, err)
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    assert out == "", out                     # nothing printed as a result
    for n in needles:
        assert n in lines[0], lines[0]
    return lines[0]


@pytest.fixture(scope="module")
def log_file(tmp_path_factory):
    sim = simulate(pairs=2, rate_hz=2.0)
    log = as_log(sim, seed=31)
    path = tmp_path_factory.mktemp("cdopt") / "log.csv"
    path.write_text("time_s,speed_kmh,heading_deg\n" + "\n".join(
        f"{t:.1f},{v * 3.6:.3f},{h:.0f}" for t, v, h in
        zip(log.time_s, log.speed_ms, log.heading_deg)) + "\n")
    return path


# -- coastdown-quick -------------------------------------------------------------------

@pytest.mark.parametrize("args, option", [
    (["--mass-kg", "nan"], "--mass-kg"),
    (["--mass-kg", "inf"], "--mass-kg"),
    (["--mass-kg", "-1"], "--mass-kg"),
    (["--mass-kg", "0"], "--mass-kg"),
    (["--mass-kg", "1400", "--rotating-mass-fraction", "-1"], "--rotating-mass-fraction"),
    (["--mass-kg", "1400", "--rotating-mass-fraction", "nan"], "--rotating-mass-fraction"),
    (["--mass-kg", "1400", "--air-density-kg-m3", "-1"], "--air-density-kg-m3"),
    (["--mass-kg", "1400", "--air-density-kg-m3", "nan"], "--air-density-kg-m3"),
    # 1013 is a pressure in hPa typed by mistake, not a density
    (["--mass-kg", "1400", "--air-density-kg-m3", "1013"], "--air-density-kg-m3"),
])
def test_quick_refuses_every_bad_number(capsys, args, option):
    one_line_error(cli(capsys, "coastdown-quick", *args, *QUICK), option)


@pytest.mark.parametrize("high, low", [
    (["1e300", "80", "7.5"], ["40", "20", "47.1"]),       # was an OverflowError
    (["110", "90", "nan"], ["40", "20", "47.1"]),
    (["110", "90", "0"], ["40", "20", "47.1"]),
    (["110", "inf", "17.1"], ["40", "20", "47.1"]),
])
def test_quick_refuses_bad_intervals(capsys, high, low):
    one_line_error(cli(capsys, "coastdown-quick", "--mass-kg", "1400", "--high", *high,
                       "--low", *low), "--high")


def test_quick_errors_of_the_model_name_the_option(capsys):
    # a 20 km/h drop from 110 km/h taking longer than one from 40 km/h needs negative drag
    one_line_error(cli(capsys, "coastdown-quick", "--mass-kg", "1400", "--high", "110", "90",
                       "60", "--low", "40", "20", "47.1"), "--high", "time ratio")


def test_quick_accepts_dense_cold_air():
    # ideal gas: dry air at -60 °C and 110 kPa has rho = p / (R T) = 110000 / (287.05 x
    # 213.15) = 1.80 kg/m³, inside the accepted 0.5-2 kg/m³; CdA = f2 / (rho / 2)
    rho = 110000 / (287.05 * 213.15)
    est = two_interval_estimate(mass_kg=1400, high_kmh=(110, 90), high_time_s=17.1,
                                low_kmh=(40, 20), low_time_s=47.1, air_density_kg_m3=rho)
    assert est.cda_m2 == pytest.approx(est.f2_n_per_kmh2 * 3.6 ** 2 / (0.5 * rho), rel=1e-12)
    with pytest.raises(InputError, match="air_density_kg_m3"):
        two_interval_estimate(mass_kg=1400, high_kmh=(110, 90), high_time_s=17.1,
                              low_kmh=(40, 20), low_time_s=47.1, air_density_kg_m3=math.nan)


def test_quick_help_documents_the_ranges(capsys):
    code, out, _ = cli(capsys, "coastdown-quick", "--help")
    text = " ".join(out.split())
    assert code == 0
    assert "above 0 and at most 100000 kg" in text and "at least 0.5 and at most 2 kg/m³" in text
    assert "at most 400 km/h" in text and "3600 s" in text


# -- coastdown: option values ----------------------------------------------------------------

@pytest.mark.parametrize("args, option", [
    (["--rolling-factor-per-k", "nan"], "--rolling-factor-per-k"),
    (["--rolling-factor-per-k", "5"], "--rolling-factor-per-k"),       # gave f0 = -6118 N
    (["--rolling-factor-per-k", "-0.01"], "--rolling-factor-per-k"),
    (["--air-temperature-c", "nan"], "--air-temperature-c"),
    (["--air-temperature-c", "100"], "--air-temperature-c"),
    (["--air-pressure-pa", "-5"], "--air-pressure-pa"),
    (["--air-pressure-pa", "nan"], "--air-pressure-pa"),
    (["--air-pressure-pa", "1013"], "--air-pressure-pa"),                # hPa, not Pa
    (["--mass-std-kg", "inf"], "--mass-std-kg"),
    (["--mass-std-kg", "-1"], "--mass-std-kg"),
    (["--mass-std-kg", "2000"], "--mass-std-kg"),                        # above the mass
    (["--max-gap-s", "inf"], "--max-gap-s"),
    (["--max-gap-s", "0"], "--max-gap-s"),
    (["--speed-window-kmh", "15", "nan"], "--speed-window-kmh"),
    (["--speed-window-kmh", "100", "20"], "--speed-window-kmh"),
    (["--min-span-kmh", "500"], "--min-span-kmh"),
    (["--min-span-kmh", "nan"], "--min-span-kmh"),
    (["--smoothing-s", "0"], "--smoothing-s"),
    (["--frontal-area-m2", "nan"], "--frontal-area-m2"),
    (["--frontal-area-m2", "0"], "--frontal-area-m2"),
    (["--rotating-mass-fraction", "nan"], "--rotating-mass-fraction"),
])
def test_coastdown_refuses_every_bad_number_and_writes_nothing(capsys, tmp_path, log_file,
                                                               args, option):
    out, png = tmp_path / "rl.yaml", tmp_path / "fit.png"
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, *args, "-o", out,
                       "--plot", png), option)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("mass", ["nan", "inf", "-5", "1e9"])
def test_coastdown_mass(capsys, log_file, mass):
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", mass), "--mass-kg")


def test_rolling_correction_factor_must_stay_near_one():
    # UN GTR No. 15 Annex 4 (from memory): f0 and f1 x (1 + K0 (T - 20 °C)), K0 = 8.6e-3/K.
    # At 5 °C the factor is 1 - 15 x 8.6e-3 = 0.871, accepted.
    factors, _ = correction_factors("gtr15", temperature_c=5.0, pressure_pa=100000.0)
    assert factors[0] == pytest.approx(1 - 15 * 8.6e-3, rel=1e-12)
    # K0 = 0.02/K at -60 °C would give 1 - 80 x 0.02 = -0.6: a negative rolling resistance
    with pytest.raises(InputError, match="rolling correction factor") as err:
        correction_factors("gtr15", temperature_c=-60.0, pressure_pa=100000.0,
                           rolling_factor_per_k=0.02)
    assert err.value.field == "rolling_factor_per_k"
    # the standard's own K0 at -40 °C: 1 - 60 x 8.6e-3 = 0.484, refused (names the temperature)
    with pytest.raises(InputError) as err:
        correction_factors("gtr15", temperature_c=-40.0, pressure_pa=100000.0)
    assert err.value.field == "air_temperature_c"


def test_rolling_correction_limit_through_the_command(capsys, log_file, tmp_path):
    out = tmp_path / "rl.yaml"
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, "--air-temperature-c",
                       "-60", "--air-pressure-pa", "100000", "--rolling-factor-per-k", "0.02",
                       "-o", out), "--rolling-factor-per-k", "rolling correction factor")
    assert not out.exists()


def test_library_refuses_non_finite_options(log_file):
    for kw, field in (({"air_temperature_c": math.nan}, "air_temperature_c"),
                      ({"air_pressure_pa": -5.0}, "air_pressure_pa"),
                      ({"rolling_factor_per_k": math.nan}, "rolling_factor_per_k"),
                      ({"mass_std_kg": math.inf}, "mass_std_kg"),
                      ({"max_gap_s": math.inf}, "max_gap_s")):
        with pytest.raises(InputError) as err:
            analyze_coastdown([log_file], mass_kg=MASS, **kw)
        assert err.value.field == field


def test_a_fit_that_is_not_finite_is_refused_and_not_written(capsys, monkeypatch, log_file,
                                                           tmp_path):
    import tractive.coastdown.analysis as analysis

    real = analysis.fit_runs

    def broken(*args, **kwargs):
        out = real(*args, **kwargs)
        return replace(out, coef=np.array([np.nan, out.coef[1], out.coef[2]]))

    monkeypatch.setattr(analysis, "fit_runs", broken)
    out = tmp_path / "rl.yaml"
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, "-o", out),
                   "no finite road load")
    assert not out.exists()


def test_writers_refuse_a_result_that_is_not_finite(log_file, tmp_path):
    res = analyze_coastdown([log_file], mass_kg=MASS)
    bad = replace(res, f0_n=math.nan)
    for name in ("rl.yaml", "rl.json"):
        with pytest.raises(InputError, match="not written"):
            write_road_load(bad, tmp_path / name)
    with pytest.raises(InputError, match="not written"):
        plot_coastdown(bad, tmp_path / "fit.png")
    assert list(tmp_path.iterdir()) == []


# -- coastdown: output files --------------------------------------------------------------

@pytest.mark.parametrize("args, needles", [
    (["-o", "rl.txt"], ["rl.txt", "--output", "unsupported file type", ".yaml"]),
    (["-o", "rl"], ["--output", "no ending"]),
    (["--plot", "fit.txt"], ["fit.txt", "--plot", ".png, .pdf, .svg"]),
    (["-o", "nodir/rl.yaml"], ["nodir/rl.yaml", "--output", "folder does not exist"]),
    (["--plot", "nodir/fit.png"], ["--plot", "folder does not exist"]),
])
def test_output_names_are_checked_before_the_fit(capsys, monkeypatch, tmp_path, log_file,
                                                 args, needles):
    monkeypatch.chdir(tmp_path)
    import tractive.coastdown as cd

    def never(*a, **k):
        raise AssertionError("the fit ran before the output names were checked")

    monkeypatch.setattr(cd, "analyze_coastdown", never)
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, *args), *needles)
    assert list(tmp_path.iterdir()) == []          # no folder created, no file


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="needs Linux /proc")
@pytest.mark.parametrize("option, name", [("-o", "/proc/rl.yaml"), ("--plot", "/proc/x.png")])
def test_unwritable_folder_is_one_line(capsys, log_file, option, name):
    one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, option, name),
                   name, "cannot write")


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="needs a non-root POSIX user (root writes anywhere)")
def test_read_only_folder_is_one_line(capsys, log_file, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        one_line_error(cli(capsys, "coastdown", log_file, "--mass-kg", MASS, "-o",
                           ro / "rl.yaml"), "rl.yaml", "permission denied")
        assert list(ro.iterdir()) == []
    finally:
        ro.chmod(0o755)


def test_json_output_file_is_the_json_document_and_feeds_a_vehicle(capsys, tmp_path, log_file):
    out = tmp_path / "rl.json"
    code, stdout, err = cli(capsys, "coastdown", log_file, "--mass-kg", MASS, "-o", out,
                            "--json")
    assert code == 0, err
    printed = json.loads(stdout)
    saved = json.loads(out.read_text())
    assert saved["road_load"] == printed["road_load"]
    assert saved["f0_n"] == printed["f0_n"]
    car = tmp_path / "car.yaml"
    car.write_text("name: coasted\nmass_kg: 1500\nroad_load:\n  from_coastdown: rl.json\n")
    assert load_vehicle(car).road_load.f2_n_per_kmh2 == printed["f2_n_per_kmh2"]


@pytest.mark.parametrize("name, magic", [("fit.pdf", b"%PDF"), ("fit.svg", b"<?xml"),
                                         ("fit.PNG", b"\x89PNG")])
def test_plot_formats_follow_the_ending(capsys, tmp_path, log_file, name, magic):
    # file signatures: PDF 1.7 (ISO 32000-1, 7.5.2 "%PDF-"; section from memory), XML 1.0
    # declaration, PNG (RFC 2083)
    code, _, err = cli(capsys, "coastdown", log_file, "--mass-kg", MASS, "--plot",
                       tmp_path / name)
    assert code == 0, err
    assert (tmp_path / name).read_bytes().startswith(magic)


def test_yaml_numbers_stay_numbers_for_yaml_1_1_readers():
    # YAML 1.1 float syntax needs a dot in the mantissa: PyYAML reads "1e-05" as text
    assert isinstance(yaml.safe_load("1e-05"), str)
    for x in (1e-5, 1e20, 2.5e-7, -3e-12, 123.25, 0.0):
        text = _num(x)
        assert yaml.safe_load(text) == x and isinstance(yaml.safe_load(text), float), text


def test_rolling_limit_from_a_logged_temperature_names_the_column(tmp_path):
    # the GTR 15 K0 = 8.6e-3/K (from memory) at -45 °C: 1 - 65 x 8.6e-3 = 0.441 < 0.5
    sim = simulate(pairs=2, rate_hz=2.0)
    log = as_log(sim, seed=32)
    path = tmp_path / "cold.csv"
    path.write_text("time_s,speed_kmh,heading_deg,air_temperature_c,air_pressure_pa\n" +
                    "\n".join(f"{t:.1f},{v * 3.6:.3f},{h:.0f},-45,100000" for t, v, h in
                              zip(log.time_s, log.speed_ms, log.heading_deg)) + "\n")
    with pytest.raises(InputError, match="rolling correction factor 1 .* = 0.441") as err:
        analyze_coastdown([path], mass_kg=MASS)
    assert err.value.field == "air_temperature_c column of the logs"
    # without a correction the same log is fine
    assert math.isfinite(analyze_coastdown([path], mass_kg=MASS, reference="none").f0_n)
