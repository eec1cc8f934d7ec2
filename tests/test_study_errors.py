"""Study files with mistakes: one line naming file and field, exit 2, no output file."""

from __future__ import annotations

from pathlib import Path

import pytest

from tractive.cli import main

CAR = """\
name: car
mass_kg: 1500
road_load:
  cda_m2: 0.62
  crr: 0.010
"""

EV = """\
name: ev
mass_kg: 1700
road_load:
  cda_m2: 0.6
  crr: 0.009
powertrain:
  kind: electric
  battery_usable_kwh: 50
  drive_efficiency: 0.88
  auxiliary_power_kw: 0.3
"""

GOOD = """\
name: good
baseline:
  vehicle: car.yaml
modifications:
  - name: rack
    changes:
      cda_m2: +0.1
driving:
  profiles: [udds, hwfet]
  mixes:
    - name: combined
      shares_pct: {udds: 55, hwfet: 45}
uncertainty:
  draws: 20
"""


def _run(argv, capsys):
    with pytest.raises(SystemExit) as exit_info:
        main(argv)
    captured = capsys.readouterr()
    return exit_info.value.code, captured.out, captured.err


def _setup(tmp_path: Path, study: str, car: str = CAR, vehicle_name="car.yaml") -> Path:
    (tmp_path / vehicle_name).write_text(car)
    (tmp_path / "study.yaml").write_text(study)
    return tmp_path / "study.yaml"


def _assert_one_line_error(tmp_path, capsys, study, must_contain, *, car=CAR,
                           vehicle_name="car.yaml"):
    path = _setup(tmp_path, study, car, vehicle_name)
    out = tmp_path / "out.csv"
    code, stdout, err = _run(["compare", str(path), "-o", str(out)], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    for text in must_contain:
        assert text in lines[0], lines[0]
    assert "Traceback" not in err
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".out")] == []
    return lines[0]


def test_good_study_runs_and_writes(tmp_path, capsys):
    path = _setup(tmp_path, GOOD)
    code, _, err = _run(["compare", str(path), "-o", str(tmp_path / "r.csv"),
                         "-o", str(tmp_path / "r.json")], capsys)
    assert code == 0, err
    assert (tmp_path / "r.csv").stat().st_size > 0 and (tmp_path / "r.json").exists()


def test_unknown_vehicle_key(tmp_path, capsys):
    car = CAR.replace("  crr: 0.010", "  crr: 0.010\n  rolling_coef: 0.01")
    _assert_one_line_error(tmp_path, capsys, GOOD, ["car.yaml", "road_load.rolling_coef",
                                                    "unknown key"], car=car)


def test_unknown_study_key_with_hint(tmp_path, capsys):
    line = _assert_one_line_error(tmp_path, capsys, GOOD.replace("driving:", "drivng: x\ndriving:"),
                                  ["study.yaml", "drivng", "unknown key"])
    assert "driving" in line


def test_change_to_a_key_that_does_not_exist(tmp_path, capsys):
    study = GOOD.replace("cda_m2: +0.1", "wing_area_m2: +0.1")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "modifications[0].changes."
                                                     "wing_area_m2", "no such key"])


def test_change_to_a_powertrain_key_that_does_not_exist(tmp_path, capsys):
    study = GOOD.replace("cda_m2: +0.1", "powertrain.battery_size_kwh: +10")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "battery_size_kwh"], car=EV)


def test_change_to_a_vehicle_without_powertrain(tmp_path, capsys):
    study = GOOD.replace("cda_m2: +0.1", "powertrain.battery_usable_kwh: +10")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "no powertrain block"])


def test_shares_that_do_not_add_up(tmp_path, capsys):
    study = GOOD.replace("{udds: 55, hwfet: 45}", "{udds: 55, hwfet: 40}")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "mixes[0].shares_pct",
                                                     "100", "95"])


def test_missing_price_where_money_is_asked(tmp_path, capsys):
    study = GOOD.replace("uncertainty:", "economics:\n  annual_distance_km: 15000\n"
                                         "  fuel_price_per_l: 1.7\nuncertainty:")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml",
                                                     "economics.electricity_price_per_kwh",
                                                     "missing"], car=EV)


