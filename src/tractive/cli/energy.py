"""``tractive energy``: wheel energy (and fuel or battery use) on drive cycles."""

from __future__ import annotations

import click

from .. import api
from ..vehicle import load_vehicle
from . import cli
from ._output import emit_json, table


@cli.command("energy")
@click.argument("vehicle_file", metavar="VEHICLE.yaml")
@click.option("--cycle", "-c", "cycles", multiple=True, metavar="NAME_OR_FILE",
              help="Bundled cycle (udds, wltc3b, ...), a phase (wltc3b:low), a CSV or GPX "
                   "file, steady:90kmh, A+B or A*3. Repeat for several. "
                   f"Default: {', '.join(api.DEFAULT_ENERGY_CYCLES)}.")
@click.option("--dt-s", type=float, default=1.0, show_default=True,
              help="Time step [s] that user profiles are resampled to.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def energy_command(vehicle_file, cycles, dt_s, as_json):
    """Wheel energy of a vehicle over drive cycles (UN GTR No. 15 Annex 7 method).

    Positive energy is what the wheels deliver; negative energy is what braking
    must absorb (a positive number). The positive energy is split into rolling,
    aero, inertia and grade parts that add up to it.
    """
    if dt_s <= 0:
        raise click.BadParameter("must be positive", param_hint="--dt-s")
    vehicle = load_vehicle(vehicle_file)
    report = api.energy(vehicle, api.load_profiles(cycles or api.DEFAULT_ENERGY_CYCLES,
                                                   dt_s=dt_s))
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
    click.echo(table(rows, cols))
