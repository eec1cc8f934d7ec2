"""Reading a fleet: the vehicles table and the trips table (CSV, Parquet, a folder).

Vehicles table, one row per vehicle (CSV or Parquet):

* ``vehicle_id`` - any text, unique;
* either ``vehicle_file`` - a vehicle YAML, relative to the table's folder -
  or the road load inline: ``mass_kg`` with ``f0_n``, ``f1_n_per_kmh``,
  ``f2_n_per_kmh2`` (coast-down coefficients, UN GTR No. 15 form), or with
  ``cda_m2`` and ``crr`` (physical form, in air of ``air_density_kg_m3``,
  default the GTR 15 reference 1.189 kg/m³);
* optional ``rotating_mass_fraction`` (inline rows; default 0.03 as in GTR 15
  Annex 4, from memory), ``group`` and ``annual_distance_km``.

Trips table in long form, one row per sample (CSV, Parquet, or a folder of
such files read in name order): ``vehicle_id``, ``trip_id``, ``time_s`` or
``timestamp`` (ISO 8601), exactly one of ``speed_kmh``/``speed_mph``/
``speed_ms``, optionally ``grade_pct`` or ``elevation_m``. The rows of one trip
are consecutive and in time order. The table is streamed in chunks of rows
(:func:`iter_trip_chunks`), each cut after its last complete trip, so a file
larger than memory is read piece by piece.

Mistakes in the tables (a missing column, an unknown vehicle id, two speed
columns, time that does not increase within a trip, a trip of one sample, a
cell that is not a number) raise :class:`~tractive.errors.InputError` naming
the file, the line (CSV; for Parquet the 1-based row) and the column.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError
from ..limits import MAX_MASS_KG
from ..readfiles import note_read
from ..units import KMH_MS, MPH_MS

#: speed columns and their factor to m/s (exact: units.py)
SPEED_COLUMNS = {"speed_kmh": KMH_MS, "speed_mph": MPH_MS, "speed_ms": 1.0}
#: rows read at once from a trips file when no budget says otherwise
DEFAULT_CHUNK_ROWS = 1_000_000
#: file types a table may have
TABLE_SUFFIXES = (".csv", ".parquet", ".pq")
#: GTR 15 rotating-mass allowance for inline vehicles (Annex 4, 3 %; from memory)
DEFAULT_ROTATING_MASS_FRACTION = 0.03


@dataclass(frozen=True)
class FleetVehicle:
    """One vehicle of the fleet.

    Attributes
    ----------
    vehicle_id : str
    vehicle : Vehicle
        Mass, road load and (from a vehicle file) powertrain.
    raw : dict
        The vehicle file's YAML mapping ({} inline), for powertrain changes.
    group : str
        Group name ("" when the table has none).
    annual_distance_km : float or None
        Distance driven per year [km].
    line : int
        Line (CSV) or row (Parquet) of the vehicles table.
    """

    vehicle_id: str
    vehicle: object
    raw: dict
    group: str
    annual_distance_km: float | None
    line: int


def _table_files(path: Path, what: str) -> list:
    """The files of a table: the file itself, or the table files of a folder."""
    if path.is_dir():
        files = sorted(p for p in path.iterdir() if p.suffix.lower() in TABLE_SUFFIXES)
        if not files:
            raise InputError(f"the {what} folder holds no .csv or .parquet file", file=str(path))
        return files
    if not path.is_file():
        raise InputError(f"{what} not found", file=str(path))
    if path.suffix.lower() not in TABLE_SUFFIXES:
        raise InputError(f"unsupported {what} file type '{path.suffix}'; use .csv or .parquet",
                         file=str(path))
    return [path]


def _is_parquet(path: Path) -> bool:
    return path.suffix.lower() in (".parquet", ".pq")


def _need_pyarrow(path: Path):
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise InputError("reading Parquet needs pyarrow: pip install 'tractive[scale]'",
                         file=str(path)) from None
    return pq


def read_vehicles(path) -> list:
    """Read the vehicles table (format in the module docstring) into FleetVehicle objects."""
    from ..vehicle import load_vehicle
    from ..spec import read_yaml

    path = Path(path)
    note_read(path)
    if not path.is_file():
        raise InputError("vehicles table not found", file=str(path))
    if _is_parquet(path):
        df = _need_pyarrow(path).read_table(path).to_pandas()
        first = 1
    elif path.suffix.lower() == ".csv":
        try:
            df = pd.read_csv(path, dtype=str, keep_default_na=False, comment="#")
        except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as exc:
            raise InputError(f"malformed CSV: {' '.join(str(exc).split())}",
                             file=str(path)) from None
        first = 2
    else:
        raise InputError("unsupported vehicles table type; use .csv or .parquet",
                         file=str(path))
    df.columns = [str(c).strip().lower() for c in df.columns]
    if "vehicle_id" not in df.columns:
        raise InputError("no vehicle_id column", file=str(path), field="vehicle_id",
                         line=first - 1 if first == 2 else None)
    cols = set(df.columns)
    out, seen = [], {}
    cache = {}
    for i, row in enumerate(df.to_dict("records")):
        line = first + i
        vid = str(row["vehicle_id"]).strip()
        if not vid:
            raise InputError("empty vehicle_id", file=str(path), field="vehicle_id", line=line)
        if vid in seen:
            raise InputError(f"vehicle_id '{vid}' appears twice (first at {seen[vid]})",
                             file=str(path), field="vehicle_id", line=line)
        seen[vid] = line

        def num(col, *, required=True, lo=-math.inf, hi=math.inf):
            text = row.get(col, "")
            if text is None or (isinstance(text, float) and math.isnan(text)) or \
                    str(text).strip() == "":
                if required:
                    raise InputError("missing value", file=str(path), field=col, line=line)
                return None
            try:
                x = float(text)
            except (TypeError, ValueError):
                raise InputError(f"must be a number, got {text!r}", file=str(path), field=col,
                                 line=line) from None
            if not (math.isfinite(x) and lo <= x <= hi):
                raise InputError(f"must be from {lo:g} to {hi:g}, got {x:g}", file=str(path),
                                 field=col, line=line)
            return x

        group = str(row.get("group", "") or "").strip()
        annual = num("annual_distance_km", required=False, lo=0.0, hi=1e7) \
            if "annual_distance_km" in cols else None
        vfile = str(row.get("vehicle_file", "") or "").strip()
        if vfile:
            vpath = Path(vfile) if Path(vfile).is_absolute() else path.parent / vfile
            if not vpath.is_file():
                raise InputError(f"vehicle file not found: {vpath}", file=str(path),
                                 field="vehicle_file", line=line)
            key = str(vpath.resolve())
            if key not in cache:
                note_read(vpath)
                cache[key] = (load_vehicle(vpath), read_yaml(vpath))
            veh, raw = cache[key]
        else:
            veh, raw = _inline_vehicle(vid, num, cols, path, line), {}
        out.append(FleetVehicle(vid, veh, raw, group, annual, line))
    if not out:
        raise InputError("the vehicles table has no rows", file=str(path))
    return out


def _inline_vehicle(vid, num, cols, path, line):
    """A Vehicle from the road-load columns of one vehicles-table row."""
    from ..roadload import CoefficientRoadLoad, PhysicalRoadLoad
    from ..vehicle import Vehicle
    from ..atmosphere import REFERENCE_STATES

    if "mass_kg" not in cols:
        raise InputError("give vehicle_file or mass_kg with the road load", file=str(path),
                         field="vehicle_file", line=line)
    mass = num("mass_kg", lo=1.0, hi=MAX_MASS_KG)
    rmf = num("rotating_mass_fraction", required=False, lo=0.0, hi=1.0) \
        if "rotating_mass_fraction" in cols else None
    rmf = DEFAULT_ROTATING_MASS_FRACTION if rmf is None else rmf
    coeff = [c for c in ("f0_n", "f1_n_per_kmh", "f2_n_per_kmh2") if c in cols]
    if coeff and num(coeff[0], required=False) is not None:
        rl = CoefficientRoadLoad(num("f0_n", lo=0.0, hi=1e5),
                                 num("f1_n_per_kmh", lo=-1e3, hi=1e3) if "f1_n_per_kmh" in cols
                                 else 0.0,
                                 num("f2_n_per_kmh2", lo=0.0, hi=10.0), form="coastdown")
    elif "cda_m2" in cols and "crr" in cols:
        rho = num("air_density_kg_m3", required=False, lo=0.3, hi=1.6) \
            if "air_density_kg_m3" in cols else None
        if rho is None:
            rho = REFERENCE_STATES["gtr15"].air_density_kg_m3
        rl = PhysicalRoadLoad(cda_m2=num("cda_m2", lo=0.0, hi=50.0),
                              crr=num("crr", lo=0.0, hi=0.1), air_density_kg_m3=rho,
                              air_basis="air_density_kg_m3 of the vehicles table or GTR 15")
    else:
        raise InputError("give vehicle_file, or mass_kg with f0_n/f1_n_per_kmh/f2_n_per_kmh2 "
                         "or with cda_m2/crr", file=str(path), field="vehicle_file", line=line)
    return Vehicle(name=vid, mass_kg=mass, road_load=rl, rotating_mass_fraction=rmf,
                   source=str(path))


# ---------------------------------------------------------------------------
# trips
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class TripColumns:
    """Which columns a trips file has."""

    time: str          # "time_s" or "timestamp"
    speed: str         # one of SPEED_COLUMNS
    grade: str | None  # "grade_pct", "elevation_m" or None


def trip_columns(names, file: str, line: int | None) -> TripColumns:
    """Check a trips file's header; the columns found."""
    names = [str(c).strip().lower() for c in names]
    for col in ("vehicle_id", "trip_id"):
        if col not in names:
            raise InputError(f"no {col} column", file=file, field=col, line=line)
    time = "time_s" if "time_s" in names else ("timestamp" if "timestamp" in names else None)
    if time is None:
        raise InputError("no time_s (seconds) or timestamp (ISO 8601) column", file=file,
                         field="time_s", line=line)
    speeds = [c for c in names if c in SPEED_COLUMNS]
    if len(speeds) > 1:
        raise InputError(f"two speed columns ({', '.join(speeds)}): mixed speed units; keep "
                         "one", file=file, field=speeds[1], line=line)
    if not speeds:
        raise InputError("no speed column; add one named speed_kmh, speed_mph or speed_ms",
                         file=file, field="speed_kmh", line=line)
    if "grade_pct" in names and "elevation_m" in names:
        raise InputError("give grade_pct or elevation_m, not both", file=file,
                         field="elevation_m", line=line)
    grade = "grade_pct" if "grade_pct" in names else (
        "elevation_m" if "elevation_m" in names else None)
    return TripColumns(time, speeds[0], grade)


