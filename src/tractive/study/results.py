"""Result objects of a study: one row per variant and profile (or duty mix).

Everything here is plain, frozen data that the exporters (JSON, CSV, the
workbook) read; nothing here computes physics. Metric keys carry their unit
as a suffix (``positive_energy_wh_per_km``, ``range_km``, ``top_speed_kmh``);
money carries no unit suffix in its key but is always in the study's
``currency`` (see :attr:`StudyResult.currency`). The registry
:mod:`tractive.metrics` describes every metric key (label, unit, kind, the
direction that counts as better, its US form).

Row anatomy (:class:`ResultRow`)
    ``metrics``          nominal value of each metric (no uncertainty drawn)
    ``change``           variant minus baseline on the same profile, same key
    ``change_pct``       100 × change / baseline (absent when the baseline is 0)
    ``mean``             Monte Carlo mean of the metric
    ``interval_low/high``  central 95 % Monte Carlo interval of the metric
    ``change_mean``, ``change_low/high``  the same for the change
    ``distinguishable``  per changed metric: True when the change interval
                         excludes zero (the effect is distinguishable from
                         zero at the stated confidence)

Keys absent from a row are metrics that do not apply (no powertrain, no
performance data, a total that has no meaning for a duty mix).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..metrics import REGISTRY, ordered_keys
from ..plain import plain

#: role of a variant
BASELINE = "baseline"
MODIFICATION = "modification"
COMBINATION = "combination"


#: every metric key (metric and US) → its :class:`tractive.metrics.Metric` (label, unit,
#: kind, better direction); the registry in :mod:`tractive.metrics` is the one table
METRICS = REGISTRY


def metric_unit(key: str, currency: str = "") -> str:
    """Unit text of a metric key; money becomes the study currency."""
    info = REGISTRY.get(key)
    return "" if info is None else info.unit_text(currency)


@dataclass(frozen=True)
class ResultRow:
    """One variant on one profile or duty mix.

    Attributes
    ----------
    variant : str
        ``"baseline"`` or the modification / combination name.
    role : str
        ``"baseline"``, ``"modification"`` or ``"combination"``.
    profile : str
        Profile or duty-mix name.
    profile_kind : str
        ``"profile"`` or ``"mix"``.
    metrics : dict
        Nominal value per metric key (float, or None when it cannot be
        computed, e.g. payback without a saving).
    change, change_pct : dict
        Variant minus baseline [metric unit] and in percent of the baseline.
        Empty on baseline rows.
    mean, interval_low, interval_high : dict
        Monte Carlo mean and central interval bounds per metric.
    change_mean, change_low, change_high : dict
        The same for the change.
    distinguishable : dict
        Per changed metric: True when the change interval excludes zero.
    verdict : dict
        With a cost and a service life: ``payback_exceeds_life``,
        ``npv_negative`` (nominal) and ``pays_back_within_life_pct`` (share of
        the draws) — see :func:`tractive.study.engine._verdict`.
    """

    variant: str
    role: str
    profile: str
    profile_kind: str
    metrics: dict
    change: dict = field(default_factory=dict)
    change_pct: dict = field(default_factory=dict)
    mean: dict = field(default_factory=dict)
    interval_low: dict = field(default_factory=dict)
    interval_high: dict = field(default_factory=dict)
    change_mean: dict = field(default_factory=dict)
    change_low: dict = field(default_factory=dict)
    change_high: dict = field(default_factory=dict)
    distinguishable: dict = field(default_factory=dict)
    verdict: dict = field(default_factory=dict)

    @property
    def is_baseline(self) -> bool:
        """True on the baseline's rows."""
        return self.role == BASELINE

    def to_dict(self) -> dict:
        """JSON-ready: identity, metrics at the top level, then the per-metric dicts and,
        for a variant with a cost and a service life, its ``verdict``."""
        out = {"variant": self.variant, "role": self.role, "profile": self.profile,
               "profile_kind": self.profile_kind}
        out.update(self.metrics)
        for name in _ROW_DICTS:
            out[name] = dict(getattr(self, name))
        if self.verdict:
            out["verdict"] = dict(self.verdict)
        return out


#: the per-metric dicts of a ResultRow besides ``metrics``, in output order
_ROW_DICTS = ("change", "change_pct", "mean", "interval_low", "interval_high", "change_mean",
              "change_low", "change_high", "distinguishable")


