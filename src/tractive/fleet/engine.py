"""The fleet batch: a frame of trip samples in, a small frame of per-trip sums out.

:func:`trip_batch` is the whole computation for any piece of a trips table
that holds whole trips: in-process on each chunk of rows, in a process pool,
or under ``dask.dataframe.map_partitions`` on a partition. It has no per-step
Python loop:

1. **Resampling.** Each trip is shifted to start at 0 s and linearly
   interpolated onto a uniform grid 0, Δt, 2Δt, ... up to the last point not
   after its last sample, as :func:`tractive.profiles.read_speed_csv` does for
   one file, with the same arithmetic as :func:`numpy.interp` (so a trip gives
   the same profile either way). All trips are interpolated in one pass: the
   bracketing samples come from one :func:`numpy.searchsorted` on the trips
   laid end to end.
2. **Intervals.** The grids of all trips are laid end to end and split into
   intervals by :func:`tractive.demand.interval_kinematics` (UN GTR No. 15
   Annex 7); the intervals that join one trip's last sample to the next trip's
   first are dropped, so that every trip keeps exactly its own T-1 intervals.
3. **Force and energy.** F_i = f0 + f1·v_i + f2·v_i² + m_inertial·a_i +
   m·g·sin θ_i with each interval's vehicle coefficients taken by index (the
   vehicle axis is a gather, the variant axis a leading array axis); the
   positive energy of a trip is Σ F_i·d_i over its intervals with F_i > 0,
   the negative energy Σ −F_i·d_i over those with F_i < 0, as in
   :func:`tractive.demand.wheel_demand`. Segment sums use
   :func:`numpy.add.reduceat`.
4. **Powertrain.** Vehicles with a powertrain go through its per-interval
   model (:meth:`~tractive.powertrain.electric.ElectricPowertrain.battery_power_w`,
   :meth:`~tractive.powertrain.combustion.CombustionPowertrain.operation`) on
   the intervals of the vehicles that share it, once per variant and
   powertrain, and are summed per trip as their ``consume`` sums one profile.
   A combustion engine that stops at rest recharges its accessories' energy
   while running at a factor that depends on each trip, so those trips go
   through ``consume`` one by one (a loop over trips, not over steps).

Checks: a trip with a negative speed, a speed above
:data:`~tractive.limits.MAX_USER_SPEED_KMH`, a time gap longer than
``max_gap_s``, a span shorter than one step, a grade beyond ±100 %, or a step
whose acceleration exceeds :data:`~tractive.limits.MAX_USER_ACCEL_MS2` is
left out with its reason; so is a trip that some variant cannot follow (its
motor or engine would need more than it gives). Nothing is left out silently.

References
----------
.. [1] UN GTR No. 15, Worldwide harmonized Light vehicles Test Procedure,
   Annex 7 (cycle energy demand).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..demand import interval_kinematics
from ..limits import MAX_GRADE_FRACTION, MAX_USER_ACCEL_MS2, MAX_USER_SPEED_KMH
from ..units import KWH_J

#: per-trip output columns (floats) of :func:`trip_batch`
SUM_COLUMNS = ("distance_m", "duration_s", "positive_j", "negative_j", "battery_j", "wall_j",
               "fuel_kg", "fuel_l", "co2_kg", "limit_s")
#: all output columns, in order
BATCH_COLUMNS = ("vehicle_id", "trip_id", "variant") + SUM_COLUMNS + ("reason", "file", "line")


@dataclass(frozen=True)
class FleetModel:
    """Everything a batch needs about the vehicles and the variants (picklable).

    Attributes
    ----------
    vehicle_ids : tuple of str
    variants : tuple of str
        Variant names, the baseline first.
    coefficients : (V, N, 5) array
        Per variant and vehicle: f0 [N], f1 [N/(m/s)], f2 [N/(m/s)²], inertial
        mass [kg], m·g [N].
    powertrains : tuple of tuples
        ``powertrains[v][n]``: the powertrain of vehicle n in variant v, or None.
    dt_s, max_gap_s, grade_window_m : float
        Resampling step [s], longest gap between samples [s], grade window [m].
    """

    vehicle_ids: tuple
    variants: tuple
    coefficients: np.ndarray
    powertrains: tuple
    dt_s: float = 1.0
    max_gap_s: float = 60.0
    grade_window_m: float = 100.0
    index: dict = field(default_factory=dict, compare=False)

    def vehicle_index(self, ids) -> np.ndarray:
        """Positions of vehicle ids in :attr:`vehicle_ids`."""
        index = self.index or {v: i for i, v in enumerate(self.vehicle_ids)}
        return np.fromiter((index[v] for v in ids), int, count=len(ids))


@dataclass(frozen=True)
class Grid:
    """Trips on their uniform grids, laid end to end.

    ``trip`` gives each sample's trip (0 … K-1, in order); ``start`` and
    ``size`` each trip's first sample and sample count.
    """

    trip: np.ndarray
    time_s: np.ndarray
    speed_ms: np.ndarray
    grade_fraction: np.ndarray
    start: np.ndarray
    size: np.ndarray


def _trip_starts(df: pd.DataFrame) -> np.ndarray:
    """Boolean: the row starts a trip (a new vehicle_id/trip_id pair)."""
    vid, tid = df["vehicle_id"], df["trip_id"]
    # compared as Series: vectorized for Arrow-backed text as well as for objects
    new = (vid != vid.shift()).to_numpy(bool) | (tid != tid.shift()).to_numpy(bool)
    if len(new):
        new[0] = True
    return new


def _first_per_trip(bad: np.ndarray, trip: np.ndarray, k: int) -> np.ndarray:
    """Index of each trip's first flagged row (-1 where none)."""
    out = np.full(k, -1)
    idx = np.flatnonzero(bad)
    if idx.size:
        trips, first = np.unique(trip[idx], return_index=True)
        out[trips] = idx[first]
    return out