def _raw_chunks(path: Path, rows: int):
    """(DataFrame, first line, columns) pieces of one trips file, ``rows`` rows each."""
    file = str(path)
    note_read(path)
    if _is_parquet(path):
        pq = _need_pyarrow(path)
        pf = pq.ParquetFile(path)
        cols = trip_columns(pf.schema_arrow.names, file, None)
        start = 1
        for batch in pf.iter_batches(batch_size=rows):
            df = batch.to_pandas()
            df.columns = [str(c).strip().lower() for c in df.columns]
            yield df, start, cols
            start += len(df)
        return
    try:
        header = pd.read_csv(path, nrows=0).columns
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"malformed CSV: {' '.join(str(exc).split())}", file=file,
                         line=1) from None
    cols = trip_columns(header, file, 1)
    start = 2
    dtype = {c: str for c in header if str(c).strip().lower() in ("vehicle_id", "trip_id",
                                                                   "timestamp")}
    try:
        for df in pd.read_csv(path, chunksize=rows, dtype=dtype, keep_default_na=False):
            df.columns = [str(c).strip().lower() for c in df.columns]
            yield df, start, cols
            start += len(df)
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"malformed CSV: {' '.join(str(exc).split())}", file=file) from None


def _numeric(series: pd.Series, file: str, col: str, lines: np.ndarray) -> np.ndarray:
    """A column as float64; a cell that is not a number is an error naming its line."""
    vals = pd.to_numeric(series, errors="coerce").to_numpy(float)
    bad = np.flatnonzero(~np.isfinite(vals))
    if bad.size:
        raise InputError(f"must be a finite number, got {series.iloc[bad[0]]!r}", file=file,
                         field=col, line=int(lines[bad[0]]))
    return vals