@dataclass(frozen=True)
class AttributionRow:
    """Split of one metric's change into parameter groups (Shapley values).

    Attributes
    ----------
    variant, profile : str
    metric : str
        Metric key (with unit suffix).
    total : float
        Variant minus baseline [metric unit].
    parts : dict
        Shapley value per group [metric unit]; they add up to ``total``.
    one_at_a_time : dict
        Change when only that group is changed from the baseline [metric unit].
    interaction : float
        ``total`` minus the sum of the one-at-a-time changes [metric unit].
    """

    variant: str
    profile: str
    metric: str
    total: float
    parts: dict
    one_at_a_time: dict
    interaction: float

    def to_dict(self) -> dict:
        return {"variant": self.variant, "profile": self.profile, "metric": self.metric,
                "total": self.total, "parts": dict(self.parts),
                "one_at_a_time": dict(self.one_at_a_time), "interaction": self.interaction}


@dataclass(frozen=True)
class TimeSeries:
    """Nominal wheel force and power along one profile for one variant.

    Arrays have one entry per interval of the sampled profile (UN GTR No. 15
    Annex 7 intervals): ``time_s`` is the end time of the interval,
    ``speed_kmh`` its mean speed, ``force_n`` the total wheel force,
    ``power_kw`` = force × mean speed, ``cumulative_energy_kwh`` the running
    sum of positive (traction) wheel energy.
    """

    variant: str
    profile: str
    time_s: np.ndarray
    speed_kmh: np.ndarray
    force_n: np.ndarray
    power_kw: np.ndarray
    cumulative_energy_kwh: np.ndarray

    def to_dict(self) -> dict:
        return {"variant": self.variant, "profile": self.profile,
                "time_s": np.asarray(self.time_s).tolist(),
                "speed_kmh": np.asarray(self.speed_kmh).tolist(),
                "force_n": np.asarray(self.force_n).tolist(),
                "power_kw": np.asarray(self.power_kw).tolist(),
                "cumulative_energy_kwh": np.asarray(self.cumulative_energy_kwh).tolist()}


def _finite_list(values) -> list:
    """Floats of an array as a JSON-ready list (NaN and infinity become None)."""
    return plain(np.asarray(values, float))


@dataclass(frozen=True)
class RangeCurveSeries:
    """Range and consumption of one variant's nominal vehicle at constant speeds.

    Computed by :func:`tractive.powertrain.range_curve` (level road, no wind,
    the study's ambient temperature for a temperature-dependent auxiliary
    load, a set speed limit respected), for every variant with a powertrain.

    Attributes
    ----------
    variant : str
    powertrain : str
        ``"electric"`` or ``"combustion"``.
    vehicle : str
        Name of the variant's vehicle.
    columns : dict of str → (S,) array
        Keyed with their unit, in the study's output units, in this order: the
        speed (``speed_kmh``, or ``speed_mph`` in US studies), the range
        (``range_km`` / ``range_mi``: usable battery energy or tank over the
        consumption per distance), the consumption (electric:
        ``battery_wh_per_km`` / ``battery_wh_per_mi``, then ``wall_wh_per_km``
        / ``wall_wh_per_mi`` with a stated charger efficiency; combustion:
        ``fuel_l_per_100km`` / ``fuel_economy_mpg``, or ``fuel_kg_per_100km``
        for a fuel sold by mass, then ``co2_g_per_km`` / ``co2_g_per_mi``).
    feasible : (S,) bool array
        False where the drive cannot hold the speed (motor or engine limits, a
        set speed limit); the other columns are still the steady-state values.
    best : dict
        ``best_speed_kmh`` and ``best_range_km`` (US: ``best_speed_mph``,
        ``best_range_mi``): speed of greatest range within the swept span and
        that range (None when no speed is feasible).
    best_at_edge : bool
        True when the best speed is an end of the span (range still rising
        beyond it).
    """

    variant: str
    powertrain: str
    vehicle: str
    columns: dict
    feasible: np.ndarray
    best: dict = field(default_factory=dict)
    best_at_edge: bool = False

    @property
    def speed_key(self) -> str:
        """Key of the speed column (``speed_kmh`` or ``speed_mph``)."""
        return list(self.columns)[0]

    @property
    def range_key(self) -> str:
        """Key of the range column (``range_km`` or ``range_mi``)."""
        return list(self.columns)[1]

    @property
    def consumption_key(self) -> str:
        """Key of the main consumption column (battery energy or fuel per distance)."""
        return list(self.columns)[2]

    def to_dict(self) -> dict:
        out = {"variant": self.variant, "powertrain": self.powertrain,
               "vehicle": self.vehicle}
        for key, values in self.columns.items():
            out[key] = _finite_list(values)
        out["feasible"] = [bool(x) for x in np.asarray(self.feasible, bool).tolist()]
        for key, value in self.best.items():
            out[key] = None if value is None or not np.isfinite(value) else float(value)
        out["best_at_edge_of_span"] = bool(self.best_at_edge)
        return out


