"""``tractive performance``: top speed, acceleration times and gradeability."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table
from ._units import columns_in_units, units_option


#: checked options: grade within ±100 % (45°, as for grade_pct in speed files), wind
#: within ±300 km/h, gradeability speed 0-300 km/h
GRADE = Number(-100.0, 100.0, unit="%")
WIND = Number(-300.0, 300.0, unit="km/h")
GRADE_SPEED = Number(0.0, 300.0, unit="km/h")


@cli.command("performance")
@click.argument("vehicle_file", metavar="VEHICLE.yaml")
@click.option("--grade-pct", type=GRADE, default=0.0, show_default=True,
              help=ranged("Road grade [%] for all figures (negative downhill).", GRADE))
@click.option("--wind-kmh", type=WIND, default=0.0, show_default=True,
              help=ranged("Head wind [km/h]; negative for a tail wind.", WIND))
@click.option("--grade-speed-kmh", type=GRADE_SPEED, default=None,
              help=ranged("Speed [km/h] for the gradeability figure (default: the vehicle "
                          "file's performance.gradeability_speed_kmh, else 10).", GRADE_SPEED))
@units_option
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def performance_command(vehicle_file, grade_pct, wind_kmh, grade_speed_kmh, units, as_json):
    """Top speed in every gear with the limit that binds, 0-100 and 80-120 km/h
    times at full load (0-60 and 50-70 mph with --units us), and the steepest
    grade held at a given speed.

    Needs a performance block (driven-axle load share, tyre-road friction) and
    drive data: an engine full-load curve or a motor, gears and tyre radius,
    in the performance or the powertrain block.
    """
    report = api.performance(vehicle_file, grade_pct=grade_pct, wind_kmh=wind_kmh,
                             gradeability_speed_kmh=grade_speed_kmh, units=units)
    data = report.to_dict()
    if as_json:
        emit_json(data)
        return
    click.echo(_text(report.vehicle.name, data, units))


def _text(name: str, data: dict, units: str) -> str:
    """The readable summary and the per-gear table."""
    us = units == "us"
    spd = "mph" if us else "km/h"
    sfx = "mph" if us else "kmh"
    wind = data[f"wind_{sfx}"]
    wind_text = "calm" if wind == 0 else (f"head wind {wind:.4g} {spd}" if wind > 0
                                          else f"tail wind {-wind:.4g} {spd}")
    lines = [f"{name}  (grade {data['grade_pct']:g} %, {wind_text})"]
    gear = f", gear {data['top_speed_gear']}" if data["top_speed_gear"] else ""
    lines.append(f"top speed      {fmt(data[f'top_speed_{sfx}'])} {spd}  "
                 f"(limit: {data['top_speed_limit']}{gear})")
    times = (("0-60 mph", "accel_0_60_mph_s"), ("50-70 mph", "accel_50_70_mph_s")) if us \
        else (("0-100 km/h", "accel_0_100_kmh_s"), ("80-120 km/h", "accel_80_120_kmh_s"))
    shifts = data.get("shifts_0_100")
    shift_text = "" if shifts is None else \
        f"  ({shifts} gear change{'s' if shifts != 1 else ''})"
    lines.append(f"{times[0][0]:<15}{fmt(data[times[0][1]], '.2f')} s{shift_text}")
    lines.append(f"{times[1][0]:<15}{fmt(data[times[1][1]], '.2f')} s")
    lines.append(f"gradeability   {fmt(data['gradeability_pct'])} % at "
                 f"{data[f'gradeability_speed_{sfx}']:.4g} {spd}")
    lines.append(f"peak wheel power {data['peak_wheel_power_kw']:.1f} kW; launch limited by "
                 f"{'tyre grip' if data['launch_traction_limited'] else 'the drive'}\n")
    lines.append(table(data["gears"], columns_in_units([
        ("gear", "gear", ".0f"), ("ratio", "ratio", ".3f"), ("overall_ratio", "overall", ".3f"),
        ("top_speed_kmh", "top km/h", ".1f"), ("top_speed_limit", "limit", ""),
        ("speed_at_limit_kmh", "km/h at rev/speed limit", ".1f")], units)))
    if data[times[0][1]] is None or data[times[1][1]] is None:
        lines.append("\n- : speed not reached (power, grade, or governor)")
    return "\n".join(lines)
