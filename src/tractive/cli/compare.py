"""``tractive compare``: a baseline and its modifications on the driving you do."""

from __future__ import annotations

import click

from ..errors import InputError
from . import cli
from ..report.output import study_inputs, write_output  # noqa: F401 (re-exported)
from ._output import emit_json, fmt, table

#: columns of the text table (shown when present), metric and US units
_HEADLINE = ("positive_energy_wh_per_km", "positive_energy_wh_per_mi", "battery_wh_per_km",
             "battery_wh_per_mi", "fuel_l_per_100km", "fuel_economy_mpg", "range_km",
             "range_mi", "top_speed_kmh", "top_speed_mph", "annual_energy_cost", "payback_years")


@cli.command("compare")
@click.argument("study_file", metavar="STUDY.yaml")
@click.option("-o", "--output", "outputs", multiple=True, metavar="FILE",
              help="Write the result: .xlsx (workbook), .csv (summary table) or .json. "
                   "Repeat for several.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
@click.option("--draws", type=int, default=None, metavar="N",
              help="Monte Carlo draws (overrides the study; 0 = nominal only; at most "
                   "200000).")
@click.option("--seed", type=int, default=None, metavar="S",
              help="Random seed (overrides the study).")
def compare_command(study_file, outputs, as_json, draws, seed):
    """Compare a baseline vehicle with its modifications on every profile and duty mix.

    Reports energy, fuel or battery use, range, performance and money for each
    variant, the change against the baseline with a Monte Carlo interval, and
    how much of each change comes from aero, rolling, mass, downforce and
    powertrain (Shapley values).
    """
    from ..study.spec import MAX_DRAWS

    if draws is not None and not 0 <= draws <= MAX_DRAWS:
        raise InputError(f"--draws must be from 0 to {MAX_DRAWS}, got {draws}")
    if seed is not None and seed < 0:
        raise InputError(f"--seed must not be negative, got {seed}")
    from ..report.common import check_target
    from ..study.engine import run_study

    for out in outputs:          # cheap checks first: no long run for a bad output name
        check_target(out, [study_file], suffixes=(".xlsx", ".csv", ".json"))
    result = run_study(study_file, draws=draws, seed=seed,
                       series=any(o.lower().endswith(".xlsx") for o in outputs))
    inputs = study_inputs(result)
    for out in outputs:          # now that the study's own input files are known
        check_target(out, inputs)
    from ..report.common import all_or_nothing

    with all_or_nothing():       # no output is created or replaced unless all were written
        for out in outputs:
            write_output(result, out, inputs=inputs)
    if as_json:
        emit_json(result.to_dict())
        for w in result.warnings:
            click.echo(f"tractive: note: {w}", err=True)
        return
    click.echo(text_summary(result))
    for out in outputs:
        click.echo(f"wrote {out}")


def text_summary(result) -> str:
    """A readable table: each variant and profile with the headline metrics and changes."""
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
