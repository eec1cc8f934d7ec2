"""``tractive lap``: lap time on a circuit from a point-mass simulation per vehicle."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt
from ._units import units_option

MU = Number(0.05, 3.0, unit="")
SMOOTHING = Number(1.0, 500.0, unit="m")
STEP = Number(0.1, 50.0, unit="m")
START = Number(0.0, api.MAX_USER_SPEED_KMH, unit="km/h")

_CAUTION = ("Safety: drive fast only on closed circuits at organised track days or "
            "events, never on public roads; have aerodynamic devices such as wings "
            "fitted and checked by competent people, and follow the circuit's and your "
            "country's rules on modifications. The figures are a simulation, not a "
            "promise of how a car behaves at the limit.")


@cli.command("lap", epilog=_CAUTION)
@click.argument("vehicle_files", nargs=-1, required=True, metavar="VEHICLE.yaml...")
@click.option("--track", "track_file", required=True, metavar="TRACK",
              help="Racing line: CSV with x_m,y_m or latitude_deg,longitude_deg (optional "
                   "elevation_m), or distance_m,curvature_1_per_m; or a GPX track.")
@click.option("--laps", type=click.IntRange(1, api.MAX_LAPS), default=1, show_default=True,
              help="Laps laid end to end for the energy and fuel figures (closed lap).")
@click.option("--closed/--open", "closed", default=None,
              help="Closed lap or open stretch (default: closed when the ends of the line "
                   "meet).")
@click.option("--mu-cornering", type=MU, default=None,
              help=ranged("Tyre-road friction for cornering (default: the vehicle's "
                          "tyre_road_friction).", MU))
@click.option("--mu-braking", type=MU, default=None,
              help=ranged("Tyre-road friction for braking (default: the vehicle's "
                          "tyre_road_friction).", MU))
@click.option("--start-kmh", type=START, default=None,
              help=ranged("Start speed of an open stretch [km/h] (default: from rest).",
                          START))
@click.option("--smoothing-m", type=SMOOTHING, default=None,
              help=ranged("Smoothing length of the racing line [m]: knot spacing of the "
                          "fitted spline (default 10; 40-60 for a phone's GPS track).",
                          SMOOTHING))
@click.option("--step-m", type=STEP, default=None,
              help=ranged("Distance step of the simulation [m] (default 2).", STEP))
@click.option("--plot", "plot_file", default=None, metavar="FILE",
              help="Draw speed against distance (limiting regime shaded) and the curvature "
                   "into FILE (.png, .svg or .pdf).")
@click.option("--trace", is_flag=True, help="Add the speed at every point to the JSON.")
@units_option
@click.option("--json", "as_json", is_flag=True,
              help="Print one JSON document (with several vehicles: {\"laps\": [...]}).")
def lap_command(vehicle_files, track_file, laps, closed, mu_cornering, mu_braking, start_kmh,
                smoothing_m, step_m, plot_file, trace, units, as_json):
    """Lap time of one or several vehicles on a circuit.

    A quasi-steady-state point-mass simulation: at every point of the racing
    line the speed is the lowest of the cornering limit (grip of the tyres with
    the downforce), the drive (power curve, gears and traction, less the road
    load) and braking to the next slower point. Prints the lap time, top,
    lowest and mean speed, the wheel energy (and fuel or battery use when the
    vehicle has a powertrain) and the share of the lap spent at each limit.
    """
    if plot_file:
        api.check_figure(plot_file, list(vehicle_files) + [track_file])
    track = api.read_track(track_file, closed=closed, smoothing_length_m=smoothing_m,
                           step_m=step_m)
    reports = [api.lap(v, track, laps=laps, mu_cornering=mu_cornering, mu_braking=mu_braking,
                       start_speed_kmh=start_kmh, trace=trace, units=units)
               for v in vehicle_files]
    if plot_file:
        api.write_lap_plot(reports, plot_file)
    docs = [r.to_dict() for r in reports]
    if as_json:
        emit_json(docs[0] if len(docs) == 1 else {"laps": docs})
        return
    click.echo("\n\n".join(_text(d, units) for d in docs))
    if plot_file:
        click.echo(f"\nwrote {plot_file}")


def _text(doc: dict, units: str) -> str:
    """One vehicle's lap in a few lines."""
    us = units == "us"
    sp, sfx = ("mph", "mph") if us else ("km/h", "kmh")
    tr = doc["track"]
    kind = "closed lap" if tr["closed"] else "open stretch"
    dist = (f"{fmt(doc['distance_mi'], '.3f')} mi" if us
            else f"{fmt(doc['distance_m'], '.0f')} m")
    lines = [f"{doc['vehicle']} on {tr['name']} ({kind}, {dist})"]
    if doc["lap_time_s"] is None:
        lines.append("  cannot complete the track: it stalls on a climb")
        return "\n".join(lines)
    lines.append(f"  lap time       {fmt(doc['lap_time_s'], '.2f')} s")
    if doc["laps"] > 1:
        lines.append(f"  {doc['laps']} laps         {fmt(doc['total_time_s'], '.1f')} s")
    lines.append(f"  speed          top {fmt(doc[f'top_speed_{sfx}'], '.1f')}, lowest "
                 f"{fmt(doc[f'min_speed_{sfx}'], '.1f')}, mean "
                 f"{fmt(doc[f'mean_speed_{sfx}'], '.1f')} {sp}")
    per = f" over {doc['laps']} laps" if doc["laps"] > 1 else ""
    lines.append(f"  wheel energy   {fmt(doc['positive_energy_kwh'], '.3f')} kWh{per}")
    for key, label, unit, spec in (("fuel_l", "fuel", "L", ".2f"),
                                   ("fuel_gal", "fuel", "US gal", ".3f"),
                                   ("fuel_kg", "fuel", "kg", ".2f"),
                                   ("battery_energy_kwh", "battery", "kWh", ".2f")):
        if key in doc:
            lines.append(f"  {label:<14} {fmt(doc[key], spec)} {unit}{per}")
    share = doc["limits_share"]
    lines.append("  limited by     " + ", ".join(f"{k} {100 * share[k]:.0f} %"
                                                for k in ("cornering", "braking", "drive")))
    lines += [f"note: {n}" for n in tr["notes"]]
    return "\n".join(lines)
