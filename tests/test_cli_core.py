"""The `cycles` and `energy` commands: output shape and one-line errors."""

import json
import textwrap
from pathlib import Path

import pytest
from conftest import run_cli

ROOT = Path(__file__).resolve().parents[1]
HATCH = ROOT / "examples" / "vehicles" / "hatchback.yaml"


def run(*args, cwd=None):
    """The command run in-process (see conftest.run_cli)."""
    return run_cli(*args, cwd=cwd)


def test_cycles_json():
    r = run("cycles", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    names = {c["name"] for c in data["cycles"]}
    assert {"udds", "ftp75", "hwfet", "us06", "nycc", "wltc3b", "wltc2lmh"} <= names
    for c in data["cycles"]:
        for key in ("name", "duration_s", "distance_km", "max_speed_kmh", "mean_speed_kmh"):
            assert key in c
    udds = next(c for c in data["cycles"] if c["name"] == "udds")
    # UDDS headline figures as commonly cited (40 CFR 86 App. I(a); SOURCES.md, not
    # confirmed in the regulation text): 1369 s, 7.45 mi (11.99 km), 56.7 mph max;
    # mph → km/h with the exact NIST SP 811 factor
    assert udds["duration_s"] == 1369
    assert udds["distance_km"] == pytest.approx(7.45 * 1.609344, abs=0.01)
    assert udds["max_speed_kmh"] == pytest.approx(56.7 * 1.609344, abs=1e-9)


def test_cycles_table_text():
    r = run("cycles")
    assert r.returncode == 0
    assert "wltc3b" in r.stdout and "distance km" in r.stdout


def test_energy_json_shape_and_constant_speed_identity(tmp_path):
    r = run("energy", HATCH, "--cycle", "udds", "--cycle", "steady:100kmh", "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    assert data["vehicle"]["name"] == "Example hatchback"
    res = {x["cycle"]: x for x in data["results"]}
    assert set(res) == {"udds", "steady:100kmh"}
    u = res["udds"]
    for key in ("distance_km", "positive_energy_kwh", "negative_energy_kwh",
                "positive_energy_wh_per_km"):
        assert isinstance(u[key], float)
    assert set(u["components_kwh"]) == {"rolling", "aero", "inertia", "grade"}
    assert sum(u["components_kwh"].values()) == pytest.approx(u["positive_energy_kwh"],
                                                              rel=1e-12)
    # constant speed: energy per distance = f0 + f1 v + f2 v² (GTR 15 Annex 4 road load);
    # 1 Wh/km = 3.6 N
    s = res["steady:100kmh"]
    assert s["positive_energy_wh_per_km"] * 3.6 == pytest.approx(130 + 0.4 * 100 + 0.032 * 1e4,
                                                                 rel=1e-12)


def test_energy_text_table():
    r = run("energy", HATCH, "-c", "wltc3b:low")
    assert r.returncode == 0, r.stderr
    assert "wltc3b:low" in r.stdout and "Wh/km" in r.stdout


def _vehicle(tmp_path, text):
    p = tmp_path / "car.yaml"
    p.write_text(textwrap.dedent(text))
    return p


GOOD = """\
name: T
mass_kg: 1200
road_load: {f0_n: 120, f1_n_per_kmh: 0.3, f2_n_per_kmh2: 0.03}
"""


@pytest.mark.parametrize("text, needle", [
    (GOOD.replace("name: T\n", "name: T\nwheels: 4\n"), "wheels: unknown key"),
    (GOOD.replace("mass_kg: 1200\n", ""), "mass_kg: missing required key"),
    (GOOD.replace("1200", "'1200 kg'"), "mass_kg: must be a number in kg"),
    (GOOD.replace("1200", "-1200"), "mass_kg: must be greater than 0"),
    (GOOD.replace("f0_n: 120", "f0_n: .nan"), "road_load.f0_n: must be a number, got NaN"),
    ("name: [unclosed\n", "not valid YAML"),
])
def test_vehicle_mistakes_give_one_line_and_exit_2(tmp_path, text, needle):
    p = _vehicle(tmp_path, text)
    r = run("energy", p, "--cycle", "udds")
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1, r.stderr
    assert str(p) in lines[0] and needle in lines[0]
    assert "Traceback" not in r.stderr


def test_unknown_cycle_and_unreadable_files(tmp_path):
    p = _vehicle(tmp_path, GOOD)
    r = run("energy", p, "--cycle", "uds")
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1
    assert "uds" in r.stderr and "udds" in r.stderr
    r = run("energy", tmp_path / "missing.yaml", "--cycle", "udds")
    assert r.returncode == 2 and "missing.yaml" in r.stderr and "not found" in r.stderr
    bad = tmp_path / "bin.yaml"
    bad.write_bytes(b"\xff\xfe\x00garbage")
    r = run("energy", bad, "--cycle", "udds")
    assert r.returncode == 2 and "bin.yaml" in r.stderr


def test_speed_column_without_units(tmp_path):
    p = _vehicle(tmp_path, GOOD)
    csv = tmp_path / "trip.csv"
    csv.write_text("time_s,speed\n0,0\n1,5\n2,10\n")
    r = run("energy", p, "--cycle", csv)
    assert r.returncode == 2
    line = r.stderr.strip()
    assert len(line.splitlines()) == 1
    assert "trip.csv" in line and "speed" in line and "speed_kmh" in line


def test_nan_in_profile_names_the_line(tmp_path):
    p = _vehicle(tmp_path, GOOD)
    csv = tmp_path / "trip.csv"
    csv.write_text("time_s,speed_kmh\n0,0\n1,nan\n2,10\n")
    r = run("energy", p, "--cycle", csv)
    assert r.returncode == 2 and "trip.csv" in r.stderr and ":3" in r.stderr


def test_bad_option_is_one_line_exit_2():
    r = run("energy", HATCH, "--cycle", "udds", "--bogus")
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1


def test_python_dash_m_and_version():
    r = run("--version")
    assert r.returncode == 0 and "tractive" in r.stdout


def test_every_command_module_is_listed_for_lazy_loading():
    # commands load lazily by name; a command module missing from the table would vanish
    import importlib
    import pkgutil

    import tractive.cli as cli_pkg

    for mod in pkgutil.iter_modules(cli_pkg.__path__):
        if not mod.name.startswith("_"):
            importlib.import_module(f"tractive.cli.{mod.name}")
    assert set(cli_pkg.cli.commands) == set(cli_pkg.COMMAND_MODULES)
    for name, module in cli_pkg.COMMAND_MODULES.items():
        assert cli_pkg.cli.commands[name].callback.__module__ == f"tractive.cli.{module}"


def test_cycles_with_named_profiles_reports_their_statistics():
    r = run("cycles", "udds", "udds*2", "steady:90kmh:600s", "--json")
    assert r.returncode == 0, r.stderr
    rows = {p["name"]: p for p in json.loads(r.stdout)["profiles"]}
    # distance adds when a cycle is driven twice (integral over the joined trace)
    assert rows["udds*2"]["distance_km"] == pytest.approx(2 * rows["udds"]["distance_km"],
                                                          rel=1e-12)
    # constant speed: distance = speed × time (90 km/h for 600 s = 15 km)
    assert rows["steady:90kmh:600s"]["distance_km"] == pytest.approx(15.0, rel=1e-12)
    assert rows["steady:90kmh:600s"]["positive_kinetic_energy_m_per_s2"] == 0.0
    r = run("cycles", "nope")
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1


def test_energy_mix_of_wheel_energy_without_a_powertrain():
    # 40 CFR 600 App. II combines city and highway 55/45 harmonically in economy; per
    # distance that is the share-weighted mean of Wh/km (consumption = 1 / economy)
    r = run("energy", HATCH, "-c", "udds", "-c", "hwfet", "--mix-shares", "0.55,0.45",
            "--json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    udds, hwfet = data["results"]
    mix = data["mix"]
    assert mix["positive_energy_wh_per_km"] == pytest.approx(
        0.55 * udds["positive_energy_wh_per_km"] + 0.45 * hwfet["positive_energy_wh_per_km"],
        rel=1e-14)
    economy = 1 / (0.55 / (1 / udds["positive_energy_wh_per_km"])
                   + 0.45 / (1 / hwfet["positive_energy_wh_per_km"]))
    assert 1 / mix["positive_energy_wh_per_km"] == pytest.approx(economy, rel=1e-12)
    r = run("energy", HATCH, "-c", "udds", "-c", "hwfet", "--mix-shares", "0.5,0.6")
    assert r.returncode == 2 and "--mix-shares" in r.stderr


def test_end_to_end_through_the_console_module():
    # smoke test of the real entry point in a fresh process (the others run in-process)
    import subprocess
    import sys

    r = subprocess.run([sys.executable, "-m", "tractive", "energy", str(HATCH), "-c", "udds",
                        "--json"], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["results"][0]["cycle"] == "udds"
    r = subprocess.run([sys.executable, "-m", "tractive", "energy", "nope.yaml"],
                       capture_output=True, text=True)
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1
    assert "Traceback" not in r.stderr
