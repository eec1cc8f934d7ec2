"""Powertrain and performance changes act on the parsed blocks (tractive.study.modify)."""

from __future__ import annotations

import math

import pytest

from tractive.errors import InputError
from tractive.study.engine import run_study

EV = """\
name: van
mass_kg: 1800
road_load:
  cda_m2: 0.60
  crr: 0.009
powertrain:
  kind: electric
  battery_usable_kwh: 60
  drive_efficiency: 0.88
  auxiliary_power_kw: 0.5
  gear_ratio: 9.0
  tyre_radius_m: 0.33
  motor: {peak_power_kw: 150, base_speed_rpm: 4000}
"""

DIESEL = """\
name: diesel
mass_kg: 1500
road_load:
  cda_m2: 0.65
  crr: 0.009
powertrain:
  kind: combustion
  fuel: diesel
  tank_l: 50
  gear_ratios: [3.8, 2.1, 1.3, 0.95, 0.75]
  final_drive_ratio: 3.9
  tyre_radius_m: 0.31
  transmission_efficiency: 0.93
  idle_speed_rpm: 800
  rev_limit_rpm: 4500
  upshift_speeds_kmh: [20, 35, 55, 75]
  willans: {marginal_efficiency: 0.40, friction_power_kw: 2.5}
  idle_fuel_l_per_h: 0.6
"""

STUDY = """\
name: changes
baseline:
  vehicle: car.yaml
modifications:
  - name: changed
    changes:
{changes}
  - name: same file
    vehicle: ./car.yaml
driving:
  profiles: ["steady:80kmh:600s"]
uncertainty: {{draws: 0}}
"""


def _run(tmp_path, vehicle, changes):
    (tmp_path / "car.yaml").write_text(vehicle)
    (tmp_path / "study.yaml").write_text(STUDY.format(changes=changes))
    return run_study(tmp_path / "study.yaml")


def test_auxiliary_power_change_adds_power_times_time(tmp_path):
    # energy = power × time (definition): +0.4 kW for 600 s at steady speed is
    # 0.4 × 600 / 3600 kWh more battery energy, nothing else changes
    res = _run(tmp_path, EV, "      powertrain.auxiliary_power_kw: +0.4")
    base = res.row("baseline", "steady:80kmh:600s").metrics["battery_energy_kwh"]
    new = res.row("changed", "steady:80kmh:600s").metrics["battery_energy_kwh"]
    assert new - base == pytest.approx(0.4 * 600 / 3600, rel=1e-9)
    # the same file as a whole-vehicle modification differs in nothing
    same = res.row("same file", "steady:80kmh:600s").metrics["battery_energy_kwh"]
    assert same == base


def test_vehicle_file_is_parsed_once_per_study(tmp_path, monkeypatch):
    # the baseline and a whole-vehicle modification naming the same file (by another
    # spelling of its path) share one parse
    import tractive.study.spec as study_spec

    calls = []
    real = study_spec.vehicle_from_section

    def counting(sec, **kw):
        calls.append(sec.file)
        return real(sec, **kw)

    monkeypatch.setattr(study_spec, "vehicle_from_section", counting)
    _run(tmp_path, EV, "      powertrain.drive_efficiency: 0.9")
    assert len(calls) == 1


def test_motor_power_change_keeps_the_base_speed_the_file_gives(tmp_path):
    # the file gives peak power and base speed; T = P / ω at the base speed (shaft power
    # identity), so +50 kW at 4000 rpm means a torque of 200 kW / (4000 · 2π/60)
    from tractive.study import modify
    from tractive.study.spec import load_study

    (tmp_path / "car.yaml").write_text(EV)
    (tmp_path / "study.yaml").write_text(STUDY.format(
        changes="      powertrain.motor.peak_power_kw: +50"))
    spec = load_study(tmp_path / "study.yaml")
    ps, _, _ = modify.nominal_params(spec.baseline, air_density_kg_m3=None)
    out = modify.apply_change(ps, spec.modifications[0].changes[0])
    motor = out.powertrain.motor
    assert motor.peak_power_w == pytest.approx(200e3, rel=1e-12)
    assert motor.peak_torque_nm == pytest.approx(200e3 / (4000 * 2 * math.pi / 60), rel=1e-12)
    assert motor.base_speed_rpm == pytest.approx(4000.0, rel=1e-12)
    # the baseline's block is untouched (frozen objects, replaced)
    assert ps.powertrain.motor.peak_power_w == pytest.approx(150e3, rel=1e-12)


def test_idle_speed_change_moves_the_default_pulling_floor(tmp_path):
    # the default lowest pulling speed is 1.5 × idle (common practice, the model's
    # documented default): it follows a changed idle speed
    from tractive.study import modify
    from tractive.study.spec import load_study

    (tmp_path / "car.yaml").write_text(DIESEL)
    (tmp_path / "study.yaml").write_text(STUDY.format(
        changes="      powertrain.idle_speed_rpm: 900"))
    spec = load_study(tmp_path / "study.yaml")
    ps, _, _ = modify.nominal_params(spec.baseline, air_density_kg_m3=None)
    out = modify.apply_change(ps, spec.modifications[0].changes[0])
    assert float(out.powertrain.pulling_speed_floor_rpm) == pytest.approx(1350.0, rel=1e-12)


@pytest.mark.parametrize("vehicle,change,words", [
    (EV, "powertrain.drive_efficiency: 1.2", "drive_efficiency: must be at most 1"),
    (EV, "powertrain.gear_ratios: 2", "no key 'gear_ratios'"),
    (EV, "powertrain.charger_efficiency: +1%", "no key 'charger_efficiency'"),
    (DIESEL, "powertrain.rev_limit_rpm: 700", "must be above idle_speed_rpm (800)"),
    (DIESEL, "powertrain.willans.friction_mep_kpa: +10", "no key 'willans.friction_mep_kpa'"),
    (DIESEL, "performance.governor_kmh: 120", "no performance block"),
])
def test_changes_outside_the_model_name_the_key(tmp_path, vehicle, change, words):
    with pytest.raises(InputError) as err:
        _run(tmp_path, vehicle, f"      {change}")
    assert words in str(err.value)
    assert "study.yaml" in str(err.value)


def test_an_optional_key_may_be_set_where_the_file_does_not_give_it(tmp_path):
    # wall energy = battery energy / charging efficiency (definition)
    res = _run(tmp_path, EV, "      powertrain.charger_efficiency: 0.9")
    row = res.row("changed", "steady:80kmh:600s").metrics
    assert row["wall_wh_per_km"] == pytest.approx(row["battery_wh_per_km"] / 0.9, rel=1e-12)
