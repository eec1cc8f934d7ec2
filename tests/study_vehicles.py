"""Invented vehicles shared by the study and workbook tests."""

EV = """\
name: Test EV
mass_kg: 1800
road_load:
  cda_m2: 0.60
  crr: 0.009
  crr_std: 0.0006
  cda_std_m2: 0.02
powertrain:
  kind: electric
  battery_usable_kwh: 60
  drive_efficiency: 0.88
  charger_efficiency: 0.9
  auxiliary_power_kw: 0.3
"""


DIESEL = """\
name: small diesel
mass_kg: 1500
road_load:
  cda_m2: 0.65
  crr: 0.009
powertrain:
  kind: combustion
  fuel: diesel
  tank_l: 50
  gear_ratios: [3.8, 2.1, 1.3, 0.95, 0.75]
  final_drive_ratio: 3.7
  tyre_radius_m: 0.31
  transmission_efficiency: 0.93
  idle_speed_rpm: 800
  rev_limit_rpm: 4500
  upshift_speeds_kmh: [18, 32, 50, 70]
  willans:
    marginal_efficiency: 0.40
    friction_mep_kpa: 120
    displacement_l: 1.6
  idle_fuel_l_per_h: 0.6
"""
