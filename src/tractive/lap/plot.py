"""Figure of lap simulations: speed against distance with the limiting regime shaded,
over the curvature of the racing line. Readable in black and white."""

from __future__ import annotations

from typing import Iterable, Sequence

import numpy as np

from ..report.figures import _STYLES, _pyplot, _save, check_figure_target
from ..units import MILE_M
from .simulate import BRAKING, CORNERING

#: shading of the limiting regime: (code, label, grey level, hatch)
_SHADES = ((CORNERING, "cornering limit", "0.80", None), (BRAKING, "braking", "0.93", "///"))


def plot_laps(reports: Sequence, path, *, inputs: Iterable = ()):
    """Speed against distance for each report (one line style per vehicle) and the
    curvature of the first report's track below.

    The regime that limits the first vehicle is shaded (grey: cornering limit,
    hatched: braking; unshaded: drive). Units follow the first report
    (``units="us"``: mph and feet).
    """
    check_figure_target(path, inputs)
    plt = _pyplot()
    us = reports[0].units == "us"
    d_fac, d_unit = (1 / 0.3048, "ft") if us else (1.0, "m")
    v_fac, v_unit = (3600 / MILE_M, "mph") if us else (3.6, "km/h")
    fig, (ax, axk) = plt.subplots(2, 1, figsize=(9, 6.5), sharex=True,
                                  gridspec_kw={"height_ratios": [3, 1]})
    first = reports[0].simulation
    x0 = first.distance_m * d_fac
    top = max(float(np.max(r.simulation.speed_ms)) for r in reports) * v_fac * 1.05
    for code, label, grey, hatch in _SHADES:
        mask = first.limit == code
        ax.fill_between(x0, 0, top, where=mask, step="mid", facecolor=grey if hatch is None
                        else "none", edgecolor="0.6" if hatch else "none", hatch=hatch,
                        linewidth=0, label=f"{label} ({reports[0].vehicle.name})")
    for i, rep in enumerate(reports):
        sim = rep.simulation
        ls, _ = _STYLES[i % len(_STYLES)]
        t = sim.lap_time_s
        label = rep.vehicle.name + (f"  {t:.2f} s" if np.isfinite(t) else "  (stalls)")
        ax.plot(sim.distance_m * d_fac, sim.speed_ms * v_fac, linestyle=ls, color="k",
                lw=1.3, label=label)
    ax.set_ylim(0, top)
    ax.set_ylabel(f"speed [{v_unit}]")
    ax.set_title(f"lap on {reports[0].track.name}")
    ax.legend(fontsize=8, loc="lower right")
    ax.grid(True, color="0.85")
    tr = reports[0].track
    kappa = np.append(tr.curvature_1_per_m, tr.curvature_1_per_m[0]) if tr.closed \
        else tr.curvature_1_per_m
    axk.plot(x0, kappa / d_fac, color="k", lw=1.0)
    axk.axhline(0.0, color="0.6", lw=0.8)
    axk.set_ylabel(f"curvature [1/{d_unit}]")
    axk.set_xlabel(f"distance [{d_unit}]")
    axk.grid(True, color="0.85")
    fig.tight_layout()
    return _save(fig, path, inputs)
