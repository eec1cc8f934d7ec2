"""``tractive coastdown`` and ``tractive coastdown-quick``: road load from coast-down tests."""

from __future__ import annotations

import contextlib
import os
import sys
import textwrap

import click

from .. import api
from . import cli
from ._checks import Number, ranged
from ._output import emit_json, fmt, table

#: choices and limits of the options (from the library)
CHOICES = api.coastdown_choices()
DEFAULTS = CHOICES["defaults"]

SAFETY = """\b
SAFETY: run coast-down tests only on closed roads or proving grounds where
the law allows them, with no other traffic and in safe weather. Coasting in
neutral changes how the vehicle brakes and steers (no engine braking; with
the engine off, possibly no brake or steering assistance). Follow local law
and the track's rules."""


#: checked numeric options (finite, physical ranges)
MASS = Number(0.0, CHOICES["max_mass_kg"], low_open=True, unit="kg")
MASS_STD = Number(0.0, CHOICES["max_mass_kg"], unit="kg")
ROTATING = Number(0.0, 1.0, unit="")
AREA = Number(0.0, 30.0, low_open=True, unit="m²")
WINDOW_SPEED = Number(0.0, 400.0, unit="km/h")
SPAN = Number(0.0, 400.0, low_open=True, unit="km/h")
GAP = Number(0.0, 60.0, low_open=True, unit="s")
AIR_T = Number(-60.0, 60.0, unit="°C")
AIR_P = Number(30000.0, 110000.0, unit="Pa")
K0 = Number(0.0, 0.02, unit="1/K")
SMOOTH = Number(0.5, 60.0, unit="s")
QUICK_SPEED = Number(0.0, 400.0, low_open=True, unit="km/h")
QUICK_TIME = Number(0.0, 3600.0, low_open=True, unit="s")
DENSITY = Number(0.5, 2.0, unit="kg/m³")


#: library field → command-line option, for errors about an option's value
_OPTION_OF = {"high_kmh": "--high", "high_time_s": "--high", "low_kmh": "--low",
              "low_time_s": "--low", "terms": "--terms", "output": "--output",
              "plot": "--plot"}


@contextlib.contextmanager
def _options_named():
    """Re-raise a library error about an argument as one about its command-line option
    (``min_span_kmh`` → ``--min-span-kmh``); errors naming a file pass unchanged."""
    try:
        yield
    except api.InputError as exc:
        ctx = click.get_current_context(silent=True)
        names = {}
        for p in (ctx.command.params if ctx else ()):
            long = [o for o in p.opts if o.startswith("--")]
            if isinstance(p, click.Option) and long:
                names[p.name] = long[0]
        option = _OPTION_OF.get(exc.field) or names.get(exc.field)
        if exc.field in ("output", "plot"):       # an output file: keep its name
            raise api.InputError(exc.message, file=exc.file, field=option,
                                 line=exc.line) from None
        if exc.file is None and option:
            raise api.InputError(exc.message, field=option, line=exc.line) from None
        raise


@cli.command("coastdown", help=f"""Road-load coefficients f0, f1, f2 (with covariance) from
coast-down logs.

\b
LOG is a CSV (time_s or an ISO timestamp; speed_kmh, speed_mph or speed_ms;
optional heading_deg, direction, run, wind_speed_ms, wind_direction_deg,
air_temperature_c, air_pressure_pa, elevation_m) or a GPX track. Coasting
runs are found automatically; acceleration, brake events, dropouts and speed
spikes are rejected with the reason shown. Runs in opposite directions are
combined so that a steady wind and the road slope cancel.

\b
Methods: speed-time (default) fits the closed-form speed-time solution to the
measured speeds; deceleration regresses the smoothed deceleration on speed
(SAE J2263 practice). Coefficients are corrected to reference conditions
(UN GTR No. 15 by default) and reported with standard uncertainties; -o
writes a road_load block with its covariance for a vehicle or study file.

{SAFETY}
""")
@click.argument("logs", nargs=-1, required=True, metavar="LOG [LOG ...]")
@click.option("--mass-kg", type=MASS, required=True,
              help=ranged("Vehicle test mass [kg].", MASS))