def normalize_chunk(df: pd.DataFrame, cols: TripColumns, file: str, first_line: int,
                    known_ids=None) -> pd.DataFrame:
    """A raw trips piece as the engine's frame: vehicle_id, trip_id (text), time_s,
    speed_ms, grade_pct or elevation_m, line, file (all checked cell by cell)."""
    lines = first_line + np.arange(len(df))
    vid = df["vehicle_id"].astype(str).str.strip()
    if known_ids is not None:
        unknown = ~vid.isin(known_ids)
        if unknown.any():
            i = int(np.flatnonzero(unknown.to_numpy())[0])
            raise InputError(f"unknown vehicle_id '{vid.iloc[i]}': not in the vehicles table",
                             file=file, field="vehicle_id", line=int(lines[i]))
    out = pd.DataFrame({"vehicle_id": vid.to_numpy(),
                        "trip_id": df["trip_id"].astype(str).str.strip().to_numpy()})
    if cols.time == "timestamp":
        ts = pd.to_datetime(df["timestamp"], errors="coerce", utc=True, format="ISO8601")
        bad = np.flatnonzero(ts.isna().to_numpy())
        if bad.size:
            raise InputError(f"not an ISO 8601 time: {df['timestamp'].iloc[bad[0]]!r}",
                             file=file, field="timestamp", line=int(lines[bad[0]]))
        ns = ts.astype("int64").to_numpy()
        out["time_s"] = ns / 1e9            # for order checks; differences use time_ns
        out["time_ns"] = ns
    else:
        out["time_s"] = _numeric(df["time_s"], file, "time_s", lines)
    out["speed_ms"] = _numeric(df[cols.speed], file, cols.speed, lines) * SPEED_COLUMNS[cols.speed]
    if cols.grade is not None:
        out[cols.grade] = _numeric(df[cols.grade], file, cols.grade, lines)
    out["line"] = lines
    out["file"] = file
    return out