@dataclass(frozen=True)
class InputItem:
    """One input value as used, with its unit and where it came from.

    ``source`` is ``"file.yaml:LINE"`` for a value read from a file, or
    ``"default"`` (with the reason in ``note``).
    """

    section: str
    key: str
    value: Any
    unit: str
    source: str
    note: str = ""

    def to_dict(self) -> dict:
        return {"section": self.section, "key": self.key, "value": self.value,
                "unit": self.unit, "source": self.source, "note": self.note}


@dataclass(frozen=True)
class VariantInfo:
    """A variant as defined in the study: its role, cost, and the changes it makes."""

    name: str
    role: str
    cost: float | None
    changes: tuple          # human-readable descriptions, e.g. "cda_m2 +0.12"
    groups: tuple           # changed parameter groups (aero, rolling, mass, ...)
    members: tuple = ()     # for combinations: the modification names
    vehicle_name: str = ""

    def to_dict(self) -> dict:
        return {"name": self.name, "role": self.role, "cost": self.cost,
                "changes": list(self.changes), "groups": list(self.groups),
                "members": list(self.members), "vehicle_name": self.vehicle_name}


@dataclass(frozen=True)
class ProfileInfo:
    """A profile or duty mix as run: distance, duration, and mix shares.

    ``distance_km`` is kept in km; :meth:`to_dict` and :meth:`distance` state it
    in the study's ``units`` (``distance_mi`` in US studies, exact mile).
    """

    name: str
    kind: str               # "profile" or "mix"
    spec: str = ""          # the text resolved for a profile
    distance_km: float | None = None
    duration_s: float | None = None
    shares_pct: dict = field(default_factory=dict)
    units: str = "metric"   # "metric" or "us": unit of the distance in the output

    def distance(self) -> tuple:
        """(key, value) of the distance in the output units: ``distance_km`` or
        ``distance_mi`` (None when not known, e.g. for a mix)."""
        if self.units == "us":
            from ..units import MILE_M
            value = None if self.distance_km is None else self.distance_km / (MILE_M / 1000.0)
            return "distance_mi", value
        return "distance_km", self.distance_km

    def to_dict(self) -> dict:
        key, value = self.distance()
        out = {"name": self.name, "kind": self.kind, "spec": self.spec,
               key: value, "duration_s": self.duration_s}
        if self.shares_pct:
            out["shares_pct"] = dict(self.shares_pct)
        return out


