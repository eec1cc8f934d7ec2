"""A fleet study: modifications applied across a fleet's recorded trips.

A study file with ``fleet: {vehicles: FILE, trips: FILE}`` in place of
``baseline`` and ``driving`` runs every vehicle of the vehicles table over its
own trips (:mod:`tractive.fleet.tables`), once as it is and once per
modification and combination. Modifications take the ``changes`` of any study
(:mod:`tractive.study.modify`); ``applies_to: GROUP`` (or a list of groups)
limits one to the vehicles of those groups, the others keep their baseline.

Totals: sums over the vehicles of each vehicle's recorded trips. When a
vehicle has an ``annual_distance_km`` (its table column, else
``economics.annual_distance_km``), its sums are scaled by annual distance /
recorded distance, so that the totals are per year; without one, the
recorded trips are taken as the year. Money follows the studies
(:mod:`tractive.study.economics`): energy cost from the prices, the saving
against the baseline, simple payback of the modification's cost (per vehicle
it applies to, times those vehicles) and its net present value over the
service life at the discount rate.

References
----------
.. [1] UN GTR No. 15, Annex 7 (cycle energy demand).
.. [2] NIST Handbook 135 (1995), Life-Cycle Costing Manual (simple payback,
   uniform present value factor).
"""

from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError
from ..spec import load_section
from ..units import KWH_J, STANDARD_GRAVITY_MS2
from . import tables
from .engine import BATCH_COLUMNS, FleetModel, trip_batch
from ..progress import progress

#: per-vehicle sums kept for each variant
SUMS = ("trips", "distance_m", "duration_s", "positive_j", "negative_j", "battery_j", "wall_j",
        "fuel_kg", "fuel_l", "co2_kg")


@dataclass(frozen=True)
class FleetSpec:
    """A validated fleet study."""

    name: str
    file: str
    currency: str
    vehicles_file: str
    trips_file: str
    vehicles: tuple
    modifications: tuple
    applies_to: dict
    combinations: tuple
    economics: object
    air_density_kg_m3: float | None
    dt_s: float
    max_gap_s: float
    inputs: tuple


def load_fleet_study(path) -> FleetSpec:
    """Read a study file with a ``fleet`` block (see the module docstring).

    Raises
    ------
    InputError
        Naming the study file (or the table), the field and the line.
    """
    from ..study import spec as sspec

    path = Path(path)
    sec = load_section(path)
    rd = sspec._Reader(path)
    name = sec.string("name", required=False, default=path.stem)
    sec.string("units", required=False, default="metric", choices=("metric", "us"))
    currency = sec.string("currency", required=False, default="EUR")
    sec.raw("notes")
    for key in ("baseline", "driving"):
        if sec.has(key):
            raise sec.error("a fleet study takes its vehicles and trips from the fleet block, "
                            f"not {key}", key)
    rho, _, _ = sspec._read_ambient(sec, rd)
    fl = sec.section("fleet")
    vpath = fl.path("vehicles")
    tpath = fl.path("trips")
    dt_s = fl.number("dt_s", required=False, default=1.0, min=0.01, max=60.0, unit="s")
    max_gap = fl.number("max_gap_s", required=False, default=60.0, min=0.01, unit="s")
    fl.finish()
    if not tpath.exists():
        raise fl.error(f"trips table not found: {tpath}", "trips")
    vehicles = tables.read_vehicles(vpath)
    mods = sspec._read_modifications(sec, rd, extra_keys=("applies_to",))
    groups = {v.group for v in vehicles}
    applies = {}
    for m, msec in zip(mods, sec.sections("modifications")):
        if m.vehicle is not None:
            raise InputError("a fleet modification takes changes, not a vehicle file",
                             file=m.file, field=f"{m.field}.vehicle", line=m.line)
        raw = msec.raw("applies_to")
        if raw is None:
            continue
        names = [raw] if isinstance(raw, str) else raw
        if not isinstance(names, list) or not all(isinstance(g, str) for g in names):
            raise msec.error("must be a group name or a list of group names", "applies_to")
        for g in names:
            if g not in groups:
                known = ", ".join(sorted(x for x in groups if x)) or "none"
                raise msec.error(f"no vehicle is in group '{g}'; groups: {known}",
                                 "applies_to")
        applies[m.name] = frozenset(names)
    combos = sspec._read_combinations(sec, mods)
    econ = sspec._read_economics(sec, rd, distance_required=False)
    if econ is None:
        for m in mods:
            if m.cost is not None:
                raise InputError("a modification cost needs an economics block with prices",
                                 file=m.file, field=f"{m.field}.cost", line=m.line)
    sec.raw("uncertainty")              # Monte Carlo is not run over a fleet
    sec.finish()
    inputs = [str(path), str(vpath), str(tpath)] + sorted(
        {v.vehicle.source for v in vehicles if v.vehicle.source})
    return FleetSpec(name, str(path), currency, str(vpath), str(tpath), tuple(vehicles),
                     tuple(mods), applies, tuple(combos), econ, rho, dt_s, max_gap,
                     tuple(inputs))


