"""``tractive compare``: a baseline and its modifications on the driving you do."""

from __future__ import annotations

import click

from .. import api
from . import cli
from ._output import emit_json, fmt, table
from ._reading import read_options_from, reading_options

#: columns of the text table (shown when present), metric and US units
_HEADLINE = ("positive_energy_wh_per_km", "positive_energy_wh_per_mi", "battery_wh_per_km",
             "battery_wh_per_mi", "fuel_l_per_100km", "fuel_economy_mpg", "range_km",
             "range_mi", "top_speed_kmh", "top_speed_mph", "annual_energy_cost", "payback_years")


@cli.command("compare")
@click.argument("study_file", metavar="STUDY.yaml")
@click.option("-o", "--output", "outputs", multiple=True, metavar="FILE",
              help="Write the result: .xlsx (workbook), .csv (summary table) or .json. "
                   "Repeat for several.")
@click.option("--plot", "plot_file", default=None, metavar="FILE",
              help="Draw each variant's headline changes with their intervals, one panel "
                   "per profile or mix, into FILE (.png, .svg or .pdf).")
@reading_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
@click.option("--draws", type=int, default=None, metavar="N",
              help=f"Monte Carlo draws (overrides the study; 0 = nominal only; at most "
                   f"{api.MAX_DRAWS}).")
@click.option("--seed", type=int, default=None, metavar="S",
              help="Random seed (overrides the study).")
@click.option("--metrics", default=None, metavar="KEY,KEY,...",
              help="Metrics of the table, by key (e.g. range_km,annual_energy_cost); "
                   "default: consumption, range, top speed, money and payback.")
@click.option("--quiet", is_flag=True,
              help="No progress bar and no notes on stderr (the notes stay in the output).")
@click.option("--all", "show_all", is_flag=True, help="Show every metric of the result.")
@click.option("--wide", is_flag=True,
              help="One wide row per variant and profile with every headline column "
                   "side by side (for wide terminals and copying).")
def compare_command(study_file, outputs, plot_file, as_json, draws, seed, metrics, show_all,
                    wide, quiet, **reading):
    """Compare a baseline vehicle with its modifications on every profile and duty mix.

    Reports energy, fuel or battery use, range, performance and money for each
    variant, the change against the baseline with a Monte Carlo interval, and
    how much of each change comes from aero, rolling, mass, downforce and
    powertrain (Shapley values).
    """
    # cheap checks first: no long run for a bad output name
    api.check_outputs(outputs, [study_file])
    if plot_file:
        api.check_figure(plot_file, [study_file])
    result = api.compare(study_file, draws=draws, seed=seed,
                         series=any(o.lower().endswith(".xlsx") for o in outputs),
                         read=read_options_from(reading), show_progress=not quiet)
    api.write_study_outputs(result, outputs)
    if plot_file:
        api.write_study_plot(result, plot_file)
    if as_json:
        emit_json(result.to_dict())
        for w in () if quiet else result.warnings:
            click.echo(f"tractive: note: {w}", err=True)
        return
    if wide:
        click.echo(text_summary(result))
    else:
        from ._study_text import summary_text

        click.echo(summary_text(result, metrics=metrics, show_all=show_all))
    for out in list(outputs) + ([plot_file] if plot_file else []):
        click.echo(f"wrote {out}")


def text_summary(result) -> str:
    """The wide table (--wide): each variant and profile with the headline metrics and
    changes side by side."""
    keys = [k for k in _HEADLINE if any(k in r.metrics for r in result.rows)]
    rows = []
    for r in result.rows:
        rec = {"variant": r.variant, "profile": r.profile}
        for k in keys:
            rec[k] = r.metrics.get(k)
            c = r.change.get(k)
            if c is None:
                rec[f"d_{k}"] = ""
            else:
                lo, hi = r.change_low.get(k), r.change_high.get(k)
                mark = "" if r.distinguishable.get(k, True) else " ~0"
                rng = f" [{fmt(lo, '+.2f')}, {fmt(hi, '+.2f')}]" if lo is not None and \
                    hi is not None and lo != hi else ""
                rec[f"d_{k}"] = f"{fmt(c, '+.2f')}{rng}{mark}"
        rows.append(rec)
    cols = [("variant", "variant", ""), ("profile", "profile", "")]
    for k in keys:
        unit = result.unit_of(k)
        cols.append((k, f"{k}", ".2f"))
        cols.append((f"d_{k}", f"change [{unit}]", ""))
    head = f"{result.study}  ({result.units} units; {result.uncertainty.get('draws', 0)} " \
           f"Monte Carlo draws, {result.uncertainty.get('confidence_pct', 95):g} % intervals; " \
           f"'~0' = not distinguishable from zero)"
    lines = [head, "", table(rows, cols)]
    if result.warnings:
        lines += [""] + [f"note: {w}" for w in result.warnings]
    return "\n".join(lines)
