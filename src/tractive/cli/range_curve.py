"""``tractive range-curve``: range and consumption against constant speed."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table

#: highest speed accepted [km/h]
MAX_SPEED_KMH = api.MAX_USER_SPEED_KMH


#: checked options: speeds up to 500 km/h (above any road vehicle's top speed, common
#: practice), ambient temperature within the range a vehicle file accepts
SPEED = Number(0.0, MAX_SPEED_KMH, low_open=True, unit="km/h")
AMBIENT = Number(-60.0, 60.0, unit="°C")
#: most speeds one curve may have
MAX_SPEEDS = api.MAX_RANGE_SPEEDS


@cli.command("range-curve")
@click.argument("vehicle_file", metavar="VEHICLE.yaml")
@click.option("--from-kmh", type=SPEED, default=20.0, show_default=True,
              help=ranged("Lowest speed [km/h].", SPEED))
@click.option("--to-kmh", type=SPEED, default=160.0, show_default=True,
              help=ranged("Highest speed [km/h], at least --from-kmh.", SPEED))
@click.option("--step-kmh", type=SPEED, default=10.0, show_default=True,
              help=ranged(f"Speed step [km/h]; at most {MAX_SPEEDS} speeds.", SPEED))
@click.option("--ambient-c", type=AMBIENT, default=None,
              help=ranged("Ambient temperature [°C] for a temperature-dependent auxiliary "
                          "load (default: the vehicle file's ambient_temperature_c). A "
                          "vehicle whose auxiliary load does not depend on temperature does "
                          "not use it, and the output says so.", AMBIENT))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def range_curve_command(vehicle_file, from_kmh, to_kmh, step_kmh, ambient_c, as_json):
    """Range and consumption at constant speeds on a level road without wind,
    and the speed of greatest range (electric: battery Wh/km; combustion:
    L/100 km, CO2 and tank range).
    """
    try:
        speeds = api.range_speeds_kmh(from_kmh, to_kmh, step_kmh)
    except api.InputError as exc:
        raise click.BadParameter(exc.message, param_hint="--" + exc.field.replace("_", "-")) \
            from None
    report = api.range_curve(vehicle_file, speeds, ambient_temperature_c=ambient_c)
    vehicle, curve = report.vehicle, report.curve
    data = report.to_dict()
    if as_json:
        emit_json(data)
        return
    click.echo(f"{vehicle.name}  (constant speed, level road, no wind)\n")
    if curve.kind == "electric":
        cols = [("speed_kmh", "km/h", ".0f"), ("battery_wh_per_km", "Wh/km battery", ".1f")]
        if "wall_wh_per_km" in curve.columns:
            cols.append(("wall_wh_per_km", "Wh/km wall", ".1f"))
        cols += [("power_kw", "battery kW", ".1f"), ("range_km", "range km", ".0f")]
    else:
        cols = [("speed_kmh", "km/h", ".0f")]
        if "fuel_l_per_100km" in curve.columns:
            cols.append(("fuel_l_per_100km", "L/100km", ".2f"))
        else:
            cols.append(("fuel_kg_per_100km", "kg/100km", ".2f"))
        cols += [("co2_g_per_km", "CO2 g/km", ".0f"), ("gear", "gear", ".0f"),
                 ("engine_speed_rpm", "rpm", ".0f"), ("range_km", "range km", ".0f")]
    rows = [dict(r, note=note) for r, note in zip(data["rows"], report.row_notes)]
    if not all(r["feasible"] for r in data["rows"]):
        cols.append(("note", "note", ""))
    click.echo(table(rows, cols))
    edge = " (end of the swept span)" if data["best_at_edge_of_span"] else ""
    click.echo(f"\ngreatest range {fmt(data['best_range_km'], '.0f')} km at "
               f"{fmt(data['best_speed_kmh'], '.1f')} km/h{edge}")
    for note in data["notes"]:
        click.echo(f"note: {note}")
