"""The JSON document of a lap report (``tractive lap --json``), metric or US."""

from __future__ import annotations

import numpy as np

from ..plain import plain
from ..units import MILE_M
from .simulate import LIMIT_NAMES, SPEED_CAP_MS

#: feet per metre (exact: 1 ft = 0.3048 m, NIST SP 811)
_FT_PER_M = 1.0 / 0.3048
#: energy-model keys carried over from the powertrain result when present
POWERTRAIN_KEYS = ("fuel_l", "fuel_kg", "battery_energy_kwh")


def lap_document(report) -> dict:
    """JSON-ready document of an :class:`tractive.api.LapReport` (see its ``to_dict``)."""
    sim = report.simulation
    track = report.track
    lap_s = float(sim.lap_time_s)
    finite = np.isfinite(lap_s)
    v = np.asarray(sim.speed_ms, float)
    out = {"vehicle": report.vehicle.name, "track": track.to_dict(), "laps": report.laps,
           "lap_time_s": lap_s if finite else None,
           "total_time_s": lap_s * report.laps if finite else None,
           "distance_m": float(track.length_m),
           "top_speed_kmh": float(np.max(v)) * 3.6,
           "min_speed_kmh": float(np.min(v)) * 3.6,
           "mean_speed_kmh": float(track.length_m / lap_s * 3.6) if finite else None}
    if report.energy is not None:
        wheel = report.energy.wheel.to_dict()
        out["positive_energy_kwh"] = wheel["positive_energy_kwh"]
        if report.energy.powertrain is not None:
            pt = report.energy.powertrain.to_dict()
            out.update({k: pt[k] for k in POWERTRAIN_KEYS if pt.get(k) is not None})
    else:
        out["positive_energy_kwh"] = None
    out["limits_share"] = {k: float(x) for k, x in sim.limits_share().items()}
    if report.trace:
        out["trace"] = _trace(sim)
    out = plain(out)
    return out if report.units == "metric" else _to_us(out)


def _trace(sim) -> list:
    """One dict per station: distance, time, speed, cornering limit, curvature, grade,
    binding limit."""
    tr = sim.track
    closed = tr.closed
    kappa = np.append(tr.curvature_1_per_m, tr.curvature_1_per_m[0]) if closed \
        else tr.curvature_1_per_m
    grade = np.append(tr.grade_fraction, tr.grade_fraction[0]) if closed \
        else tr.grade_fraction
    corner = np.where(sim.corner_speed_ms >= SPEED_CAP_MS * (1 - 1e-12), np.nan,
                      sim.corner_speed_ms * 3.6)
    rows = []
    for i in range(sim.distance_m.size):
        rows.append({"distance_m": float(sim.distance_m[i]), "time_s": float(sim.time_s[i]),
                     "speed_kmh": float(sim.speed_ms[i]) * 3.6,
                     "corner_speed_kmh": float(corner[i]),
                     "curvature_1_per_m": float(kappa[i]),
                     "grade_fraction": float(grade[i]),
                     "limit": LIMIT_NAMES[int(sim.limit[i])]})
    return rows


_SPEEDS = ("top_speed_kmh", "min_speed_kmh", "mean_speed_kmh", "speed_kmh",
           "corner_speed_kmh")


def _to_us(doc: dict) -> dict:
    """The document in US units: mph, miles (lap), feet (trace), US gallons."""
    from ..metrics import to_units

    out = {}
    for key, value in doc.items():
        if key in _SPEEDS:
            out[key.replace("_kmh", "_mph")] = None if value is None else value * 1000 / MILE_M
        elif key == "distance_m":
            out["distance_mi"] = value / MILE_M
        elif key == "trace":
            out[key] = [_trace_us(row) for row in value]
        else:
            out[key] = value
    out = to_units(out, "us")
    out["units"] = "us"
    return out


def _trace_us(row: dict) -> dict:
    """One trace row in US units (distance in feet, speeds in mph)."""
    out = {}
    for key, value in row.items():
        if key in _SPEEDS:
            out[key.replace("_kmh", "_mph")] = None if value is None else value * 1000 / MILE_M
        elif key == "distance_m":
            out["distance_ft"] = value * _FT_PER_M
        else:
            out[key] = value
    return out
