"""Fleet results: per-vehicle metrics, totals per variant and group, economics."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError
from ..metrics import to_units
from ..plain import plain
from ..study.economics import net_present_value, simple_payback_years
from ..units import KWH_J

#: metrics of the totals and of the per-vehicle table (metric units), in order
METRICS = ("distance_km", "positive_energy_kwh", "negative_energy_kwh", "battery_energy_kwh",
           "grid_energy_kwh", "fuel_l", "co2_kg", "energy_cost")


@dataclass(frozen=True)
class FleetResult:
    """What a fleet study found.

    Attributes
    ----------
    name : str
        Study name.
    spec : FleetSpec
    per_vehicle : DataFrame
        One row per vehicle and variant: vehicle_id, group, variant, trips,
        recorded_distance_km, duration_h, annual_scale and :data:`METRICS`
        (per year where scaled), saving against the baseline.
    totals : list of dict
        Per variant: the fleet's sums, change and change_pct against the baseline,
        and the modification's economics.
    groups : list of dict
        The same per group.
    left_out : DataFrame
        Trips left out, with file, line and reason.
    fleet : dict
        vehicles, trips, distance_km, duration_h (recorded, kept trips).
    warnings : tuple of str
    units : str
    """

    name: str
    spec: object
    per_vehicle: pd.DataFrame
    totals: list
    groups: list
    left_out: pd.DataFrame
    fleet: dict
    warnings: tuple
    units: str = "metric"

    def with_units(self, units: str) -> "FleetResult":
        """The same result reported in ``units`` (``metric`` or ``us``)."""
        from dataclasses import replace

        return replace(self, units=units)

    def per_vehicle_table(self) -> pd.DataFrame:
        """The per-vehicle table in the result's units (columns renamed in US units)."""
        df = self.per_vehicle.copy()
        if self.units == "metric":
            return df
        conv = to_units({c: df[c].to_numpy(float) for c in df.columns
                         if c in METRICS or c == "recorded_distance_km"}, self.units)
        keep = [c for c in df.columns if c not in METRICS and c != "recorded_distance_km"]
        out = df[keep].copy()
        for k, v in conv.items():
            out[k] = v
        if "recorded_distance_km" in df.columns:
            from ..metrics import KM_PER_MI
            out = out.rename(columns={})
            out["recorded_distance_mi"] = df["recorded_distance_km"].to_numpy(float) / KM_PER_MI
            out = out.drop(columns=[c for c in out.columns if c == "recorded_distance_km"])
        return out

    def to_dict(self) -> dict:
        """The command's JSON document (see docs/fleet.md)."""
        return plain({
            "study": self.name,
            "units": self.units,
            "currency": self.spec.currency,
            "fleet": _convert(self.fleet, self.units),
            "totals": [_convert_row(r, self.units) for r in self.totals],
            "groups": [_convert_row(r, self.units) for r in self.groups],
            "left_out": [{"vehicle_id": r.vehicle_id, "trip_id": r.trip_id, "file": r.file,
                          "line": None if int(r.line) < 0 else int(r.line), "reason": r.reason}
                         for r in self.left_out.itertuples()],
            "warnings": list(self.warnings),
        })


def _convert(d: dict, units: str) -> dict:
    """Metric values of a mapping in ``units`` (other keys unchanged)."""
    return to_units(d, units) if units != "metric" else dict(d)


def _convert_row(row: dict, units: str) -> dict:
    """A totals row in ``units``: values and changes converted, percentages renamed."""
    if units == "metric":
        return row
    from ..api import key_in_units

    out = _convert({k: v for k, v in row.items() if k not in ("change", "change_pct")}, units)
    out["change"] = _convert(row.get("change", {}), units)
    out["change_pct"] = {(key_in_units(k, units) or k): v
                         for k, v in row.get("change_pct", {}).items()}
    return out