def _variant_members(spec: FleetSpec) -> list:
    """(variant name, [modifications]) for the baseline, modifications, combinations."""
    mods = {m.name: m for m in spec.modifications}
    out = [("baseline", [])]
    out += [(m.name, [m]) for m in spec.modifications]
    out += [(c.name, [mods[k] for k in c.members]) for c in spec.combinations]
    return out


def build_model(spec: FleetSpec, warnings: list) -> FleetModel:
    """Coefficients and powertrains of every vehicle in every variant."""
    from ..study import modify

    variants = _variant_members(spec)
    n = len(spec.vehicles)
    coeffs = np.zeros((len(variants), n, 5))
    pts = [[None] * n for _ in variants]
    noted = set()
    for j, fv in enumerate(spec.vehicles):
        base, _, _ = modify.nominal_params(fv.vehicle, fv.raw,
                                           air_density_kg_m3=spec.air_density_kg_m3)
        for vi, (vname, members) in enumerate(variants):
            ps = base
            for m in members:
                groups = spec.applies_to.get(m.name)
                if groups is not None and fv.group not in groups:
                    continue
                for ch in m.changes:
                    try:
                        new = modify.apply_change(ps, ch)
                    except InputError as exc:
                        raise InputError(f"vehicle '{fv.vehicle_id}': {exc.message}",
                                         file=exc.file, field=exc.field, line=exc.line) from None
                    note = modify.absolute_change_note(ps, new, ch)
                    if note and (m.name, ch.key) not in noted:
                        noted.add((m.name, ch.key))
                        warnings.append(f"modification '{m.name}' (vehicle "
                                        f"'{fv.vehicle_id}'): {note}")
                    ps = new
            rl = ps.road_load()
            coeffs[vi, j] = [float(np.asarray(rl.f0_n)[0]), float(np.asarray(rl.f1_n_per_ms)[0]),
                             float(np.asarray(rl.f2_n_per_ms2)[0]),
                             float(np.asarray(ps.inertial_mass_kg())[0]),
                             float(np.asarray(ps.mass_kg())[0]) * STANDARD_GRAVITY_MS2]
            pts[vi][j] = ps.powertrain if not ps.pt_values else ps.effective_powertrain(0)
    return FleetModel(tuple(v.vehicle_id for v in spec.vehicles), tuple(v for v, _ in variants),
                      coeffs, tuple(tuple(p) for p in pts), dt_s=spec.dt_s,
                      max_gap_s=spec.max_gap_s)


# ---------------------------------------------------------------------------
# running
# ---------------------------------------------------------------------------

