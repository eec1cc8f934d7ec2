"""Range and consumption against constant speed, and the speed of greatest range.

At a constant speed v on a level road without wind the wheel force is the
road load F(v); the powertrain's steady-state consumption per km c(v) gives
the range R(v) = store / c(v). The speed of greatest range minimises c(v);
it is found on a 0.05 km/h grid over the swept span and refined with a
bounded scalar minimisation (Brent's method) around the best grid point.

With a constant auxiliary load P_aux and constant drive efficiency η on a
road load f0 + f2·v², c(v) = (f0 + f2·v²)/η + P_aux/v and the optimum is
v* = (η·P_aux / (2·f2))^(1/3) (set dc/dv = 0); see ``tests``.

References
----------
.. [1] R. P. Brent, *Algorithms for Minimization without Derivatives*,
   Prentice-Hall 1973, ch. 5 (as implemented by scipy.optimize.minimize_scalar).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..units import KMH_MS

#: default swept speeds [km/h]
DEFAULT_SPEEDS_KMH = tuple(range(20, 161, 10))


@dataclass(frozen=True)
class RangeCurve:
    """Range and consumption at constant speeds.

    Attributes
    ----------
    vehicle : str
    kind : str
        ``"electric"`` or ``"combustion"``.
    speed_kmh : (S,) array
    range_km : (S,) array
    columns : dict
        Further (S,) columns: ``battery_wh_per_km``, ``power_kw`` (battery power)
        (and ``wall_wh_per_km``) for electric; ``fuel_l_per_100km``, ``fuel_kg_per_100km``, ``co2_g_per_km``,
        ``gear``, ``engine_speed_rpm`` for combustion.
    feasible : (S,) bool array
        False where the motor or engine cannot hold the speed, or above a
        governor speed (``performance.governor_kmh``).
    best_speed_kmh, best_range_km : float
        Speed of greatest range within the swept span, and that range.
    best_at_edge : bool
        True when the best speed is an end of the span (range still rising
        beyond it).
    """

    vehicle: str
    kind: str
    speed_kmh: np.ndarray
    range_km: np.ndarray
    columns: dict = field(default_factory=dict)
    feasible: np.ndarray | None = None
    best_speed_kmh: float | None = None
    best_range_km: float | None = None
    best_at_edge: bool = False

    def rows(self) -> list:
        out = []
        for i, v in enumerate(self.speed_kmh):
            row = {"speed_kmh": float(v), "range_km": float(self.range_km[i]),
                   "feasible": bool(self.feasible[i])}
            for k, col in self.columns.items():
                val = col[i]
                row[k] = int(val) if k == "gear" else float(val)
            out.append(row)
        return out

    def to_dict(self) -> dict:
        return {"vehicle": self.vehicle, "powertrain": self.kind, "rows": self.rows(),
                "best_speed_kmh": self.best_speed_kmh, "best_range_km": self.best_range_km,
                "best_at_edge_of_span": self.best_at_edge}

    def to_frame(self):
        """The table as a pandas DataFrame (one row per speed)."""
        import pandas as pd

        return pd.DataFrame(self.rows())


def range_curve(vehicle, speeds_kmh=DEFAULT_SPEEDS_KMH, *, ambient_temperature_c=None
                ) -> RangeCurve:
    """Range and consumption of a vehicle at constant speeds (level road, no wind).

    Parameters
    ----------
    vehicle : Vehicle
        A vehicle with a powertrain.
    speeds_kmh : sequence of float
        Speeds [km/h], each > 0.
    ambient_temperature_c : float, optional
        Ambient temperature [°C] for a temperature-dependent auxiliary load.
    """
    from scipy.optimize import minimize_scalar

    pt = vehicle.powertrain
    if pt is None:
        raise InputError("the vehicle has no powertrain block; range needs one",
                         file=vehicle.source or None, field="powertrain")
    speeds = np.asarray(speeds_kmh, float)
    if speeds.ndim != 1 or speeds.size == 0 or not np.all(np.isfinite(speeds)) \
            or np.any(speeds <= 0):
        raise InputError("speeds must be positive numbers in km/h", field="speeds_kmh")
    speeds = np.unique(speeds)
    gov = getattr(vehicle.performance, "governor_kmh", None)

    def steady(v_ms):
        out = pt.steady(vehicle, v_ms, ambient_temperature_c=ambient_temperature_c)
        if gov is not None:   # a set speed limit (performance.governor_kmh)
            out["feasible"] = out["feasible"] & (v_ms <= gov * KMH_MS * (1 + 1e-12))
        return out

    res = steady(speeds * KMH_MS)
    if pt.kind == "electric":
        names = ["battery_wh_per_km", "wall_wh_per_km", "power_kw"]
    else:
        names = ["fuel_l_per_100km", "fuel_kg_per_100km", "co2_g_per_km", "gear",
                 "engine_speed_rpm"]
    columns = {k: np.asarray(res[k]) for k in names if res.get(k) is not None}
    # speed of greatest range: fine grid, then Brent's method around the best point
    lo, hi = float(speeds[0]), float(speeds[-1])
    best_v = best_r = None
    at_edge = False
    if hi > lo:
        grid = np.arange(lo, hi + 1e-9, 0.05)
        g = steady(grid * KMH_MS)
        c = np.where(g["feasible"], g["store_per_km"], np.inf)
        if np.any(np.isfinite(c)):
            k = int(np.argmin(c))
            best_v = float(grid[k])
            at_edge = k == 0 or k == len(grid) - 1 or not np.isfinite(c[k - 1]) \
                or not np.isfinite(c[k + 1])
            if not at_edge:
                def f(x):
                    s = steady(np.array([x * KMH_MS]))
                    return float(s["store_per_km"][0])
                opt = minimize_scalar(f, bounds=(grid[k - 1], grid[k + 1]), method="bounded",
                                      options={"xatol": 1e-6})
                if opt.success and opt.fun <= c[k]:
                    best_v = float(opt.x)
            s = steady(np.array([best_v * KMH_MS]))
            best_r = float(np.asarray(s["range_km"])[0])
    elif res["feasible"][0]:
        best_v, best_r, at_edge = lo, float(res["range_km"][0]), True
    return RangeCurve(vehicle=vehicle.name, kind=pt.kind, speed_kmh=speeds,
                      range_km=np.asarray(res["range_km"], float), columns=columns,
                      feasible=np.asarray(res["feasible"], bool), best_speed_kmh=best_v,
                      best_range_km=best_r, best_at_edge=bool(at_edge))


__all__ = ["RangeCurve", "range_curve", "DEFAULT_SPEEDS_KMH"]
