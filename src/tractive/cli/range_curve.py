"""``tractive range-curve``: range and consumption against constant speed."""

from __future__ import annotations

import click
import numpy as np

from ..powertrain.curve import range_curve
from ..vehicle import load_vehicle
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table

#: highest speed accepted [km/h]
MAX_SPEED_KMH = 500.0


#: checked options: speeds up to 500 km/h (above any road vehicle's top speed, common
#: practice), ambient temperature within the range a vehicle file accepts
SPEED = Number(0.0, MAX_SPEED_KMH, low_open=True, unit="km/h")
AMBIENT = Number(-60.0, 60.0, unit="°C")
#: most speeds one curve may have
MAX_SPEEDS = 10000


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
    if not to_kmh >= from_kmh:
        raise click.BadParameter("must be at least --from-kmh", param_hint="--to-kmh")
    if (to_kmh - from_kmh) / step_kmh > MAX_SPEEDS:
        raise click.BadParameter(f"gives more than {MAX_SPEEDS} speeds",
                                 param_hint="--step-kmh")
    speeds = np.arange(from_kmh, to_kmh + 1e-9 * max(1.0, to_kmh), step_kmh)
    vehicle = load_vehicle(vehicle_file)
    curve = range_curve(vehicle, speeds, ambient_temperature_c=ambient_c)
    data = curve.to_dict()
    data["ambient_temperature_c"], notes = _ambient(vehicle, ambient_c)
    data["notes"] = notes
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
    gov = getattr(vehicle.performance, "governor_kmh", None)
    rows = []
    for r in data["rows"]:
        row = dict(r)
        row["note"] = "" if r["feasible"] else (
            "above the governor" if gov is not None and r["speed_kmh"] > gov * (1 + 1e-12)
            else "beyond the drive's limits")
        rows.append(row)
    if not all(r["feasible"] for r in data["rows"]):
        cols.append(("note", "note", ""))
    click.echo(table(rows, cols))
    edge = " (end of the swept span)" if data["best_at_edge_of_span"] else ""
    click.echo(f"\ngreatest range {fmt(data['best_range_km'], '.0f')} km at "
               f"{fmt(data['best_speed_kmh'], '.1f')} km/h{edge}")
    for note in data["notes"]:
        click.echo(f"note: {note}")


def _ambient(vehicle, ambient_c):
    """The ambient temperature the curve used [°C] (None when none is used) and notes."""
    pt = vehicle.powertrain
    table_aux = (getattr(pt, "kind", None) == "electric"
                 and getattr(pt, "auxiliary_power_table_w", None) is not None)
    if table_aux:
        used = ambient_c if ambient_c is not None else pt.ambient_temperature_c
        return used, []
    if ambient_c is None:
        return None, []
    why = ("a combustion powertrain has no temperature-dependent auxiliary load here"
           if getattr(pt, "kind", None) == "combustion"
           else "the vehicle's auxiliary power is a constant (auxiliary_power_kw), not a "
                "table over temperature")
    return None, [f"--ambient-c {ambient_c:g} °C is not used: {why}"]