@click.option("--rotating-mass-fraction", type=ROTATING,
              default=DEFAULTS["rotating_mass_fraction"], show_default=True,
              help=ranged("Rotating-mass allowance [-]; inertial mass = mass × (1 + "
                          "fraction).", ROTATING))
@click.option("--mass-std-kg", type=MASS_STD, default=DEFAULTS["mass_std_kg"], show_default=True,
              help="Standard uncertainty of the test mass [kg]. Accepted: at least 0 and "
                   "below --mass-kg.")
@click.option("--frontal-area-m2", type=AREA, default=None,
              help=ranged("Frontal area [m²]; gives Cd from CdA.", AREA))
@click.option("--method", type=click.Choice(CHOICES["methods"]), default=DEFAULTS["method"],
              show_default=True,
              help="Fitting method.")
@click.option("--combine", type=click.Choice(CHOICES["combines"]), default=DEFAULTS["combine"],
              show_default=True,
              help="joint: all runs with a steady wind and slope term; pairs: average "
                   "opposite-direction pairs; none: no wind or slope terms (for runs in "
                   "one direction).")
@click.option("--terms", type=click.Choice(["3", "2"]), default=str(DEFAULTS["terms"]),
              show_default=True,
              help="3: f0 + f1·v + f2·v²; 2: f1 fixed at zero.")
@click.option("--speed-window-kmh", type=WINDOW_SPEED, nargs=2,
              default=DEFAULTS["speed_window_kmh"],
              show_default=True, metavar="LOW HIGH",
              help="Speeds fitted [km/h]. Accepted: 0 ≤ LOW < HIGH ≤ 400 km/h.")
@click.option("--min-span-kmh", type=SPAN, default=DEFAULTS["min_span_kmh"], show_default=True,
              help="Least speed drop a run must cover in the window [km/h]. Accepted: above "
                   "0 and at most HIGH − LOW of the window.")
@click.option("--max-gap-s", type=GAP, default=None,
              help=ranged("Longest gap allowed inside a run [s] (default max(4.5 s, 2.5 "
                          "samples)).", GAP))
@click.option("--keep", type=int, multiple=True, metavar="N",
              help="Use run N despite its rejection (repeatable).")
@click.option("--drop", type=int, multiple=True, metavar="N",
              help="Leave run N out (repeatable).")
@click.option("--reference", type=click.Choice(CHOICES["references"]),
              default=DEFAULTS["reference"], show_default=True,
              help="Reference conditions: gtr15 (20 °C, 100 kPa, K0 8.6e-3/K; values from "
                   "memory), j2263 (20 °C, 98.21 kPa, air only) or none.")
@click.option("--air-temperature-c", type=AIR_T, default=None,
              help=ranged("Test air temperature [°C] for logs without that column.", AIR_T))
@click.option("--air-pressure-pa", type=AIR_P, default=None,
              help=ranged("Test (station) air pressure [Pa] for logs without that column.",
                          AIR_P))
@click.option("--rolling-factor-per-k", type=K0, default=None,
              help=ranged("Rolling-resistance temperature factor K0 [1/K] (overrides the "
                          "standard's); the factor 1 + K0·(T − T_ref) must stay within "
                          "0.5-1.5.", K0))
@click.option("--grade-from-elevation", is_flag=True,
              help="Remove each run's mean grade, from its elevation_m column.")
@click.option("--smoothing-s", type=SMOOTH, default=DEFAULTS["smoothing_s"], show_default=True,
              help=ranged("Savitzky-Golay window of the deceleration method [s].", SMOOTH))
