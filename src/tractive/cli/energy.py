"""``tractive energy``: wheel energy (and fuel or battery use) on drive cycles."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, table
from ._reading import read_options_from, reading_options
from ._units import columns_in_units, units_option

#: accepted time step [s] (the range a study's driving.dt_s accepts)
DT = Number(0.01, 60.0, unit="s")


@cli.command("energy")
@click.argument("vehicle_file", metavar="VEHICLE.yaml")
@click.option("--cycle", "-c", "cycles", multiple=True, metavar="NAME_OR_FILE",
              help="Bundled cycle (udds, wltc3b, ...), a phase (wltc3b:low), a CSV or GPX "
                   "file, steady:90kmh, A+B or A*3. Repeat for several. "
                   f"Default: {', '.join(api.DEFAULT_ENERGY_CYCLES)}.")
@click.option("--dt-s", type=DT, default=1.0, show_default=True,
              help=ranged("Time step [s] that speed files, GPS tracks and steady:<speed> are "
                          "read at. Bundled cycles keep their native 1 s step (their "
                          "regulations define them second by second); a joined A+B that "
                          "contains a bundled cycle is read at 1 s throughout.", DT))
@click.option("--mix-shares", default=None, metavar="S1,S2,...",
              help="Distance shares of the cycles (in --cycle order, adding up to 1) for a "
                   "weighted-mix row: wheel Wh/km, and with a powertrain consumption, CO2 "
                   "and range (share-weighted per-km values).")
@reading_options
@units_option
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def energy_command(vehicle_file, cycles, dt_s, mix_shares, units, as_json, **reading):
    """Wheel energy of a vehicle over drive cycles (UN GTR No. 15 Annex 7 method).

    Positive energy is what the wheels deliver; negative energy is what braking
    must absorb (a positive number). The positive energy is split into rolling,
    aero, inertia and grade parts that add up to it. With a powertrain block,
    battery or fuel use, CO2 and range follow in a second table.
    """
    shares = None if mix_shares is None else _shares(mix_shares)
    report = api.energy(vehicle_file, api.load_profiles(cycles or api.DEFAULT_ENERGY_CYCLES,
                                                        dt_s=dt_s,
                                                        read=read_options_from(reading)),
                        units=units)
    if shares is not None:
        try:
            report = api.EnergyReport(report.vehicle, report.results,
                                      api.energy_mix(report, shares), units=units)
        except api.InputError as exc:
            raise click.BadParameter(exc.message, param_hint="--mix-shares") from None
    vehicle = report.vehicle
    data = report.to_dict()
    if as_json:
        emit_json(data)
        return
    rows = []
    for r in data["results"]:
        row = dict(r)
        for k, v in r["components_kwh"].items():
            row[f"{k}_kwh"] = v
        rows.append(row)
    click.echo(f"{vehicle.name}  (mass {vehicle.mass_kg:g} kg, inertial "
               f"{vehicle.inertial_mass_kg:g} kg)")
    coeffs = vehicle.resistance().coastdown_coefficients()
    click.echo(f"road load: f0 {coeffs['f0_n']:.2f} N, f1 {coeffs['f1_n_per_kmh']:.4f} N/(km/h), "
               f"f2 {coeffs['f2_n_per_kmh2']:.5f} N/(km/h)^2\n")
    cols = [("cycle", "cycle", ""), ("distance_km", "km", ".2f"),
            ("positive_energy_kwh", "positive kWh", ".3f"),
            ("positive_energy_wh_per_km", "Wh/km", ".1f"),
            ("negative_energy_kwh", "braking kWh", ".3f"),
            ("rolling_kwh", "rolling", ".3f"), ("aero_kwh", "aero", ".3f"),
            ("inertia_kwh", "inertia", ".3f"), ("grade_kwh", "grade", ".3f")]
    click.echo(table(rows, columns_in_units(cols, units)))
    if "mix" in data:
        m = data["mix"]
        per = "mi" if units == "us" else "km"
        click.echo(f"mix ({', '.join(f'{p} {x:g}' for p, x in zip(m['profiles'], m['shares']))}):"
                   f" {m[f'positive_energy_wh_per_{per}']:.1f} Wh/{per} positive, "
                   f"{m[f'negative_energy_wh_per_{per}']:.1f} Wh/{per} braking")
    if vehicle.powertrain is not None:
        _powertrain_table(vehicle, data, units)
    for text in list(vehicle.notes) + list(vehicle.warnings):
        click.echo(f"note: {text}")


def _shares(text: str) -> list:
    """The --mix-shares numbers."""
    try:
        return [float(x) for x in text.split(",")]
    except ValueError:
        raise click.BadParameter(f"must be numbers separated by commas, got '{text}'",
                                 param_hint="--mix-shares") from None


def _powertrain_table(vehicle, data, units="metric"):
    """The battery or fuel table below the wheel-energy table."""
    rows = list(data["results"]) + ([data["mix"]] if "mix" in data else [])
    if vehicle.powertrain.kind == "electric":
        click.echo("\nbattery (electric powertrain):")
        cols = [("cycle", "cycle", ""), ("battery_energy_kwh", "battery kWh", ".3f"),
                ("battery_wh_per_km", "Wh/km", ".1f"),
                ("regenerated_energy_kwh", "regenerated kWh", ".3f")]
        if vehicle.powertrain.charger_efficiency is not None:
            cols.append(("wall_wh_per_km", "wall Wh/km", ".1f"))
        cols += [("range_km", "range km", ".0f"),
                 ("motor_limit_exceeded_s", "over motor limit s", ".0f")]
    else:
        click.echo(f"\nfuel ({vehicle.powertrain.fuel.name}, combustion powertrain):")
        if vehicle.powertrain.fuel.liquid:
            cols = [("cycle", "cycle", ""), ("fuel_l", "fuel L", ".3f"),
                    ("fuel_l_per_100km", "L/100km", ".2f"), ("mpg_us", "mpg US", ".1f"),
                    ("mpg_uk", "mpg UK", ".1f")]
        else:
            cols = [("cycle", "cycle", ""), ("fuel_kg", "fuel kg", ".3f"),
                    ("fuel_kg_per_100km", "kg/100km", ".2f")]
        cols += [("co2_g_per_km", "CO2 g/km", ".0f"), ("range_km", "range km", ".0f"),
                 ("engine_limit_exceeded_s", "over engine limit s", ".0f")]
    if units == "us":           # mpg US already shown
        cols = [c for c in cols if c[0] != "fuel_l_per_100km"]
    click.echo(table(rows, columns_in_units(cols, units)))