def reduce_trips(frame: pd.DataFrame) -> tuple:
    """Per-trip batch rows → (per vehicle and variant sums, left-out trips)."""
    bad = frame["reason"] != ""
    rejected = frame.loc[bad, ["vehicle_id", "trip_id", "variant", "reason", "file", "line"]]
    rejected = rejected.drop_duplicates(["vehicle_id", "trip_id"])
    ok = frame.loc[~bad].copy()
    ok["trips"] = 1.0
    cols = list(SUMS)
    sums = ok.groupby(["vehicle_id", "variant"], sort=False)[cols].sum(min_count=1)
    return sums, rejected


def _add(total, part):
    """Sum two per-vehicle frames (NaN + x = x; NaN + NaN = NaN)."""
    if total is None:
        return part
    both = total.add(part, fill_value=0.0)
    missing = total.isna().reindex(both.index, fill_value=True) & \
        part.isna().reindex(both.index, fill_value=True)
    return both.mask(missing)


def chunk_rows_for(model: FleetModel, budget_bytes: int | None = None) -> int:
    """Rows per chunk so that one batch stays within the memory budget.

    A batch holds about 40 floats per sample plus 12 per sample and variant
    (force, its products and the gathered coefficients).
    """
    from ..limits import MEMORY_BUDGET_BYTES

    budget = MEMORY_BUDGET_BYTES if budget_bytes is None else budget_bytes
    per_row = 8 * (40 + 12 * len(model.variants))
    return int(max(1000, min(5_000_000, budget // (4 * per_row))))


def run_batches(spec: FleetSpec, model: FleetModel, *, chunk_rows: int | None = None,
                workers: int | None = None, show_progress: bool = False) -> tuple:
    """Stream the trips table through :func:`trip_batch` (in-process or a process pool)."""
    rows = chunk_rows or chunk_rows_for(model)
    ids = set(model.vehicle_ids)
    chunks = tables.iter_trip_chunks(spec.trips_file, rows=rows, known_ids=ids)
    total, rejected = None, []
    bar = progress(None, "fleet trips", quiet=not show_progress, unit=" rows")
    if not workers or workers <= 1:
        for chunk in chunks:
            sums, rej = reduce_trips(trip_batch(chunk, model))
            total = _add(total, sums)
            rejected.append(rej)
            bar.update(len(chunk))
    else:
        with ProcessPoolExecutor(max_workers=workers) as pool:
            pending = []
            for chunk in chunks:
                pending.append((pool.submit(trip_batch, chunk, model), len(chunk)))
                while len(pending) > workers:       # bounded memory: few chunks in flight
                    fut, size = pending.pop(0)
                    sums, rej = reduce_trips(fut.result())
                    total = _add(total, sums)
                    rejected.append(rej)
                    bar.update(size)
            for fut, size in pending:
                sums, rej = reduce_trips(fut.result())
                total = _add(total, sums)
                rejected.append(rej)
                bar.update(size)
    bar.close()
    return total, _concat_rejected(rejected)


def _concat_rejected(parts) -> pd.DataFrame:
    parts = [p for p in parts if len(p)]
    if not parts:
        return pd.DataFrame(columns=["vehicle_id", "trip_id", "variant", "reason", "file",
                                     "line"])
    return pd.concat(parts, ignore_index=True)


def _partition_batch(part: pd.DataFrame, model: FleetModel, cols, file: str) -> pd.DataFrame:
    """:func:`trip_batch` on one Dask partition of the raw trips table."""
    if not len(part):
        from .engine import _empty
        return _empty()
    part = part.copy()
    part.columns = [str(c).strip().lower() for c in part.columns]
    df = tables.normalize_chunk(part.reset_index(drop=True), cols, file, 0,
                                set(model.vehicle_ids))
    df["line"] = -1                                  # rows are not numbered in a partition
    tables.check_order(df)
    return trip_batch(df, model)


def run_dask(spec: FleetSpec, model: FleetModel, scheduler: str) -> tuple:
    """The same batch under ``dask.dataframe.map_partitions`` (one file or row group per
    partition; a trip must lie within one partition). ``scheduler``: ``threads``,
    ``processes``, ``synchronous`` (local) or a scheduler address."""
    try:
        import dask
        import dask.dataframe as dd
    except ImportError:
        raise InputError("--scheduler needs Dask: pip install 'tractive[scale]'",
                         field="scheduler") from None
    path = Path(spec.trips_file)
    files = tables._table_files(path, "trips table")
    parquet = [tables._is_parquet(f) for f in files]
    if any(parquet) and not all(parquet):
        raise InputError("a trips folder for Dask holds only CSV or only Parquet files",
                         file=str(path))
    if all(parquet):
        import pyarrow.parquet as pq
        names = pq.ParquetFile(files[0]).schema_arrow.names
        ddf = dd.read_parquet([str(f) for f in files])
    else:
        names = list(pd.read_csv(files[0], nrows=0).columns)
        ddf = dd.read_csv([str(f) for f in files], blocksize=None,
                          dtype={c: str for c in names
                                 if str(c).strip().lower() in ("vehicle_id", "trip_id",
                                                               "timestamp")})
    cols = tables.trip_columns(names, str(files[0]), None)
    from .engine import _empty
    out = ddf.map_partitions(_partition_batch, model, cols, str(path), meta=_empty())
    local = scheduler in ("threads", "processes", "synchronous", "sync")
    if local:
        frame = out.compute(scheduler=scheduler)
    else:
        try:
            from dask.distributed import Client
        except ImportError:
            raise InputError("a scheduler address needs dask.distributed: pip install "
                             "'dask[distributed]'", field="scheduler") from None
        try:
            with Client(scheduler) as client:
                frame = client.compute(out).result()
        except OSError as exc:
            raise InputError(f"cannot reach the Dask scheduler: {exc}",
                             field="scheduler") from None
    dup = frame[frame["variant"] != ""].duplicated(["vehicle_id", "trip_id", "variant"])
    if dup.any():
        row = frame[frame["variant"] != ""][dup].iloc[0]
        raise InputError(f"trip '{row['trip_id']}' of vehicle '{row['vehicle_id']}' lies in "
                         "two partitions; write each trip within one file or row group",
                         file=str(path), field="trip_id")
    del dask
    sums, rejected = reduce_trips(frame)
    return sums, rejected


@dataclass
class _Run:
    spec: FleetSpec
    model: FleetModel
    sums: pd.DataFrame
    rejected: pd.DataFrame
    warnings: list = field(default_factory=list)


def run_fleet(path, *, workers: int | None = None, scheduler: str | None = None,
              chunk_rows: int | None = None, show_progress: bool = False):
    """Read a fleet study and run it; a :class:`~tractive.fleet.results.FleetResult`.

    Parameters
    ----------
    path : path
        Study YAML file with a ``fleet`` block.
    workers : int, optional
        Local worker processes (default: in this process).
    scheduler : str, optional
        Run under Dask: ``threads``/``processes``/``synchronous`` on this
        machine, or the address of a Dask scheduler (``tcp://host:8786``).
    chunk_rows : int, optional
        Trip rows per batch (default from the memory budget); no number depends on it.
    show_progress : bool
        Progress on stderr (only when stderr is a terminal).
    """
    from .results import build_result

    spec = load_fleet_study(path)
    warnings: list = []
    model = build_model(spec, warnings)
    if scheduler:
        sums, rejected = run_dask(spec, model, scheduler)
    else:
        sums, rejected = run_batches(spec, model, chunk_rows=chunk_rows, workers=workers,
                                     show_progress=show_progress)
    return build_result(_Run(spec, model, sums, rejected, warnings))


def kwh(x):
    """[J] → [kWh]."""
    return np.asarray(x, float) / KWH_J


def study_inputs(spec: FleetSpec) -> list:
    """Every file a fleet study reads (outputs must not replace one)."""
    out = list(spec.inputs)
    p = Path(spec.trips_file)
    if p.is_dir():
        out += [str(f) for f in tables._table_files(p, "trips table")]
    return [os.fspath(x) for x in out]