def _per_vehicle(run) -> pd.DataFrame:
    """Per-vehicle metrics from the per-vehicle sums, scaled to a year where known."""
    spec = run.spec
    econ = spec.economics
    sums = run.sums
    rows = []
    info = {v.vehicle_id: v for v in spec.vehicles}
    base_dist = {}
    if sums is not None and len(sums):
        b = sums.xs("baseline", level="variant")
        base_dist = dict(zip(b.index, b["distance_m"]))
    for vname in run.model.variants:
        for vid in run.model.vehicle_ids:
            fv = info[vid]
            key = (vid, vname)
            s = sums.loc[key] if sums is not None and key in sums.index else None
            rec_km = float(base_dist.get(vid, 0.0)) / 1000.0
            annual = fv.annual_distance_km
            if annual is None and econ is not None:
                annual = econ.annual_distance_km
            scale = annual / rec_km if (annual is not None and rec_km > 0) else 1.0
            row = {"vehicle_id": vid, "group": fv.group, "variant": vname,
                   "trips": 0 if s is None else int(s["trips"]),
                   "recorded_distance_km": rec_km,
                   "duration_h": 0.0 if s is None else float(s["duration_s"]) / 3600.0,
                   "annual_scale": scale}
            row.update(_metrics(s, scale, econ))
            rows.append(row)
    df = pd.DataFrame(rows)
    base = df[df["variant"] == "baseline"].set_index("vehicle_id")["energy_cost"]
    df["saving"] = base.reindex(df["vehicle_id"]).to_numpy() - df["energy_cost"].to_numpy()
    return df


def _metrics(s, scale: float, econ) -> dict:
    """Metrics of one vehicle's sums, times ``scale``."""
    nan = float("nan")
    if s is None:
        return {k: (0.0 if k in ("distance_km", "positive_energy_kwh", "negative_energy_kwh")
                    else nan) for k in METRICS}
    battery = float(s["battery_j"]) / KWH_J
    wall = float(s["wall_j"]) / KWH_J
    out = {"distance_km": float(s["distance_m"]) / 1000.0 * scale,
           "positive_energy_kwh": float(s["positive_j"]) / KWH_J * scale,
           "negative_energy_kwh": float(s["negative_j"]) / KWH_J * scale,
           "battery_energy_kwh": battery * scale, "grid_energy_kwh": nan,
           "fuel_l": float(s["fuel_l"]) * scale, "co2_kg": float(s["co2_kg"]) * scale,
           "energy_cost": nan}
    if np.isfinite(battery):
        grid = wall if np.isfinite(wall) else (
            battery / econ.charging_efficiency if econ is not None and
            econ.charging_efficiency else battery)
        out["grid_energy_kwh"] = grid * scale
        if econ is not None and econ.electricity_co2_g_per_kwh is not None:
            out["co2_kg"] = grid * scale * econ.electricity_co2_g_per_kwh / 1000.0
        if econ is not None and econ.electricity_price_per_kwh is not None:
            out["energy_cost"] = grid * scale * econ.electricity_price_per_kwh
    elif np.isfinite(out["fuel_l"]):
        if econ is not None and econ.fuel_co2_g_per_l is not None:
            out["co2_kg"] = out["fuel_l"] * econ.fuel_co2_g_per_l / 1000.0
        if econ is not None and econ.fuel_price_per_l is not None:
            out["energy_cost"] = out["fuel_l"] * econ.fuel_price_per_l
    return out


def _total(df: pd.DataFrame) -> dict:
    """Sums of the metrics over vehicles (None where no vehicle has the metric)."""
    out = {}
    for k in METRICS:
        col = df[k].to_numpy(float)
        out[k] = float(np.nansum(col)) if np.isfinite(col).any() else None
    return out


def _rows(df: pd.DataFrame, variants, spec, label: dict, scale: float) -> list:
    """Totals per variant with changes against the baseline and economics."""
    rows = []
    base = None
    for vname in variants:
        part = df[df["variant"] == vname]
        tot = {k: (None if v is None else v * scale) for k, v in _total(part).items()}
        row = dict(label)
        row["variant"] = vname
        row["vehicles"] = int(part["vehicle_id"].nunique())
        row.update({k: v for k, v in tot.items() if v is not None})
        if base is None:
            base = tot
        row["change"] = {k: tot[k] - base[k] for k in METRICS
                         if tot[k] is not None and base[k] is not None}
        row["change_pct"] = {k: (tot[k] - base[k]) / base[k] * 100.0 for k in METRICS
                             if tot[k] is not None and base[k] not in (None, 0.0)}
        rows.append(row)
    return rows