@click.option("--speed-column", type=click.Choice(CHOICES["speed_columns"]),
              default=None, help="Speed column to use when a CSV has several.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
@click.option("--wide", is_flag=True,
              help="Run table with every column (log, times, f1, deviation) and the "
                   "reasons on one line each; without it the table fits the terminal "
                   "(COLUMNS, else 100 characters).")
@click.option("-o", "--output", "output", default=None, metavar="FILE.yaml",
              help="Write the road load to this file: .yaml or .yml for the road_load "
                   "block (coefficients and covariance, with comments), .json for the whole "
                   "result as --json prints it (a vehicle file's from_coastdown reads its "
                   "road_load entry). The folder must exist.")
@click.option("--plot", "plot", default=None, metavar="FILE.png",
              help="Write a figure of the fitted speed-time curves and deceleration: .png, "
                   ".pdf or .svg. The folder must exist.")
def coastdown_command(logs, mass_kg, rotating_mass_fraction, mass_std_kg, frontal_area_m2,
                      method, combine, terms, speed_window_kmh, min_span_kmh, max_gap_s, keep,
                      drop, reference, air_temperature_c, air_pressure_pa,
                      rolling_factor_per_k, grade_from_elevation, smoothing_s, speed_column,
                      as_json, wide, output, plot):
    options = dict(mass_kg=mass_kg, rotating_mass_fraction=rotating_mass_fraction,
                   mass_std_kg=mass_std_kg, frontal_area_m2=frontal_area_m2, method=method,
                   combine=combine, terms=int(terms), speed_window_kmh=tuple(speed_window_kmh),
                   min_span_kmh=min_span_kmh, max_gap_s=max_gap_s, keep=keep, drop=drop,
                   reference=reference, air_temperature_c=air_temperature_c,
                   air_pressure_pa=air_pressure_pa, rolling_factor_per_k=rolling_factor_per_k,
                   grade_from_elevation=grade_from_elevation, smoothing_s=smoothing_s,
                   speed_column=speed_column)
    with _options_named():
        report = api.coastdown(list(logs), output=output, plot=plot, **options)
    data = report.to_dict()
    if as_json:
        emit_json(data)
        return
    _print_text(report.result, data, wide=wide)
    for w in report.written:
        click.echo(f"wrote {w}")


def _print_text(result, data, *, wide=False):
    """The text report: coefficients, corrections, fit quality, run table, notes; lines
    longer than the width (see :func:`_width`) are wrapped unless ``wide``."""
    width = _width()

    def say(text=""):
        if wide or len(text) <= width or "\n" in text:
            click.echo(text)
        else:
            click.echo(textwrap.fill(text, width, subsequent_indent="    ",
                                     break_on_hyphens=False))

    used = data["runs_used"]
    fit = result.fit
    say(f"Coast-down: {used} of {len(result.runs)} runs used ({result.method} fit, "
               f"combine {result.combine}, {result.terms} terms, "
               f"{result.speed_window_kmh[0]:g}-{result.speed_window_kmh[1]:g} km/h)")
    corr = result.corrections
    if corr.get("standard") and corr.get("applied"):
        head = f"at reference conditions of {corr['standard']} ({corr['basis']})"
    else:
        head = "at test conditions (not corrected)"
    say(f"road load {head}:")
    std = result.std
    say(f"  f0   {result.f0_n:10.2f} ± {std[0]:.2f} N")
    say(f"  f1   {result.f1_n_per_kmh:10.4f} ± {std[1]:.4f} N/(km/h)")
    say(f"  f2   {result.f2_n_per_kmh2:10.5f} ± {std[2]:.5f} N/(km/h)^2")
    line = (f"  CdA  {result.cda_m2:10.3f} ± {result.cda_std_m2:.3f} m^2 "
            f"(air {result.air_density_for_cda_kg_m3:.4f} kg/m^3)")
    if result.cd is not None:
        line += f"   Cd {result.cd:.3f} ± {result.cd_std:.3f}"
    say(line)
    say(f"  Crr  {result.crr:10.5f} ± {result.crr_std:.5f}  (f0 / (m g), test mass)")
    say("  (± one standard uncertainty; 95 % interval about ± 1.96 times it)")
    m = data["as_measured"]
    say(f"as measured: f0 {m['f0_n']:.2f} N, f1 {m['f1_n_per_kmh']:.4f} N/(km/h), "
               f"f2 {m['f2_n_per_kmh2']:.5f} N/(km/h)^2")
    for text in corr.get("applied", []):
        say(f"  corrected: {text}")
    if fit.wind_ms is not None:
        dir_a = next((r.run.direction for r in result.runs if r.run.group == "A"), "A")
        say(f"steady wind along the road {fit.wind_ms:.2f} ± {fit.wind_std_ms:.2f} m/s "
                   f"against direction {dir_a}; slope {100 * fit.grade:.3f} ± "
                   f"{100 * fit.grade_std:.3f} % uphill in direction {dir_a}")
    rms = (f"{data['residual_rms_kmh']:.3f} km/h" if "residual_rms_kmh" in data
           else f"{data['residual_rms_n']:.1f} N")
    say(f"fit: R² {fit.r_squared:.6f}, residual rms {rms}")
    say(f"agreement of runs within their noise: chi2 {fit.homogeneity_chi2:.1f} with "
               f"{fit.homogeneity_dof} dof (p = {fit.homogeneity_p:.2g})")
    if fit.between_dof is not None and any(x is not None for x in data["effective_dof"]):
        dofs = ", ".join("-" if x is None else f"{x:.1f}" for x in data["effective_dof"])
        say(f"uncertainty includes run-to-run variation ({fit.between_dof:.1f} dof); "
                   f"effective dof of f0, f1, f2: {dofs} (Student-t 95 % intervals)")
    say("")
    say(run_table(data["runs"], width, wide=wide))
    if data["notes"]:
        say("\nnotes:")
        for n in data["notes"]:
            say(f"  - {n}")


#: columns of the run table: (key, header, format); the wide table adds WIDE_COLUMNS
RUN_COLUMNS = [("run", "run", ".0f"), ("direction", "dir", ""),
               ("speed_start_kmh", "from km/h", ".1f"), ("speed_end_kmh", "to km/h", ".1f"),
               ("used_text", "used", ""), ("f0_n", "f0 N", ".1f"),
               ("f2_n_per_kmh2", "f2", ".3g")]
WIDE_COLUMNS = [("run", "run", ".0f"), ("log", "log", ""), ("direction", "direction", ""),
                ("start_s", "start s", ".1f"), ("end_s", "end s", ".1f"),
                ("speed_start_kmh", "from km/h", ".1f"), ("speed_end_kmh", "to km/h", ".1f"),
                ("used_text", "used", ""), ("f0_n", "f0 N", ".1f"),
                ("f1_n_per_kmh", "f1", ".3g"), ("f2_n_per_kmh2", "f2", ".3g"),
                ("deviation_n", "off N", "+.1f")]
#: narrowest reason column [characters] before the table is allowed to run wider
MIN_REASON_WIDTH = 24


def _width() -> int:
    """Columns to fit: the COLUMNS variable, else the terminal's width, else 100."""
    text = os.environ.get("COLUMNS", "")
    if text.strip().isdigit() and int(text) > 0:
        return int(text)
    try:
        if sys.stdout.isatty():
            return os.get_terminal_size(sys.stdout.fileno()).columns
    except OSError:
        pass
    return 100


def run_table(runs: list, width: int = 100, *, wide: bool = False) -> str:
    """The run table: the main columns with the reason wrapped to ``width`` characters,
    or (``wide``) every column with the reasons on one line."""
    rows = []
    for r in runs:
        why = r["reason"]
        if r.get("flag"):
            why = (why + "; " if why else "") + r["flag"]
        if r["notes"]:
            why = (why + "; " if why else "") + "; ".join(r["notes"])
        rows.append({**r, "used_text": "yes" if r["used"] else "no", "why": why})
    columns = WIDE_COLUMNS if wide else RUN_COLUMNS
    lines = table(rows, columns).splitlines()
    fixed = max(len(line) for line in lines)
    lines = [line.ljust(fixed) for line in lines]
    if wide:
        head = [lines[0] + "  reason / notes", lines[1] + "  " + "-" * 14]
        return "\n".join(head + [(line + "  " + row["why"]).rstrip()
                                  for line, row in zip(lines[2:], rows)])
    room = max(width - fixed - 2, MIN_REASON_WIDTH)
    out = [lines[0] + "  reason / notes", lines[1] + "  " + "-" * min(14, room)]
    for line, row in zip(lines[2:], rows):
        parts = textwrap.wrap(row["why"], room) or [""]
        out.append((line + "  " + parts[0]).rstrip())
        out += [" " * (fixed + 2) + p for p in parts[1:]]
    return "\n".join(out)


@cli.command("coastdown-quick", help=f"""Quick road-load estimate from two timed speed drops.

\b
Time the coast from a high speed to a lower one (--high START END SECONDS)
and over a low-speed interval (--low START END SECONDS), speeds in km/h.
The two-term model F = f0 + f2·v² (White and Korst, SAE 720099) is solved
exactly for both times. Assumes a level road and no wind (time both
directions and average), rolling resistance independent of speed, and the
vehicle in neutral. For uncertainties and corrections use 'tractive
coastdown' with logged speeds.

{SAFETY}
""")
@click.option("--mass-kg", type=MASS, required=True,
              help=ranged("Vehicle test mass [kg].", MASS))
@click.option("--rotating-mass-fraction", type=ROTATING, default=0.03, show_default=True,
              help=ranged("Rotating-mass allowance [-].", ROTATING))
@click.option("--high", "high", type=(QUICK_SPEED, QUICK_SPEED, QUICK_TIME), required=True,
              metavar="START_KMH END_KMH SECONDS",
              help="High-speed interval and its time. Accepted: speeds above 0 and at most "
                   "400 km/h, START above END; time above 0 and at most 3600 s.")
@click.option("--low", "low", type=(QUICK_SPEED, QUICK_SPEED, QUICK_TIME), required=True,
              metavar="START_KMH END_KMH SECONDS",
              help="Low-speed interval and its time (accepted as for --high).")
@click.option("--air-density-kg-m3", type=DENSITY, default=None,
              help=ranged("Air density [kg/m³] for CdA.", DENSITY))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def coastdown_quick_command(mass_kg, rotating_mass_fraction, high, low, air_density_kg_m3,
                            as_json):
    with _options_named():
        est = api.coastdown_quick(
            mass_kg=mass_kg, rotating_mass_fraction=rotating_mass_fraction,
            high_kmh=high[:2], high_time_s=high[2], low_kmh=low[:2], low_time_s=low[2],
            air_density_kg_m3=air_density_kg_m3)
    data = est.to_dict()
    if as_json:
        emit_json(data)
        return
    click.echo(f"two-interval estimate (inertial mass {est.inertial_mass_kg:g} kg):")
    click.echo(f"  f0  {est.f0_n:.2f} N          (mean-deceleration shortcut "
               f"{est.mean_decel_f0_n:.2f} N)")
    click.echo(f"  f2  {est.f2_n_per_kmh2:.5f} N/(km/h)^2   (shortcut "
               f"{est.mean_decel_f2_n_per_kmh2:.5f})")
    click.echo(f"  Crr {est.crr:.5f}" + (f"   CdA {fmt(est.cda_m2, '.3f')} m^2"
                                           if est.cda_m2 is not None else ""))
    click.echo("\n".join(textwrap.wrap("assumes: " + "; ".join(est.assumptions), _width(),
                                        subsequent_indent="  ")))
