"""``tractive range-curve``: range and consumption against constant speed."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table
from ._units import columns_in_units, units_option

#: highest speed accepted [km/h]
MAX_SPEED_KMH = api.MAX_USER_SPEED_KMH
#: km per mile (exact)
_KM_PER_MI = 1.609344

#: checked options: speeds up to 500 km/h (above any road vehicle's top speed, common
#: practice), ambient temperature within the range a vehicle file accepts
SPEED = Number(0.0, MAX_SPEED_KMH, low_open=True, unit="km/h")
SPEED_MPH = Number(0.0, MAX_SPEED_KMH / _KM_PER_MI, low_open=True, unit="mph")
AMBIENT = Number(-60.0, 60.0, unit="°C")
#: most speeds one curve may have
MAX_SPEEDS = api.MAX_RANGE_SPEEDS
#: default sweeps: (from, to, step) in km/h (metric output) and mph (US output)
DEFAULT_KMH = (20.0, 160.0, 10.0)
DEFAULT_MPH = (10.0, 100.0, 5.0)


@cli.command("range-curve")
@click.argument("vehicle_files", nargs=-1, required=True, metavar="VEHICLE.yaml...")
@click.option("--from-kmh", type=SPEED, default=None,
              help=ranged("Lowest speed [km/h] (default 20).", SPEED))
@click.option("--to-kmh", type=SPEED, default=None,
              help=ranged("Highest speed [km/h], at least --from-kmh (default 160).", SPEED))
@click.option("--step-kmh", type=SPEED, default=None,
              help=ranged(f"Speed step [km/h] (default 10); at most {MAX_SPEEDS} speeds.",
                          SPEED))
@click.option("--from-mph", type=SPEED_MPH, default=None,
              help=ranged("Lowest speed [mph] instead of --from-kmh (default with --units "
                          "us: 10).", SPEED_MPH))
@click.option("--to-mph", type=SPEED_MPH, default=None,
              help=ranged("Highest speed [mph] (default with --units us: 100).", SPEED_MPH))
@click.option("--step-mph", type=SPEED_MPH, default=None,
              help=ranged("Speed step [mph] (default with --units us: 5).", SPEED_MPH))
@click.option("--ambient-c", type=AMBIENT, default=None,
              help=ranged("Ambient temperature [°C] for a temperature-dependent auxiliary "
                          "load (default: the vehicle file's ambient_temperature_c). A "
                          "vehicle whose auxiliary load does not depend on temperature does "
                          "not use it, and the output says so.", AMBIENT))
@click.option("--plot", "plot_file", default=None, metavar="FILE",
              help="Draw range and consumption against speed for every vehicle into "
                   "FILE (.png, .svg or .pdf).")
@units_option
@click.option("--json", "as_json", is_flag=True,
              help="Print one JSON document (with several vehicles: {\"curves\": [...]}).")
def range_curve_command(vehicle_files, from_kmh, to_kmh, step_kmh, from_mph, to_mph,
                        step_mph, ambient_c, plot_file, units, as_json):
    """Range and consumption at constant speeds on a level road without wind,
    and the speed of greatest range (electric: battery Wh/km; combustion:
    L/100 km, CO2 and tank range), for one or several vehicles.
    """
    speeds = _speeds((from_kmh, to_kmh, step_kmh), (from_mph, to_mph, step_mph), units)
    if plot_file:
        api.check_figure(plot_file, vehicle_files)
    reports = [api.range_curve(v, speeds, ambient_temperature_c=ambient_c, units=units)
               for v in vehicle_files]
    if plot_file:
        api.write_range_plot(reports, plot_file)
    docs = [r.to_dict() for r in reports]
    if as_json:
        emit_json(docs[0] if len(docs) == 1 else {"curves": docs})
        return
    click.echo("\n\n".join(_text(r, d, units) for r, d in zip(reports, docs)))
    if plot_file:
        click.echo(f"\nwrote {plot_file}")


def _speeds(kmh: tuple, mph: tuple, units: str):
    """Swept speeds [km/h] from the km/h or the mph options (not both)."""
    given_kmh = any(x is not None for x in kmh)
    given_mph = any(x is not None for x in mph)
    if given_kmh and given_mph:
        raise click.UsageError("give the speeds in km/h or in mph, not both")
    if given_mph or (units == "us" and not given_kmh):
        values = [d if x is None else x for x, d in zip(mph, DEFAULT_MPH)]
        values = [x * _KM_PER_MI for x in values]
        hint = "mph"
    else:
        values = [d if x is None else x for x, d in zip(kmh, DEFAULT_KMH)]
        hint = "kmh"
    try:
        return api.range_speeds_kmh(*values)
    except api.InputError as exc:
        name = exc.field.replace("_kmh", f"_{hint}").replace("_", "-")
        raise click.BadParameter(exc.message.replace("kmh", hint),
                                 param_hint=f"--{name}") from None


def _text(report, data: dict, units: str) -> str:
    """One vehicle's table and its greatest range."""
    curve = report.curve
    lines = [f"{report.vehicle.name}  (constant speed, level road, no wind)", ""]
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
    lines.append(table(rows, columns_in_units(cols, units)))
    edge = " (end of the swept span)" if data["best_at_edge_of_span"] else ""
    dist, spd = ("mi", "mph") if units == "us" else ("km", "km/h")
    sfx_d, sfx_s = ("mi", "mph") if units == "us" else ("km", "kmh")
    lines.append(f"\ngreatest range {fmt(data[f'best_range_{sfx_d}'], '.0f')} {dist} at "
                 f"{fmt(data[f'best_speed_{sfx_s}'], '.1f')} {spd}{edge}")
    lines += [f"note: {note}" for note in data["notes"]]
    return "\n".join(lines)