@dataclass(frozen=True)
class StudyResult:
    """Everything a study produced.

    Attributes
    ----------
    study : str
        Study name.
    source : str
        Study file.
    units : str
        ``"metric"`` or ``"us"`` (the metric keys in the rows follow it).
    currency : str
        Currency of every money metric.
    rows : tuple of ResultRow
        Baseline rows first, then each variant, each over all profiles and mixes.
    attribution : tuple of AttributionRow
    series : tuple of TimeSeries
    range_curves : tuple of RangeCurveSeries
        Range against constant speed of every variant with a powertrain.
    inputs : tuple of InputItem
    variants : tuple of VariantInfo
    profiles : tuple of ProfileInfo
    uncertainty : dict
        ``draws``, ``seed``, ``confidence_pct``, ``uncertain_parameters``.
    economics : dict
        Annual distance, prices, discount rate, service life as used.
    warnings : tuple of str
    lap_runs : tuple of (variant, profile, LapSimulation)
        The simulated lap of each variant's nominal vehicle on each ``lap:``
        profile (for figures; not in the JSON document).
    input_files : tuple of str
        Every file the run read (study, vehicles, profiles at any depth of an
        expression, coast-down blocks), resolved; outputs must not replace them.
    """

    study: str
    source: str
    units: str
    currency: str
    rows: tuple
    attribution: tuple = ()
    series: tuple = ()
    range_curves: tuple = ()
    inputs: tuple = ()
    variants: tuple = ()
    profiles: tuple = ()
    uncertainty: dict = field(default_factory=dict)
    economics: dict = field(default_factory=dict)
    warnings: tuple = ()
    input_files: tuple = ()
    lap_runs: tuple = ()

    # -- look-ups ---------------------------------------------------------
    def metric_keys(self) -> list:
        """Metric keys present in any row, in :data:`METRICS` order."""
        present = set()
        for r in self.rows:
            present.update(r.metrics)
        return ordered_keys(present)

    def row(self, variant: str, profile: str) -> ResultRow:
        for r in self.rows:
            if r.variant == variant and r.profile == profile:
                return r
        raise KeyError((variant, profile))

    def baseline_rows(self) -> list:
        return [r for r in self.rows if r.role == BASELINE]

    def unit_of(self, key: str) -> str:
        return metric_unit(key, self.currency)

    # -- export -------------------------------------------------------------
    def to_dict(self, *, include_series: bool = False) -> dict:
        out = {"study": self.study, "source": self.source, "units": self.units,
               "currency": self.currency,
               "metric_units": {k: self.unit_of(k) for k in self.metric_keys()},
               "rows": [r.to_dict() for r in self.rows],
               "attribution": [a.to_dict() for a in self.attribution],
               "range_curves": [c.to_dict() for c in self.range_curves],
               "variants": [v.to_dict() for v in self.variants],
               "profiles": [p.to_dict() for p in self.profiles],
               "uncertainty": dict(self.uncertainty),
               "economics": dict(self.economics),
               "inputs": [i.to_dict() for i in self.inputs],
               "warnings": list(self.warnings)}
        if include_series:
            out["series"] = [s.to_dict() for s in self.series]
        return out

    def summary_frame(self):
        """The summary table as a pandas DataFrame, one line per row.

        Columns: ``variant``, ``role``, ``profile``, ``profile_kind``, then for
        every metric ``<key>``, ``change_<key>``, ``change_pct_<key>``,
        ``<key>_low``, ``<key>_high``, ``change_<key>_low``,
        ``change_<key>_high`` and ``distinguishable_<key>`` (change columns are
        empty on baseline rows).
        """
        import pandas as pd

        keys = self.metric_keys()
        records = []
        for r in self.rows:
            rec = {"variant": r.variant, "role": r.role, "profile": r.profile,
                   "profile_kind": r.profile_kind}
            for k in keys:
                rec[k] = r.metrics.get(k)
                rec[f"change_{k}"] = r.change.get(k)
                rec[f"change_pct_{k}"] = r.change_pct.get(k)
                rec[f"{k}_low"] = r.interval_low.get(k)
                rec[f"{k}_high"] = r.interval_high.get(k)
                rec[f"change_{k}_low"] = r.change_low.get(k)
                rec[f"change_{k}_high"] = r.change_high.get(k)
                rec[f"distinguishable_{k}"] = r.distinguishable.get(k)
            records.append(rec)
        columns = ["variant", "role", "profile", "profile_kind"]
        for k in keys:
            columns += [k, f"change_{k}", f"change_pct_{k}", f"{k}_low", f"{k}_high",
                        f"change_{k}_low", f"change_{k}_high", f"distinguishable_{k}"]
        return pd.DataFrame.from_records(records, columns=columns)

    def attribution_frame(self):
        """Attribution as a long pandas DataFrame: one line per row, metric and group."""
        import pandas as pd

        records = []
        for a in self.attribution:
            for g, v in a.parts.items():
                records.append({"variant": a.variant, "profile": a.profile, "metric": a.metric,
                                "group": g, "shapley": v,
                                "one_at_a_time": a.one_at_a_time.get(g), "total": a.total,
                                "interaction": a.interaction})
        return pd.DataFrame.from_records(records, columns=[
            "variant", "profile", "metric", "group", "shapley", "one_at_a_time", "total",
            "interaction"])
