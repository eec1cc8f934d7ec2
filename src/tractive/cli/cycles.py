"""``tractive cycles``: the bundled drive cycles, or any profiles, with their statistics."""

from __future__ import annotations

import textwrap

import click

from .. import api
from . import cli
from ._output import emit_json, table
from ._reading import read_options_from, reading_options
from ._study_text import output_width

_STATS = [("duration_s", "duration s", ".0f"), ("distance_km", "distance km", ".3f"),
          ("mean_speed_kmh", "mean km/h", ".1f"), ("max_speed_kmh", "max km/h", ".1f"),
          ("idle_share", "idle share", ".2f"),
          ("positive_kinetic_energy_m_per_s2", "PKE m/s^2", ".3f")]


@cli.command("cycles")
@click.argument("profiles", nargs=-1, metavar="[NAME_OR_FILE ...]")
@click.option("--dt-s", type=float, default=1.0, show_default=True,
              help="Time step [s] that user files are resampled to.")
@reading_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def cycles_command(profiles, dt_s, as_json, **reading):
    """List the bundled drive cycles with duration, distance and speeds, or show
    the same statistics for the profiles named (cycles, phases such as
    wltc3b:low, CSV or GPX files, steady:90kmh, A+B, A*3).

    PKE is the positive kinetic energy per distance, sum of max(v_i^2 - v_(i-1)^2, 0)
    over the distance [m/s^2]; idle share is the share of time at standstill.
    """
    if not dt_s > 0 or dt_s > 60:
        raise click.BadParameter("must be a time step above 0 and at most 60 s",
                                 param_hint="--dt-s")
    report = api.cycles(profiles, dt_s=dt_s, read=read_options_from(reading))
    if as_json:
        emit_json(report.to_dict())
        return
    if profiles:
        click.echo(table(list(report.rows), [("name", "profile", "")] + _STATS))
        return
    data = [r.to_dict() for r in report.rows]
    click.echo(table(data, [("name", "name", "")] + _STATS[:5]))
    click.echo("")
    width = output_width()
    for d in data:
        phases = f" Phases: {', '.join(d['phases'])}." if d["phases"] else ""
        click.echo("\n".join(textwrap.wrap(f"{d['name']}: {d['title']}; {d['issuing_body']}."
                                            f"{phases}", width, subsequent_indent="  ")))