def _row_checks(rel, t_gap, v, grade, trip, starts, k, model) -> dict:
    """Trip → reason for the checks on the recorded samples."""
    dt = model.dt_s
    last = np.append(starts[1:], len(v)) - 1
    span = rel[last]
    same = np.zeros(len(v), bool)
    same[1:] = trip[1:] == trip[:-1]
    gaps = np.zeros(len(v))
    gaps[1:] = t_gap
    checks = [
        (v < 0, lambda i: f"speed {v[i] * 3.6:.4g} km/h below 0"),
        (v * 3.6 > MAX_USER_SPEED_KMH * (1 + 1e-12),
         lambda i: f"speed {v[i] * 3.6:.0f} km/h above the {MAX_USER_SPEED_KMH:g} km/h no road "
                   "vehicle exceeds"),
        (same & (gaps > model.max_gap_s),
         lambda i: f"time gap of {gaps[i]:g} s, longer than max_gap_s = {model.max_gap_s:g} s"),
    ]
    if grade is not None:
        checks.append((np.abs(grade) > 100.0, lambda i: f"grade {grade[i]:g} % beyond ±100 %"))
    reasons = {}
    for bad, text in checks:
        for j, i in enumerate(_first_per_trip(bad, trip, k)):
            if i >= 0 and j not in reasons:
                reasons[j] = (text(i), int(i))
    short = np.flatnonzero(span < dt * (1 - 1e-9))
    for j in short:
        reasons.setdefault(int(j), (f"spans {span[j]:g} s, less than one step dt_s = {dt:g} s",
                                    int(starts[j])))
    return reasons