def check_order(df: pd.DataFrame, time_col: str = "time_s") -> None:
    """Refuse a trip whose time does not increase from row to row, a trip of one
    sample, and rows of one trip that are not consecutive (naming file, line, column)."""
    if not len(df):
        return
    key = df["vehicle_id"].to_numpy(object) + "\x1f" + df["trip_id"].to_numpy(object)
    new = np.ones(len(df), bool)
    new[1:] = key[1:] != key[:-1]
    starts = np.flatnonzero(new)
    t = df[time_col].to_numpy(float)
    lines = df["line"].to_numpy()
    files = df["file"].to_numpy(object)
    back = np.flatnonzero((np.diff(t) <= 0) & ~new[1:])
    if back.size:
        i = int(back[0]) + 1
        raise InputError(f"time must increase within a trip: {t[i]:g} s follows {t[i - 1]:g} s "
                         f"(trip '{df['trip_id'].iloc[i]}' of vehicle "
                         f"'{df['vehicle_id'].iloc[i]}')", file=files[i], field="time_s",
                         line=int(lines[i]))
    sizes = np.diff(np.append(starts, len(df)))
    ones = np.flatnonzero(sizes == 1)
    if ones.size:
        i = int(starts[ones[0]])
        raise InputError(f"trip '{df['trip_id'].iloc[i]}' of vehicle "
                         f"'{df['vehicle_id'].iloc[i]}' has one sample; a trip needs at least "
                         "two", file=files[i], field="trip_id", line=int(lines[i]))
    keys = key[starts]
    uniq, first = np.unique(keys, return_index=True)
    if len(uniq) != len(keys):
        dup = np.setdiff1d(np.arange(len(keys)), first)[0]
        i = int(starts[dup])
        raise InputError(f"rows of trip '{df['trip_id'].iloc[i]}' of vehicle "
                         f"'{df['vehicle_id'].iloc[i]}' are not consecutive; sort the table by "
                         "vehicle_id, trip_id and time", file=files[i], field="trip_id",
                         line=int(lines[i]))


def iter_trip_chunks(path, *, rows: int = DEFAULT_CHUNK_ROWS, known_ids=None):
    """Stream a trips table (file or folder) as checked frames of whole trips.

    Each frame holds about ``rows`` rows; the rows of the last trip of a piece
    wait for the next piece, so that no trip is cut. A trip seen in an earlier
    frame that appears again is an error (its rows are not consecutive).
    """
    path = Path(path)
    files = _table_files(path, "trips table")
    speed = None
    seen_keys: set = set()
    carry = None
    for f in files:
        for df, first, cols in _raw_chunks(f, rows):
            if speed is None:
                speed = (cols.speed, str(f))
            elif cols.speed != speed[0]:
                raise InputError(f"mixed speed units: this file has {cols.speed}, "
                                 f"{speed[1]} has {speed[0]}", file=str(f), field=cols.speed,
                                 line=None if _is_parquet(f) else 1)
            part = normalize_chunk(df, cols, str(f), first, known_ids)
            if carry is not None:
                part = pd.concat([carry, part], ignore_index=True)
            if not len(part):
                continue
            last = (part["vehicle_id"].iat[-1], part["trip_id"].iat[-1])
            tail = (part["vehicle_id"].to_numpy() == last[0]) & \
                (part["trip_id"].to_numpy() == last[1])
            # the trailing run of the last trip waits for the next piece
            k = len(part) - int(np.argmin(tail[::-1])) if not tail.all() else 0
            carry, ready = part.iloc[k:].reset_index(drop=True), part.iloc[:k]
            if len(ready):
                yield _checked(ready, seen_keys)
        if carry is not None and len(carry):
            # a trip ends with its file
            yield _checked(carry, seen_keys)
            carry = None


def _checked(df: pd.DataFrame, seen_keys: set) -> pd.DataFrame:
    """Order checks, and no trip that an earlier frame already held."""
    df = df.reset_index(drop=True)
    check_order(df)
    key = df["vehicle_id"].to_numpy(object) + "\x1f" + df["trip_id"].to_numpy(object)
    new = np.ones(len(df), bool)
    new[1:] = key[1:] != key[:-1]
    for i in np.flatnonzero(new):
        if key[i] in seen_keys:
            raise InputError(f"rows of trip '{df['trip_id'].iat[i]}' of vehicle "
                             f"'{df['vehicle_id'].iat[i]}' are not consecutive; sort the table "
                             "by vehicle_id, trip_id and time", file=df["file"].iat[i],
                             field="trip_id", line=int(df["line"].iat[i]))
    seen_keys.update(key[new])
    return df