def _economics(rows: list, spec, run, df: pd.DataFrame, scale: float) -> None:
    """Saving, cost, payback, NPV and verdict of each variant's totals (in place)."""
    econ = spec.economics
    if econ is None:
        return
    mods = {m.name: m for m in spec.modifications}
    members = {m.name: [m] for m in spec.modifications}
    members.update({c.name: [mods[k] for k in c.members] for c in spec.combinations})
    info = {v.vehicle_id: v.group for v in spec.vehicles}
    ids = set(df["vehicle_id"])
    base_cost = next(r.get("energy_cost") for r in rows if r["variant"] == "baseline")
    for row in rows:
        if row["variant"] == "baseline" or base_cost is None or "energy_cost" not in row:
            continue
        row["annual_saving"] = base_cost - row["energy_cost"]
        ms = members[row["variant"]]
        if any(m.cost is None for m in ms):
            continue
        cost = 0.0
        for m in ms:
            groups = spec.applies_to.get(m.name)
            n = sum(1 for v in ids if groups is None or info[v] in groups)
            cost += m.cost * n * scale
        row["modification_cost"] = cost
        row["payback_years"] = float(simple_payback_years(cost, row["annual_saving"]))
        if econ.service_life_years is not None:
            row["npv"] = float(net_present_value(cost, row["annual_saving"], econ.discount_rate,
                                                 econ.service_life_years))
            p = row["payback_years"]
            row["payback_exceeds_life"] = bool(cost > 0 and not (p <= econ.service_life_years))
            row["npv_negative"] = bool(row["npv"] < 0)


def build_result(run) -> FleetResult:
    """Per-vehicle table, totals, groups, left-out trips and warnings of a run."""
    spec = run.spec
    warnings = list(run.warnings)
    df = _per_vehicle(run)
    _check_money(spec, df)
    scale = 1.0
    econ = spec.economics
    if econ is not None and econ.vehicles is not None:
        scale = econ.vehicles / len(spec.vehicles)
        warnings.append(f"totals are scaled from the {len(spec.vehicles)} vehicles of the table "
                        f"to economics.vehicles = {econ.vehicles}")
    if econ is not None and (econ.fuel_price_std_per_l or econ.electricity_price_std_per_kwh):
        warnings.append("price uncertainties are not drawn over a fleet: the totals use the "
                        "nominal prices")
    if econ is not None and econ.electricity_price_per_kwh is not None and \
            econ.charging_efficiency is None and df["battery_energy_kwh"].notna().any():
        warnings.append("no charging loss counted where the powertrain states no "
                        "charger_efficiency and economics.charging_efficiency is not given")
    variants = run.model.variants
    totals = _rows(df, variants, spec, {}, scale)
    _economics(totals, spec, run, df, scale)
    groups = []
    names = sorted({v.group for v in spec.vehicles if v.group})
    for g in names:
        part = df[df["group"] == g]
        rows = _rows(part, variants, spec, {"group": g}, scale)
        _economics(rows, spec, run, part, scale)
        groups.extend(rows)
    left = run.rejected.sort_values(["file", "line"], kind="stable") if len(run.rejected) \
        else run.rejected
    if len(left):
        warnings.append(f"{len(left)} trip(s) left out of the totals (listed under left_out): "
                        + "; ".join(f"{r.vehicle_id}/{r.trip_id}: {r.reason}"
                                    for r in left.head(3).itertuples())
                        + ("; ..." if len(left) > 3 else ""))
    none = [vid for vid in run.model.vehicle_ids
            if not (df[(df.vehicle_id == vid) & (df.variant == "baseline")]["trips"] > 0).any()]
    if none:
        warnings.append(f"{len(none)} vehicle(s) without any trip counted: "
                        + ", ".join(none[:10]) + (", ..." if len(none) > 10 else ""))
    base = df[df["variant"] == "baseline"]
    fleet = {"vehicles": len(spec.vehicles), "trips": int(base["trips"].sum()),
             "trips_left_out": int(len(left)),
             "distance_km": float(base["recorded_distance_km"].sum()),
             "duration_h": float(base["duration_h"].sum())}
    if not fleet["trips"]:
        raise InputError("no trip could be counted: every trip was left out or the trips "
                         "table names none of the vehicles", file=spec.trips_file)
    return FleetResult(spec.name, spec, df, totals, groups, left, fleet, tuple(warnings))


def _check_money(spec, df: pd.DataFrame) -> None:
    """Prices the fleet's energy needs, when the study has economics."""
    e = spec.economics
    if e is None:
        return
    if df["battery_energy_kwh"].notna().any() and e.electricity_price_per_kwh is None:
        raise e.error("missing: vehicles use electricity, so money needs this price "
                      "(money per kWh)", "electricity_price_per_kwh")
    if df["fuel_l"].notna().any() and e.fuel_price_per_l is None:
        raise e.error("missing: vehicles burn fuel, so money needs fuel_price_per_l",
                      "fuel_price_per_l")