def _interp(x, trip_x, rel, fp, row_start, row_end):
    """numpy.interp of every trip at once: ``x`` [s] on trip ``trip_x``, samples ``rel``
    (local times) and values ``fp``; same arithmetic as :func:`numpy.interp`."""
    span = rel[row_end]
    offset = np.concatenate([[0.0], np.cumsum(span + 1.0)[:-1]])
    trip_rows = np.repeat(np.arange(len(row_start)), row_end - row_start + 1)
    t_global = offset[trip_rows] + rel
    i = np.searchsorted(t_global, offset[trip_x] + x, side="right") - 1
    lo, hi = row_start[trip_x], row_end[trip_x]
    i = np.clip(i, lo, hi)
    i = np.where(rel[i] > x, np.maximum(i - 1, lo), i)             # rounding of the offset
    up = np.minimum(i + 1, hi)
    i = np.where((i < hi) & (rel[up] <= x), up, i)
    j = np.minimum(i + 1, hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = (fp[j] - fp[i]) / (rel[j] - rel[i])
        val = slope * (x - rel[i]) + fp[i]
    return np.where((x == rel[i]) | (i == hi), fp[i], val)


def resample_trips(df: pd.DataFrame, model: FleetModel):
    """Trips of a checked frame on their uniform grids.

    Returns
    -------
    (keys, grid, reasons)
        ``keys``: per trip (vehicle_id, trip_id, file, first line); ``grid``: the
        kept trips' samples (:class:`Grid`, trips numbered among the kept);
        ``reasons``: trip number (among all) → (reason, row) for left-out trips;
        ``kept``: numbers of the kept trips.
    """
    new = _trip_starts(df)
    starts = np.flatnonzero(new)
    k = len(starts)
    row_sizes = np.diff(np.append(starts, len(df)))
    trip = np.repeat(np.arange(k), row_sizes)
    if "time_ns" in df.columns and df["time_ns"].notna().all():
        ns = df["time_ns"].to_numpy(np.int64)
        rel = (ns - np.repeat(ns[starts], row_sizes)) / 1e9
    else:
        t = df["time_s"].to_numpy(float)
        rel = t - np.repeat(t[starts], row_sizes)
    v = df["speed_ms"].to_numpy(float)
    grade_pct = df["grade_pct"].to_numpy(float) if "grade_pct" in df.columns else None
    elev = df["elevation_m"].to_numpy(float) if "elevation_m" in df.columns else None
    reasons = _row_checks(rel, np.diff(rel), v, grade_pct, trip, starts, k, model)
    keep = np.ones(k, bool)
    keep[list(reasons)] = False
    rows = slice(None) if keep.all() else np.repeat(keep, row_sizes)
    ends = np.append(starts[1:], len(df)) - 1
    # kept rows only
    rel_k, v_k = rel[rows], v[rows]
    kept = np.flatnonzero(keep)
    sizes_rows = (ends - starts + 1)[kept]
    row_start = np.concatenate([[0], np.cumsum(sizes_rows)[:-1]]).astype(int)
    row_end = row_start + sizes_rows - 1
    dt = model.dt_s
    span = rel_k[row_end] if len(kept) else np.zeros(0)
    n_grid = (np.floor(span / dt + 1e-9) + 1).astype(int)
    g_start = np.concatenate([[0], np.cumsum(n_grid)[:-1]]).astype(int)
    gtrip = np.repeat(np.arange(len(kept)), n_grid)
    x = (np.arange(int(n_grid.sum())) - g_start[gtrip]) * dt
    # samples already on the grid (a logger at the step): the values are the samples,
    # exactly what numpy.interp returns at its own points
    on_grid = len(x) == len(rel_k) and np.array_equal(x, rel_k)

    def interp(values):
        return values if on_grid else _interp(x, gtrip, rel_k, values, row_start, row_end)

    speed = interp(v_k)
    if grade_pct is not None:
        grade = interp(grade_pct[rows] / 100.0)
    elif elev is not None:
        grade = _grades_from_elevation(x, gtrip, speed, interp(elev[rows]), g_start, n_grid,
                                       model)
    else:
        grade = np.zeros_like(x)
    grid = Grid(gtrip, x, speed, grade, g_start, n_grid)
    # plausibility of the resampled trace (as for one speed file)
    accel = np.diff(speed) / dt
    bad = (np.abs(accel) > MAX_USER_ACCEL_MS2) & (gtrip[1:] == gtrip[:-1])
    if bad.any():
        first = _first_per_trip(np.append(bad, False), gtrip, len(kept))
        drop = np.flatnonzero(first >= 0)
        for j in drop:
            i = first[j]
            tj = int(kept[j])
            reasons[tj] = (f"speed changes by {(speed[i + 1] - speed[i]) * 3.6:+.1f} km/h within "
                           f"{dt:g} s near {x[i + 1]:g} s, more than {MAX_USER_ACCEL_MS2:g} m/s²"
                           " (a logging glitch or a unit mistake?)", int(starts[tj]))
        grid, kept = _drop_trips(grid, kept, drop)
    keys = pd.DataFrame({"vehicle_id": df["vehicle_id"].iloc[starts].to_numpy(object),
                         "trip_id": df["trip_id"].iloc[starts].to_numpy(object),
                         "file": df["file"].iloc[starts].to_numpy(object),
                         "line": df["line"].iloc[starts].to_numpy()})
    return keys, grid, reasons, kept


def _drop_trips(grid: Grid, kept: np.ndarray, drop: np.ndarray):
    """The grid without some trips (positions among the kept), renumbered."""
    keep_t = np.ones(len(kept), bool)
    keep_t[drop] = False
    mask = keep_t[grid.trip]
    renum = np.cumsum(keep_t) - 1
    size = grid.size[keep_t]
    start = np.concatenate([[0], np.cumsum(size)[:-1]]).astype(int)
    return (Grid(renum[grid.trip[mask]], grid.time_s[mask], grid.speed_ms[mask],
                 grid.grade_fraction[mask], start, size), kept[keep_t])


def _grades_from_elevation(x, gtrip, speed, z, g_start, n_grid, model):
    """Grade per sample from elevation, trip by trip (the smoothing of
    :func:`tractive.profiles.read_speed_csv`; a loop over trips, not steps)."""
    from ..profiles import _grade_from_elevation

    dt = model.dt_s
    step = np.zeros_like(speed)
    step[1:] = 0.5 * (speed[1:] + speed[:-1]) * dt
    out = np.empty_like(speed)
    for s0, n in zip(g_start, n_grid):
        sl = slice(s0, s0 + n)
        s = np.concatenate([[0.0], np.cumsum(step[s0 + 1:s0 + n])])
        out[sl] = _grade_from_elevation(s, z[sl], model.grade_window_m, MAX_GRADE_FRACTION)
    return out


def wheel_sums(grid: Grid, coefficients: np.ndarray, vehicle_of_trip: np.ndarray) -> dict:
    """Per-trip wheel energy by GTR 15 Annex 7 over trips laid end to end.

    Parameters
    ----------
    grid : Grid
    coefficients : (V, N, 5) array
        f0 [N], f1 [N/(m/s)], f2 [N/(m/s)²], inertial mass [kg], m·g [N].
    vehicle_of_trip : (K,) int array
        Each trip's vehicle (index into the N axis).

    Returns
    -------
    dict with ``force_n`` (V, M), interval arrays (M,) ``speed_ms``, ``dt_s``,
    ``trip``, and per-trip sums ``distance_m``, ``duration_s`` (K,),
    ``positive_j``, ``negative_j`` (V, K).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        iv = interval_kinematics(grid.time_s, grid.speed_ms, grid.grade_fraction)
    inside = grid.trip[1:] == grid.trip[:-1]          # not across a trip boundary
    v = iv.speed_ms[inside]
    dt = iv.dt_s[inside]
    a = iv.accel_ms2[inside]
    sin = iv.sin_grade[inside]
    d = iv.distance_m[inside]
    trip = grid.trip[1:][inside]
    # each trip's coefficients repeated over its intervals (the vehicle axis by index)
    c_trip = coefficients[:, vehicle_of_trip, :]      # (V, K, 5)

    def per_interval(j):
        return np.repeat(c_trip[..., j], grid.size - 1, axis=-1)

    force = per_interval(0) + per_interval(1) * v + per_interval(2) * (v * v) + \
        per_interval(3) * a + per_interval(4) * sin
    offsets = np.concatenate([[0], np.cumsum(grid.size - 1)[:-1]]).astype(int)
    k = len(grid.size)
    if not k:
        z = np.zeros((coefficients.shape[0], 0))
        return {"force_n": force, "speed_ms": v, "dt_s": dt, "trip": trip,
                "distance_m": np.zeros(0), "duration_s": np.zeros(0), "positive_j": z,
                "negative_j": z}
    pos = np.add.reduceat(np.where(force > 0.0, force * d, 0.0), offsets, axis=-1)
    neg = np.add.reduceat(np.where(force < 0.0, -force * d, 0.0), offsets, axis=-1)
    return {"force_n": force, "speed_ms": v, "dt_s": dt, "trip": trip,
            "distance_m": np.add.reduceat(d, offsets), "duration_s": np.add.reduceat(dt, offsets),
            "positive_j": pos, "negative_j": neg}


def _powertrain_sums(ws: dict, model: FleetModel, vehicle_of_trip, out: dict) -> None:
    """Battery, wall, fuel and CO2 per trip and variant (in place in ``out``)."""
    k = len(vehicle_of_trip)
    veh_iv = vehicle_of_trip[ws["trip"]]
    for vi in range(len(model.variants)):
        pts = model.powertrains[vi]
        groups: dict = {}
        for n, pt in enumerate(pts):
            if pt is not None:
                groups.setdefault(id(pt), (pt, []))[1].append(n)
        for pt, members in groups.values():
            is_member = np.zeros(len(pts), bool)
            is_member[members] = True
            mask = is_member[veh_iv]
            if not mask.any():
                continue
            trips = ws["trip"][mask]
            f = ws["force_n"][vi, mask]
            v = ws["speed_ms"][mask]
            dt = ws["dt_s"][mask]
            tmask = is_member[vehicle_of_trip]

            def seg(x):
                return np.bincount(trips, weights=x, minlength=k)

            if getattr(pt, "kind", "") == "electric":
                parts = pt.battery_power_w(f, v)
                aux_j = pt.auxiliary_power(None) * ws["duration_s"]
                battery = seg(parts["traction_w"] * dt) - seg(parts["regen_w"] * dt) + aux_j
                out["battery_j"][vi, tmask] = battery[tmask]
                if pt.charger_efficiency is not None:
                    wall = battery / float(np.asarray(pt.charger_efficiency, float))
                    out["wall_j"][vi, tmask] = wall[tmask]
                out["limit_s"][vi, tmask] = seg(np.where(parts["over_limit"], dt, 0.0))[tmask]
                continue
            if getattr(pt, "engine_off_at_rest", False):
                fuel_kg, limit = _engine_off_trips(pt, f, v, dt, trips, k)
            else:
                op = pt.operation(f, v)
                fuel_kg = seg(op["fuel_kg_s"] * dt)
                limit = seg(np.where(op["over_limit"], dt, 0.0))
            out["fuel_kg"][vi, tmask] = fuel_kg[tmask]
            if pt.fuel.liquid:
                out["fuel_l"][vi, tmask] = fuel_kg[tmask] / pt.fuel.density_kg_per_l
            out["co2_kg"][vi, tmask] = fuel_kg[tmask] * pt.fuel.co2_kg_per_kg
            out["limit_s"][vi, tmask] = limit[tmask]


def _engine_off_trips(pt, f, v, dt, trips, k):
    """Fuel [kg] and time beyond the engine's limits [s] per trip for an engine that
    stops at rest (the accessory factor depends on each trip: one call per trip)."""
    from ..powertrain._common import STANDSTILL_MS

    fuel = np.zeros(k)
    limit = np.zeros(k)
    bounds = np.flatnonzero(np.diff(trips)) + 1
    for sl in np.split(np.arange(len(trips)), bounds):
        if not sl.size:
            continue
        duration = float(np.sum(dt[sl]))
        running = float(np.sum(np.where(v[sl] > STANDSTILL_MS, dt[sl], 0.0)))
        scale = duration / running if running > 0 else 1.0
        op = pt.operation(f[sl], v[sl], accessory_scale=scale)
        j = trips[sl[0]]
        fuel[j] = np.sum(op["fuel_kg_s"] * dt[sl])
        limit[j] = np.sum(np.where(op["over_limit"], dt[sl], 0.0))
    return fuel, limit


def trip_batch(df: pd.DataFrame, model: FleetModel) -> pd.DataFrame:
    """Per-trip sums of every variant for a frame of whole trips.

    Parameters
    ----------
    df : DataFrame
        Checked trip samples (see :func:`tractive.fleet.tables.normalize_chunk`):
        ``vehicle_id``, ``trip_id``, ``time_s`` (or ``time_ns``), ``speed_ms``,
        optional ``grade_pct`` / ``elevation_m``, ``file``, ``line``.
    model : FleetModel

    Returns
    -------
    DataFrame with :data:`BATCH_COLUMNS`: one row per kept trip and variant
    (energies in J, ``fuel_kg``, ``fuel_l``, ``co2_kg``, ``limit_s``: time the
    variant cannot follow), and one row (variant "") per left-out trip with its
    ``reason``.
    """
    if not len(df):
        return _empty()
    keys, grid, reasons, kept = resample_trips(df, model)
    vehicle_of_trip = model.vehicle_index(keys["vehicle_id"].to_numpy(object)[kept])
    ws = wheel_sums(grid, model.coefficients, vehicle_of_trip)
    n_var = len(model.variants)
    k = len(kept)
    nan = np.full((n_var, k), np.nan)
    out = {"positive_j": ws["positive_j"], "negative_j": ws["negative_j"],
           "battery_j": nan.copy(), "wall_j": nan.copy(), "fuel_kg": nan.copy(),
           "fuel_l": nan.copy(), "co2_kg": nan.copy(), "limit_s": np.zeros((n_var, k))}
    _powertrain_sums(ws, model, vehicle_of_trip, out)
    cannot = out["limit_s"] > 0
    trip_reason = np.full(k, "", dtype=object)
    for j in np.flatnonzero(cannot.any(axis=0)):
        names = [model.variants[vi] for vi in np.flatnonzero(cannot[:, j])]
        secs = max(out["limit_s"][vi, j] for vi in np.flatnonzero(cannot[:, j]))
        trip_reason[j] = (f"cannot be followed by {', '.join(names)}: for {secs:g} s it would "
                          "need more than the motor or engine gives")
    frame = {
        "vehicle_id": np.tile(keys["vehicle_id"].to_numpy(object)[kept], n_var),
        "trip_id": np.tile(keys["trip_id"].to_numpy(object)[kept], n_var),
        "variant": np.repeat(np.array(model.variants, dtype=object), k),
        "distance_m": np.tile(ws["distance_m"], n_var),
        "duration_s": np.tile(ws["duration_s"], n_var),
    }
    for col in SUM_COLUMNS[2:]:
        frame[col] = out[col].reshape(-1)
    frame["reason"] = np.tile(trip_reason, n_var)
    frame["file"] = np.tile(keys["file"].to_numpy(object)[kept], n_var)
    frame["line"] = np.tile(keys["line"].to_numpy()[kept], n_var)
    result = pd.DataFrame(frame)
    if reasons:
        idx = np.array(sorted(reasons))
        bad = {"vehicle_id": keys["vehicle_id"].to_numpy(object)[idx],
               "trip_id": keys["trip_id"].to_numpy(object)[idx],
               "variant": np.full(len(idx), "", dtype=object)}
        for col in SUM_COLUMNS:
            bad[col] = np.full(len(idx), np.nan)
        bad["reason"] = np.array([reasons[i][0] for i in idx], dtype=object)
        bad["file"] = keys["file"].to_numpy(object)[idx]
        bad["line"] = np.array([int(df["line"].iat[reasons[i][1]]) for i in idx])
        result = pd.concat([result, pd.DataFrame(bad)], ignore_index=True)
    return result[list(BATCH_COLUMNS)]


def _empty() -> pd.DataFrame:
    """A batch result with no rows (the columns and types of :func:`trip_batch`)."""
    data = {c: pd.Series(dtype=object) for c in ("vehicle_id", "trip_id", "variant")}
    data.update({c: pd.Series(dtype=float) for c in SUM_COLUMNS})
    data["reason"] = pd.Series(dtype=object)
    data["file"] = pd.Series(dtype=object)
    data["line"] = pd.Series(dtype="int64")
    return pd.DataFrame(data)[list(BATCH_COLUMNS)]


def joules_to_kwh(x):
    """Energy [J] → [kWh]."""
    return np.asarray(x, float) / KWH_J
