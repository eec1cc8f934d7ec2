"""``tractive fleet``: what modifications would have saved over a fleet's recorded trips."""

from __future__ import annotations

import textwrap

import click

from .. import api
from . import cli
from ._output import emit_json
from ._units import units_option
from ._study_text import output_width

#: text columns: key (metric), header, and the US key and header
_COLUMNS = (("positive_energy_kwh", "wheel kWh", None, None),
            ("battery_energy_kwh", "battery kWh", None, None),
            ("fuel_l", "fuel L", "fuel_gal", "fuel gal"),
            ("co2_kg", "CO2 kg", None, None),
            ("energy_cost", "cost", None, None))


def _cells(row: dict, units: str, cols) -> list:
    """One text row: variant, values with their change in percent."""
    out = []
    for key, _, us_key, _ in cols:
        k = us_key if units == "us" and us_key else key
        value = row.get(k)
        pct = row.get("change_pct", {}).get(k)
        text = api.numfmt.number(value)
        if pct is not None and row["variant"] != "baseline" and pct != 0:
            text += f" {api.numfmt.number(pct, signed=True)}%"
        out.append(text)
    return out


def _table(rows: list, units: str, first: str) -> list:
    """Lines of a table of totals rows, at most 100 columns wide."""
    cols = [c for c in _COLUMNS
            if any((c[2] if units == "us" and c[2] else c[0]) in r for r in rows)]
    head = [first] + [(c[3] if units == "us" and c[3] else c[1]) for c in cols]
    body = [[(r["group"] + ": " if "group" in r else "") + r["variant"]]
            + _cells(r, units, cols) for r in rows]
    widths = [max(len(x[i]) for x in [head] + body) for i in range(len(head))]
    widths[0] = min(widths[0], 22)
    lines = []
    for r in [head] + body:
        cells = [r[0][:22].ljust(widths[0])] + [c.rjust(w) for c, w in zip(r[1:], widths[1:])]
        lines.append("  ".join(cells).rstrip()[:100])
    return lines


@cli.command("fleet")
@click.argument("study_file", metavar="STUDY.yaml")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
@click.option("-o", "--output", default=None, metavar="FILE",
              help="Write the per-vehicle results: .csv or .parquet (one row per vehicle and "
                   "variant) or .xlsx (fleet summary, per vehicle, savings chart).")
@click.option("--workers", type=int, default=None, metavar="N",
              help="Worker processes on this machine (default: this process).")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run under Dask: a scheduler address (tcp://host:8786) or threads, "
                   "processes, synchronous for Dask on this machine.")
@units_option
@click.option("--quiet", is_flag=True, help="No progress and no notes on stderr.")
def fleet_command(study_file, as_json, output, workers, scheduler, units, quiet):
    """What modifications would have saved across a fleet's recorded trips.

    The study file names a vehicles table and a trips table (a telematics
    export) in its fleet block; every vehicle runs over its own trips as it is
    and with each modification. Trips that cannot be followed or fail checks
    are listed and left out of the totals.
    """
    if output:
        api.check_fleet_output(output, study_file)
    result = api.fleet(study_file, workers=workers, scheduler=scheduler, units=units,
                       show_progress=not quiet)
    if output:
        api.write_fleet_output(result, output)
    doc = result.to_dict()
    if as_json:
        emit_json(doc)
    else:
        f = doc["fleet"]
        dist = f.get("distance_mi", f.get("distance_km"))
        unit = "mi" if "distance_mi" in f else "km"
        head = (f"{doc['study']}: {f['vehicles']} vehicles, "
                f"{api.numfmt.number(f['trips'])} trips, {api.numfmt.number(dist)} {unit}, "
                f"{api.numfmt.number(f['duration_h'])} h recorded"
                + (f"; {f['trips_left_out']} trips left out" if f["trips_left_out"] else ""))
        click.echo("\n".join(textwrap.wrap(head, output_width())))
        click.echo("")
        for line in _table(doc["totals"], units, "variant"):
            click.echo(line)
        for r in doc["totals"]:
            if "annual_saving" in r:
                pay = r.get("payback_years")
                text = (f"{r['variant']}: saves {api.numfmt.number(r['annual_saving'])} {doc['currency']} "
                        "per year")
                if "modification_cost" in r:
                    text += (f" for {api.numfmt.number(r['modification_cost'])} {doc['currency']}; payback "
                             + ("never" if pay is None else f"{api.numfmt.number(pay)} years"))
                    if r.get("payback_exceeds_life"):
                        text += " (beyond the service life)"
                click.echo(text[:100])
        if doc["groups"]:
            click.echo("")
            for line in _table(doc["groups"], units, "group variant"):
                click.echo(line)
    if not quiet:
        for w in doc["warnings"]:
            click.echo(f"tractive: note: {w}", err=True)
