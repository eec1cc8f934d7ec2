"""Figures for people: range curves, and a study's headline changes with intervals.

Written with matplotlib's Agg backend, atomically, in the format of the file
ending (``.png``, ``.svg`` or ``.pdf``). Readable in black and white: each
series has its own line style and marker, intervals are drawn as error bars,
and every axis states its unit.
"""

from __future__ import annotations

from typing import Iterable, Sequence

from ..errors import InputError
from .common import atomic_write, check_target

#: file endings a figure can be written as
FIGURE_SUFFIXES = (".png", ".svg", ".pdf")
#: line styles and markers told apart without colour
_STYLES = (("-", "o"), ("--", "s"), (":", "^"), ("-.", "D"), ((0, (5, 1, 1, 1)), "v"),
           ((0, (1, 1)), "P"), ((0, (8, 2)), "X"), ((0, (3, 1, 1, 1, 1, 1)), "*"))


def _pyplot():
    """matplotlib's pyplot on the Agg backend (imported on first use)."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _save(fig, path, inputs) -> object:
    """Write a figure atomically in the format of its file ending, then close it."""
    from pathlib import Path

    plt = _pyplot()
    fmt = Path(path).suffix.lower().lstrip(".")

    def _write(tmp):
        fig.savefig(tmp, format=fmt, dpi=120)

    try:
        return atomic_write(path, _write, inputs=inputs)
    finally:
        plt.close(fig)


def check_figure_target(path, inputs: Iterable = ()) -> None:
    """Refuse a figure name with another ending, or one that would replace an input."""
    check_target(path, list(inputs), suffixes=FIGURE_SUFFIXES)


def plot_range_curves(curves: Sequence[dict], path, *, inputs: Iterable = ()):
    """Range and consumption against constant speed, one line per vehicle.

    Parameters
    ----------
    curves : sequence of dict
        Range-curve documents (``tractive range-curve --json``, metric or US):
        ``vehicle``, ``rows`` with the speed, range and consumption keys.
    path : path
        Figure file (.png, .svg or .pdf).
    """
    check_figure_target(path, inputs)
    plt = _pyplot()
    us = "speed_mph" in curves[0]["rows"][0]
    speed_key, range_key = ("speed_mph", "range_mi") if us else ("speed_kmh", "range_km")
    cons = [next((k for k in _CONSUMPTION if k in doc["rows"][0]), None) for doc in curves]
    kinds = list(dict.fromkeys(k for k in cons if k is not None))
    fig, axes = plt.subplots(1 + len(kinds), 1, figsize=(8, 3.6 * (1 + len(kinds))),
                             sharex=True, squeeze=False)
    axes = [a[0] for a in axes]
    for i, (doc, cons_key) in enumerate(zip(curves, cons)):
        ls, marker = _STYLES[i % len(_STYLES)]
        rows = doc["rows"]
        x = [r[speed_key] for r in rows]
        axes[0].plot(x, [r[range_key] for r in rows], linestyle=ls, marker=marker, ms=4,
                     color="k", label=doc["vehicle"])
        bad = [r for r in rows if not r.get("feasible", True)]
        if bad:
            axes[0].plot([r[speed_key] for r in bad], [r[range_key] for r in bad], "x",
                         color="0.4", ms=7)
        if cons_key is not None:
            ax = axes[1 + kinds.index(cons_key)]
            ax.plot(x, [r[cons_key] for r in rows], linestyle=ls, marker=marker, ms=4,
                    color="k", label=doc["vehicle"])
    axes[0].set_ylabel(f"range [{'mi' if us else 'km'}]")
    axes[0].set_title("range at constant speed (level road, no wind; x: beyond the drive)")
    for ax, key in zip(axes[1:], kinds):
        ax.set_ylabel(_CONSUMPTION[key])
    for ax in axes:
        ax.legend(fontsize=8)
        ax.grid(True, color="0.85")
    axes[-1].set_xlabel(f"speed [{'mph' if us else 'km/h'}]")
    fig.tight_layout()
    return _save(fig, path, inputs)


#: consumption column → axis label with its unit
_CONSUMPTION = {"battery_wh_per_km": "battery energy [Wh/km]",
                "battery_wh_per_mi": "battery energy [Wh/mi]",
                "fuel_l_per_100km": "fuel [L/100 km]", "fuel_economy_mpg": "fuel economy [mpg US]",
                "fuel_kg_per_100km": "fuel [kg/100 km]"}


def plot_study_changes(result, keys: Sequence[str], path, *, inputs: Iterable = ()):
    """The headline changes of every variant against the baseline, one panel per
    profile or mix: a horizontal bar per variant and metric with its Monte Carlo
    interval as an error bar (hatched bars when the interval includes zero).

    Parameters
    ----------
    result : StudyResult
    keys : sequence of str
        Metric keys to show (each gets its own row of panels).
    path : path
        Figure file (.png, .svg or .pdf).
    """
    check_figure_target(path, inputs)
    keys = [k for k in keys if any(r.change.get(k) for r in result.rows)]
    curves = list(result.range_curves)
    laps = list(dict.fromkeys(p for _, p, _ in getattr(result, "lap_runs", ())))
    if not keys and not curves and not laps:
        raise InputError("the study has no change to draw (no variant changes a headline "
                         "metric)", file=str(path))
    plt = _pyplot()
    profiles = [p.name for p in result.profiles]
    variants = [v.name for v in result.variants if v.role != "baseline"]
    row_h = 0.5 * len(variants) + 1.6
    heights = [row_h] * len(keys) + [4.0] * len(laps) + ([4.0] if curves else [])
    fig = plt.figure(figsize=(3.2 * len(profiles) + 1.5, sum(heights)))
    grid = fig.add_gridspec(len(heights), len(profiles), height_ratios=heights)
    for i, key in enumerate(keys):
        for j, profile in enumerate(profiles):
            _change_panel(fig.add_subplot(grid[i, j]), result, key, profile, variants,
                          first=(j == 0))
    for i, profile in enumerate(laps):
        runs = [(v, sim) for v, p, sim in result.lap_runs if p == profile]
        _lap_panel(fig.add_subplot(grid[len(keys) + i, :]), profile, runs, result.units)
    if curves:
        _range_panel(fig.add_subplot(grid[len(keys) + len(laps), :]), curves)
    fig.suptitle(f"{result.study}: change against the baseline "
                 f"({result.uncertainty.get('confidence_pct', 95):g} % intervals)",
                 fontsize=10)
    fig.tight_layout()
    return _save(fig, path, inputs)


def _lap_panel(ax, profile: str, runs, units: str) -> None:
    """Speed against distance on a simulated lap for every variant's nominal vehicle;
    the regime that limits the baseline shaded (grey: cornering, hatched: braking)."""
    import numpy as np

    from ..lap.simulate import BRAKING, CORNERING
    from ..units import MILE_M

    us = units == "us"
    v_fac, v_unit = (3600 / MILE_M, "mph") if us else (3.6, "km/h")
    d_fac, d_unit = (1 / 0.3048, "ft") if us else (1.0, "m")
    base = runs[0][1]
    x0 = np.asarray(base.distance_m) * d_fac
    top = max(float(np.max(sim.speed_ms)) for _, sim in runs) * v_fac * 1.05
    for code, label, face, hatch in ((CORNERING, "cornering limit", "0.80", None),
                                     (BRAKING, "braking", "none", "///")):
        ax.fill_between(x0, 0, top, where=np.asarray(base.limit) == code, step="mid",
                        facecolor=face, edgecolor="0.6" if hatch else "none", hatch=hatch,
                        linewidth=0, label=f"{label} ({runs[0][0]})")
    for i, (variant, sim) in enumerate(runs):
        ls, _ = _STYLES[i % len(_STYLES)]
        t = float(np.asarray(sim.lap_time_s))
        ax.plot(np.asarray(sim.distance_m) * d_fac, np.asarray(sim.speed_ms) * v_fac,
                linestyle=ls, color="k", lw=1.2,
                label=f"{variant}  {t:.2f} s" if np.isfinite(t) else f"{variant} (stalls)")
    ax.set_ylim(0, top)
    ax.set_xlabel(f"distance along the lap [{d_unit}]")
    ax.set_ylabel(f"speed [{v_unit}]")
    ax.set_title(f"{profile}: simulated lap of each variant", fontsize=9)
    ax.legend(fontsize=7, ncol=2)


def _range_panel(ax, curves) -> None:
    """Range against constant speed of every variant (nominal vehicles)."""
    for i, c in enumerate(curves):
        ls, marker = _STYLES[i % len(_STYLES)]
        ax.plot(c.columns[c.speed_key], c.columns[c.range_key], linestyle=ls, marker=marker,
                ms=3, color="k", label=c.variant)
    unit_speed = "mph" if curves[0].speed_key.endswith("mph") else "km/h"
    unit_range = "mi" if curves[0].range_key.endswith("_mi") else "km"
    ax.set_xlabel(f"constant speed [{unit_speed}] (level road, no wind)")
    ax.set_ylabel(f"range [{unit_range}]")
    ax.legend(fontsize=8)
    ax.grid(True, color="0.85")


def _change_panel(ax, result, key, profile, variants, *, first: bool) -> None:
    """One panel: each variant's change of one metric on one profile."""
    from ..metrics import lookup

    ys, vals, errs, hatches = [], [], [[], []], []
    for k, name in enumerate(variants):
        row = next((r for r in result.rows if r.variant == name and r.profile == profile),
                   None)
        if row is None or key not in row.change:
            continue
        c = row.change[key]
        lo, hi = row.change_low.get(key), row.change_high.get(key)
        ys.append(k)
        vals.append(c)
        errs[0].append(max(0.0, c - lo) if lo is not None else 0.0)
        errs[1].append(max(0.0, hi - c) if hi is not None else 0.0)
        hatches.append("" if row.distinguishable.get(key, True) else "//")
    bars = ax.barh(ys, vals, xerr=errs, color="0.75", edgecolor="k", capsize=3)
    for bar, hatch in zip(bars, hatches):
        bar.set_hatch(hatch)
    ax.axvline(0.0, color="k", lw=0.8)
    ax.set_yticks(range(len(variants)))
    ax.set_yticklabels(variants if first else [""] * len(variants), fontsize=8)
    ax.invert_yaxis()
    m = lookup(key)
    label = key if m is None else m.label
    ax.set_xlabel(f"{label} [{result.unit_of(key)}]", fontsize=8)
    ax.set_title(profile, fontsize=9)
    ax.tick_params(axis="x", labelsize=8)
    ax.grid(True, axis="x", color="0.85")