def test_cost_without_economics(tmp_path, capsys):
    study = GOOD.replace("    changes:\n      cda_m2", "    cost: 200\n    changes:\n      cda_m2")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "modifications[0].cost",
                                                     "economics"])


def test_percent_without_sign(tmp_path, capsys):
    study = GOOD.replace("cda_m2: +0.1", "crr: 15%")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "changes.crr", "sign"])


def test_unknown_modification_in_combination(tmp_path, capsys):
    study = GOOD.replace("driving:", "combinations:\n  - name: both\n"
                                     "    modifications: [rack, wing]\ndriving:")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "combinations[0]", "wing"])


def test_unknown_profile(tmp_path, capsys):
    study = GOOD.replace("[udds, hwfet]", "[udds, hwfet, wltc9]").replace(
        "{udds: 55, hwfet: 45}", "{udds: 55, hwfet: 45}")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "driving.profiles[2]"])


def test_missing_profile_file_names_the_study_field_and_line(tmp_path, capsys):
    study = GOOD.replace("[udds, hwfet]", "[udds, hwfet, nope.csv]")
    path = _setup(tmp_path, study)
    line = study.splitlines().index("  profiles: [udds, hwfet, nope.csv]") + 1
    code, _, err = _run(["compare", str(path), "-o", str(tmp_path / "out.csv")], capsys)
    assert code == 2
    assert err.strip().splitlines() == [
        f"tractive: error: {path}:{line}: driving.profiles[2]: {tmp_path / 'nope.csv'}: "
        f"file not found"]
    assert not (tmp_path / "out.csv").exists()


def test_bad_profile_file_keeps_its_own_line(tmp_path, capsys):
    (tmp_path / "trip.csv").write_text("time_s,speed_kmh\n0,0\n1,abc\n")
    study = GOOD.replace("[udds, hwfet]", "[udds, hwfet, trip.csv]")
    _assert_one_line_error(tmp_path, capsys, study,
                           ["study.yaml:", "driving.profiles[2]", "trip.csv:3", "speed_kmh"])


def test_missing_vehicle_file(tmp_path, capsys):
    study = GOOD.replace("vehicle: car.yaml", "vehicle: nowhere.yaml")
    _assert_one_line_error(tmp_path, capsys, study, ["study.yaml", "baseline.vehicle",
                                                     "not found"])


def test_output_over_an_input_is_refused(tmp_path, capsys):
    path = _setup(tmp_path, GOOD)
    before = (tmp_path / "car.yaml").read_text()
    for target in (tmp_path / "car.yaml", path):
        code, _, err = _run(["compare", str(path), "-o", str(target)], capsys)
        assert code == 2 and "input" in err and len(err.strip().splitlines()) == 1
    assert (tmp_path / "car.yaml").read_text() == before
    assert path.read_text() == GOOD


def test_unknown_output_type_writes_nothing(tmp_path, capsys):
    path = _setup(tmp_path, GOOD)
    code, _, err = _run(["compare", str(path), "-o", str(tmp_path / "a.csv"),
                         "-o", str(tmp_path / "b.txt")], capsys)
    assert code == 2 and "b.txt" in err
    assert not (tmp_path / "a.csv").exists() and not (tmp_path / "b.txt").exists()


@pytest.mark.parametrize("draws", ["1000000000", "200001", "-1"])
def test_draws_on_the_command_line_keep_the_study_cap(tmp_path, capsys, draws):
    # the study file allows 0 to 200000 draws (uncertainty.draws); the option the same
    path = _setup(tmp_path, GOOD)
    out = tmp_path / "out.csv"
    code, stdout, err = _run(["compare", str(path), "--draws", draws, "-o", str(out)], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "--draws" in lines[0] and "200000" in lines[0], err
    assert not out.exists() and stdout == ""


def test_output_files_come_with_the_summary_table(tmp_path, capsys):
    path = _setup(tmp_path, GOOD)
    out = tmp_path / "out.csv"
    code, stdout, err = _run(["compare", str(path), "-o", str(out)], capsys)
    assert code == 0 and out.exists()
    lines = stdout.splitlines()
    assert lines[0].startswith("good: ") and "metric units" in stdout
    assert any(line.startswith("rack") for line in lines)
    assert lines[-1] == f"wrote {out}"
