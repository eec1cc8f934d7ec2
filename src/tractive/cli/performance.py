"""``tractive performance``: top speed, acceleration times and gradeability."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table


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
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def performance_command(vehicle_file, grade_pct, wind_kmh, grade_speed_kmh, as_json):
    """Top speed in every gear with the limit that binds, 0-100 and 80-120 km/h
    times at full load, and the steepest grade held at a given speed.

    Needs a performance block (driven-axle load share, tyre-road friction) and
    drive data: an engine full-load curve or a motor, gears and tyre radius,
    in the performance or the powertrain block.
    """
    report = api.performance(vehicle_file, grade_pct=grade_pct, wind_kmh=wind_kmh,
                             gradeability_speed_kmh=grade_speed_kmh)
    vehicle = report.vehicle
    data = report.to_dict()
    if as_json:
        emit_json(data)
        return
    wind = data["wind_kmh"]
    wind_text = "calm" if wind == 0 else (f"head wind {wind:g} km/h" if wind > 0
                                          else f"tail wind {-wind:g} km/h")
    click.echo(f"{vehicle.name}  (grade {data['grade_pct']:g} %, {wind_text})")
    gear = f", gear {data['top_speed_gear']}" if data["top_speed_gear"] else ""
    click.echo(f"top speed      {fmt(data['top_speed_kmh'])} km/h  "
               f"(limit: {data['top_speed_limit']}{gear})")
    shifts = data["shifts_0_100"]
    shift_text = "" if shifts is None else f"  ({shifts} gear change{'s' if shifts != 1 else ''})"
    click.echo(f"0-100 km/h     {fmt(data['accel_0_100_kmh_s'], '.2f')} s{shift_text}")
    click.echo(f"80-120 km/h    {fmt(data['accel_80_120_kmh_s'], '.2f')} s")
    click.echo(f"gradeability   {fmt(data['gradeability_pct'])} % at "
               f"{data['gradeability_speed_kmh']:g} km/h")
    click.echo(f"peak wheel power {data['peak_wheel_power_kw']:.1f} kW; launch limited by "
               f"{'tyre grip' if data['launch_traction_limited'] else 'the drive'}\n")
    click.echo(table(data["gears"], [
        ("gear", "gear", ".0f"), ("ratio", "ratio", ".3f"), ("overall_ratio", "overall", ".3f"),
        ("top_speed_kmh", "top km/h", ".1f"), ("top_speed_limit", "limit", ""),
        ("speed_at_limit_kmh", "km/h at rev/speed limit", ".1f")]))
    if data["accel_0_100_kmh_s"] is None or data["accel_80_120_kmh_s"] is None:
        click.echo("\n- : speed not reached (power, grade, or governor)")
