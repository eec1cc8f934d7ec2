"""``tractive cycles``: the bundled drive cycles and their statistics."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._output import emit_json, table


@cli.command("cycles")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def cycles_command(as_json):
    """List the bundled drive cycles with duration, distance and speeds.

    Select a phase on its own as NAME:PHASE (for example wltc3b:low).
    """
    rows = api.cycles_table()
    if as_json:
        emit_json({"cycles": [r.to_dict() for r in rows]})
        return
    data = []
    for r in rows:
        d = r.to_dict()
        d["phases"] = ", ".join(d["phases"]) or "-"
        data.append(d)
    click.echo(table(data, [
        ("name", "name", ""), ("duration_s", "duration s", ".0f"),
        ("distance_km", "distance km", ".3f"), ("mean_speed_kmh", "mean km/h", ".1f"),
        ("max_speed_kmh", "max km/h", ".1f"), ("idle_share", "idle share", ".2f"),
        ("phases", "phases", ""), ("title", "title", ""),
    ]))
