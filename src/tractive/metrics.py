"""The metric registry: every result a study, a mix or a table reports, described once.

Each :class:`Metric` says a metric's key (with its unit as suffix), label,
unit, kind, which direction is better, and how it is stated in US units.
Mixing by distance share (:func:`mix`), US conversion (:func:`to_units`),
table columns, workbook sheets and the CSV all read this table; no code
tests a key's suffix to learn what it is.

Kinds (:data:`KINDS`)
    ``total``          a total of one run (kWh, L over the profile); has no
                       meaning for a duty mix, so a mix drops it
    ``per_distance``   an amount per distance (Wh/km, L/100 km, g/km); a mix
                       takes the distance-share-weighted mean Σ wᵢ·xᵢ
    ``distance_per``   a distance per amount (range in km, economy in mpg); a
                       mix takes the weighted harmonic mean 1 / Σ (wᵢ / xᵢ)
    ``independent``    the same on every profile of a variant (top speed,
                       acceleration, the modification's cost); a mix copies it
    ``per_profile``    a figure of one profile that is neither summed over the
                       profile nor the same on every profile (the lap time on
                       a circuit, the highest speed on the lap); a mix drops
                       it: a distance share of a lap time has no meaning (a
                       mix of a lap and a drive cycle has no lap time), and
                       copying it as ``independent`` would report one
                       circuit's lap time for a mix of others
    ``annual``         a yearly amount derived after mixing (annual fuel, CO2,
                       cost); never mixed itself
    ``economics``      a comparison with the baseline (saving, payback, NPV);
                       never mixed, never changed against the baseline

Mixing rule
    Driving a share wᵢ of the distance on profile i uses Σ wᵢ·eᵢ per km of an
    amount e per km. For a distance per amount (economy, range) that is the
    harmonic combination 1 / Σ (wᵢ / xᵢ): the 55 % city / 45 % highway
    combined fuel economy of 40 CFR 600 [1] (Appendix II worked example:
    27.7 and 36.9 mpg → 31.2 mpg).

US units
    ``us`` gives the US key and either a factor (US value = value × factor)
    or a converter function; keys without a US form are the same in both
    systems, and ``us_only``/``metric_only`` metrics exist in one system
    only (0-60 mph is computed, not converted, from 0-100 km/h).
    Factors are exact (1 mi = 1.609344 km, 1 US gal = 3.785411784 L; NIST
    SP 811 [2]).

References
----------
.. [1] 40 CFR Part 600, Appendix II (combined fuel economy, 55/45 harmonic).
.. [2] NIST Special Publication 811 (2008), Appendix B (exact factors).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Iterable, Mapping, Sequence

import numpy as np

from .units import MILE_M, US_GALLON_L

TOTAL = "total"
PER_DISTANCE = "per_distance"
DISTANCE_PER = "distance_per"
INDEPENDENT = "independent"
PER_PROFILE = "per_profile"
ANNUAL = "annual"
ECONOMICS = "economics"
#: every kind of metric (see the module doc)
KINDS = (TOTAL, PER_DISTANCE, DISTANCE_PER, INDEPENDENT, PER_PROFILE, ANNUAL, ECONOMICS)

#: unit text standing for the study's currency
MONEY = "money"

#: kilometres per mile (exact)
KM_PER_MI = MILE_M / 1000.0


def l_per_100km_to_mpg(fuel_l_per_100km, gallon_l: float = US_GALLON_L):
    """Fuel economy [miles per gallon] from consumption [L/100 km].

    mpg = (100 km / 1 mi) / (L per 100 km / L per gallon), with the exact mile
    and the gallon given (US 3.785411784 L, UK 4.54609 L; NIST SP 811). Zero
    consumption gives +inf.
    """
    x = np.asarray(fuel_l_per_100km, float)
    with np.errstate(divide="ignore"):
        return (100.0 / KM_PER_MI) / (x / gallon_l)


@dataclass(frozen=True)
class USForm:
    """How a metric is stated in US units.

    Attributes
    ----------
    key, unit, label : str
        The US key (with its unit suffix), unit text and label.
    factor, divisor : float
        US value = metric value × factor / divisor (ignored when ``convert`` is
        given); a conversion states the exact factor it is defined by (km per
        mile, litres per gallon) on the side where it belongs.
    convert : callable, optional
        US value = convert(metric value), for conversions that are no factor
        (an economy from a consumption).
    better : str, optional
        Better direction in US units when it differs (an economy is better
        higher where a consumption is better lower).
    kind : str, optional
        Kind in US units when it differs (an economy is a distance per amount).
    """

    key: str
    unit: str
    label: str = ""
    factor: float = 1.0
    divisor: float = 1.0
    convert: Callable | None = None
    better: str | None = None
    kind: str | None = None

    def apply(self, value):
        """The US value of a metric value (arrays keep their shape; None stays None; a
        list of numbers, as in a JSON document, is converted item by item)."""
        if value is None:
            return None
        if isinstance(value, list):
            return [self.apply(v) for v in value]
        if self.convert is not None:
            return self.convert(value)
        if self.divisor != 1.0:
            return value / self.divisor
        return value * self.factor


@dataclass(frozen=True)
class Metric:
    """One metric a result can report.

    Attributes
    ----------
    key : str
        Key with its unit as suffix (money keys carry none: see ``unit``).
    label : str
        Short human label.
    unit : str
        Unit text; :data:`MONEY` stands for the study currency.
    kind : str
        One of :data:`KINDS`.
    better : str
        ``"lower"``, ``"higher"`` or ``""`` (neither).
    us : USForm, optional
        The metric in US units; None when the same key serves both systems.
    metric_only, us_only : bool
        Reported in one system only.
    attributed : bool
        Split into parameter groups by the study's attribution (Shapley values).
    headline : bool
        Shown by default in the terminal table and the workbook's summary.
    """

    key: str
    label: str
    unit: str
    kind: str
    better: str = ""
    us: USForm | None = None
    metric_only: bool = False
    us_only: bool = False
    attributed: bool = False
    headline: bool = False
    system: str = field(default="metric", compare=False)

    @property
    def is_money(self) -> bool:
        """True for amounts in the study currency."""
        return self.unit == MONEY

    def unit_text(self, currency: str = "") -> str:
        """Unit for headers; money becomes the currency."""
        return currency if self.is_money and currency else self.unit


def _m(key, label, unit, kind, better="", us=None, **kw) -> Metric:
    return Metric(key, label, unit, kind, better, us, **kw)


def _per_mi(key: str, label: str) -> USForm:
    """US form of an amount per km: the same amount per mile."""
    return USForm(key, "Wh/mi", label, factor=KM_PER_MI)


#: every metric in report order (metric system; US forms inside)
METRICS: tuple[Metric, ...] = (
    _m("distance_km", "distance", "km", TOTAL,
       us=USForm("distance_mi", "mi", "distance", divisor=KM_PER_MI)),
    _m("positive_energy_kwh", "wheel energy (traction)", "kWh", TOTAL, "lower"),
    _m("negative_energy_kwh", "braking energy", "kWh", TOTAL, "lower"),
    _m("rolling_energy_kwh", "wheel energy: rolling", "kWh", TOTAL, "lower"),
    _m("aero_energy_kwh", "wheel energy: aero", "kWh", TOTAL, "lower"),
    _m("inertia_energy_kwh", "wheel energy: inertia", "kWh", TOTAL, "lower"),
    _m("grade_energy_kwh", "wheel energy: grade", "kWh", TOTAL, "lower"),
    _m("positive_energy_wh_per_km", "wheel energy per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("positive_energy_wh_per_mi", "wheel energy per mile"), attributed=True,
       headline=True),
    _m("negative_energy_wh_per_km", "braking energy per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("negative_energy_wh_per_mi", "braking energy per mile")),
    _m("rolling_energy_wh_per_km", "rolling per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("rolling_energy_wh_per_mi", "rolling per mile"), attributed=True),
    _m("aero_energy_wh_per_km", "aero per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("aero_energy_wh_per_mi", "aero per mile"), attributed=True),
    _m("inertia_energy_wh_per_km", "inertia per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("inertia_energy_wh_per_mi", "inertia per mile")),
    _m("grade_energy_wh_per_km", "grade per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("grade_energy_wh_per_mi", "grade per mile")),
    _m("battery_energy_kwh", "battery energy", "kWh", TOTAL, "lower"),
    _m("battery_wh_per_km", "battery energy per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("battery_wh_per_mi", "battery energy per mile"), attributed=True,
       headline=True),
    _m("wall_wh_per_km", "energy from the wall per km", "Wh/km", PER_DISTANCE, "lower",
       _per_mi("wall_wh_per_mi", "energy from the wall per mile")),
    _m("fuel_l", "fuel", "L", TOTAL, "lower",
       us=USForm("fuel_gal", "US gal", "fuel", divisor=US_GALLON_L)),
    _m("fuel_l_per_100km", "fuel consumption", "L/100 km", PER_DISTANCE, "lower",
       us=USForm("fuel_economy_mpg", "mpg (US)", "fuel economy", convert=l_per_100km_to_mpg,
                 better="higher", kind=DISTANCE_PER), attributed=True, headline=True),
    _m("fuel_kg_per_100km", "fuel consumption (by mass)", "kg/100 km", PER_DISTANCE,
       "lower"),
    _m("mpg_us", "fuel economy (US gallon)", "mpg (US)", DISTANCE_PER, "higher"),
    _m("mpg_uk", "fuel economy (UK gallon)", "mpg (UK)", DISTANCE_PER, "higher"),
    _m("co2_g_per_km", "CO2 per km", "g/km", PER_DISTANCE, "lower",
       us=USForm("co2_g_per_mi", "g/mi", "CO2 per mile", factor=KM_PER_MI), attributed=True),
    _m("motor_limit_exceeded_s", "time beyond the motor's limit", "s", TOTAL, "lower"),
    _m("engine_limit_exceeded_s", "time beyond the engine's limit", "s", TOTAL, "lower"),
    _m("range_km", "range", "km", DISTANCE_PER, "higher",
       us=USForm("range_mi", "mi", "range", divisor=KM_PER_MI), attributed=True,
       headline=True),
    _m("top_speed_kmh", "top speed", "km/h", INDEPENDENT, "higher",
       us=USForm("top_speed_mph", "mph", "top speed", divisor=KM_PER_MI),
       attributed=True, headline=True),
    _m("accel_0_100_kmh_s", "0-100 km/h", "s", INDEPENDENT, "lower", attributed=True,
       metric_only=True),
    _m("accel_80_120_kmh_s", "80-120 km/h", "s", INDEPENDENT, "lower", attributed=True,
       metric_only=True),
    _m("accel_0_60_mph_s", "0-60 mph", "s", INDEPENDENT, "lower", attributed=True,
       us_only=True),
    _m("accel_50_70_mph_s", "50-70 mph", "s", INDEPENDENT, "lower", attributed=True,
       us_only=True),
    # a lap simulated per vehicle on a circuit (``lap:`` profiles): one lap, whatever
    # the number of laps laid end to end; seconds in both systems
    _m("lap_time_s", "lap time", "s", PER_PROFILE, "lower", attributed=True, headline=True),
    _m("lap_max_speed_kmh", "highest speed on the lap", "km/h", PER_PROFILE, "higher",
       us=USForm("lap_max_speed_mph", "mph", "highest speed on the lap", divisor=KM_PER_MI)),
    # descriptors of a command's output (not study metrics): converted, never mixed
    _m("speed_kmh", "speed", "km/h", INDEPENDENT,
       us=USForm("speed_mph", "mph", "speed", divisor=KM_PER_MI)),
    _m("best_speed_kmh", "speed of greatest range", "km/h", INDEPENDENT,
       us=USForm("best_speed_mph", "mph", "speed of greatest range", divisor=KM_PER_MI)),
    _m("best_range_km", "greatest range", "km", INDEPENDENT, "higher",
       us=USForm("best_range_mi", "mi", "greatest range", divisor=KM_PER_MI)),
    _m("speed_at_limit_kmh", "speed at the rev or speed limit", "km/h", INDEPENDENT,
       us=USForm("speed_at_limit_mph", "mph", "speed at the rev or speed limit",
                 divisor=KM_PER_MI)),
    _m("gradeability_speed_kmh", "speed of the gradeability figure", "km/h", INDEPENDENT,
       us=USForm("gradeability_speed_mph", "mph", "speed of the gradeability figure",
                 divisor=KM_PER_MI)),
    _m("wind_kmh", "head wind", "km/h", INDEPENDENT,
       us=USForm("wind_mph", "mph", "head wind", divisor=KM_PER_MI)),
    _m("annual_distance_km", "annual distance", "km", ANNUAL,
       us=USForm("annual_distance_mi", "mi", "annual distance", divisor=KM_PER_MI)),
    _m("annual_battery_energy_kwh", "annual battery energy", "kWh", ANNUAL, "lower"),
    _m("annual_grid_energy_kwh", "annual energy from the grid", "kWh", ANNUAL, "lower"),
    _m("annual_fuel_l", "annual fuel", "L", ANNUAL, "lower",
       us=USForm("annual_fuel_gal", "US gal", "annual fuel", divisor=US_GALLON_L)),
    _m("annual_energy_cost", "annual energy cost", MONEY, ANNUAL, "lower", attributed=True,
       headline=True),
    _m("annual_co2_kg", "annual CO2", "kg", ANNUAL, "lower", attributed=True),
    _m("fleet_annual_fuel_l", "fleet fuel per year", "L", ANNUAL, "lower",
       us=USForm("fleet_annual_fuel_gal", "US gal", "fleet fuel per year",
                 divisor=US_GALLON_L)),
    _m("fleet_annual_grid_energy_kwh", "fleet electricity per year", "kWh", ANNUAL, "lower"),
    _m("fleet_annual_co2_t", "fleet CO2 per year", "t", ANNUAL, "lower"),
    _m("fleet_annual_energy_cost", "fleet energy cost per year", MONEY, ANNUAL, "lower"),
    _m("annual_saving", "annual saving against baseline", MONEY, ECONOMICS, "higher"),
    _m("fleet_annual_saving", "fleet saving per year", MONEY, ECONOMICS, "higher"),
    _m("modification_cost", "cost of the modification", MONEY, INDEPENDENT, "lower"),
    _m("payback_years", "simple payback", "years", ECONOMICS, "lower", headline=True),
    _m("npv", "net present value", MONEY, ECONOMICS, "higher"),
    _m("fleet_npv", "fleet net present value", MONEY, ECONOMICS, "higher"),
)


def _us_metric(m: Metric) -> Metric:
    """The US twin of a metric with a US form, as a Metric of its own."""
    u = m.us
    return Metric(u.key, u.label or m.label, u.unit, u.kind or m.kind,
                  m.better if u.better is None else u.better, None, attributed=m.attributed,
                  headline=m.headline, us_only=True, system="us")


#: every key, metric and US, → its Metric (the US twins built from the US forms)
REGISTRY: dict[str, Metric] = {}
for _metric in METRICS:
    REGISTRY[_metric.key] = _metric if not _metric.us_only else \
        Metric(**{**_metric.__dict__, "system": "us"})
    if _metric.us is not None:
        REGISTRY[_metric.us.key] = _us_metric(_metric)
del _metric


def lookup(key: str) -> Metric | None:
    """The Metric of a key (metric or US), or None for a key not in the registry."""
    return REGISTRY.get(key)


def in_system(m: Metric, units: str) -> bool:
    """True when the metric is reported in that system (``"metric"`` or ``"us"``)."""
    if units == "us":
        return m.system == "us" or (m.us is None and not m.metric_only)
    return m.system == "metric" and not m.us_only


def ordered_keys(keys: Iterable[str], units: str | None = None) -> list:
    """Keys in registry order (unknown keys last, sorted); optionally only one system's."""
    present = set(keys)
    out = [k for k in REGISTRY if k in present
           and (units is None or in_system(REGISTRY[k], units))]
    return out + sorted(k for k in present if k not in REGISTRY)


def attributed_keys(units: str = "metric") -> tuple:
    """Keys split into parameter groups by a study's attribution, in one system."""
    return tuple(k for k in ordered_keys(REGISTRY, units) if REGISTRY[k].attributed)


def headline_keys(units: str = "metric") -> tuple:
    """Keys shown by default in tables, in one system."""
    return tuple(k for k in ordered_keys(REGISTRY, units) if REGISTRY[k].headline)


def to_units(values: Mapping, units: str) -> dict:
    """Metric values (scalars or arrays) stated in a system's units, keys renamed.

    ``"metric"`` returns a copy. ``"us"`` converts every metric with a US form
    (exact factors), drops metric-only ones and keeps the rest (keys not in
    the registry pass through unchanged).
    """
    if units == "metric":
        return dict(values)
    out = {}
    for key, value in values.items():
        m = REGISTRY.get(key)
        if m is None or m.system == "us" or (m.us is None and not m.metric_only):
            out[key] = value
        elif m.us is not None:
            out[m.us.key] = m.us.apply(value)
        # metric-only: not reported in US studies
    return out


#: largest deviation of a mix's shares from a sum of 1 that is taken as rounding [-]
SHARE_SUM_TOLERANCE = 1e-6


def check_shares(shares: Sequence[float], count: int, what: str = "profile") -> list:
    """Distance shares of a mix as floats, checked: one per member, each ≥ 0 and finite,
    adding up to 1 (within :data:`SHARE_SUM_TOLERANCE`).

    Raises
    ------
    InputError
        With field ``shares`` and the rule broken.
    """
    from .errors import InputError

    shares = [float(x) for x in shares]
    if len(shares) != count:
        raise InputError(f"give one share per {what}: {count} {what}s, {len(shares)} "
                         f"shares", field="shares")
    if count == 0:
        raise InputError(f"a mix needs at least one {what}", field="shares")
    if any(not np.isfinite(x) or x < 0 for x in shares):
        raise InputError("shares must be numbers of 0 or more", field="shares")
    if abs(sum(shares) - 1.0) > SHARE_SUM_TOLERANCE:
        raise InputError(f"shares must add up to 1, they add up to {sum(shares):.6g}",
                         field="shares")
    return shares


def weighted_mean(values: Sequence, shares: Sequence[float]):
    """Σ wᵢ·xᵢ: the mix of an amount per distance (scalars or arrays)."""
    return sum(w * x for w, x in zip(shares, values))


def harmonic_mean(values: Sequence, shares: Sequence[float]):
    """1 / Σ (wᵢ / xᵢ): the mix of a distance per amount (+inf members add nothing)."""
    with np.errstate(divide="ignore"):
        return 1.0 / sum(w / x for w, x in zip(shares, values))


def convert_document(obj, units: str):
    """A JSON-ready document in a system's units: every dict's keys converted by
    :func:`to_units` (lists and nested dicts too); ``"metric"`` returns it as is."""
    if units == "metric":
        return obj
    if isinstance(obj, dict):
        return {k: convert_document(v, units) for k, v in to_units(obj, units).items()}
    if isinstance(obj, list):
        return [convert_document(v, units) for v in obj]
    return obj


def mix(members: Sequence[Mapping], shares: Sequence[float]) -> dict:
    """Values of a duty mix from the same metrics on each profile, by distance share.

    Parameters
    ----------
    members : sequence of mapping key → float or (N,) array
        One mapping per profile; only keys present in all are mixed.
    shares : sequence of float
        Distance shares [-], one per member, adding up to 1.

    Returns
    -------
    dict
        ``per_distance`` keys as Σ wᵢ·xᵢ, ``distance_per`` keys as
        1 / Σ (wᵢ / xᵢ) (+inf members contribute nothing, a range without
        consumption stays +inf), ``independent`` keys from the first member;
        totals, per-profile figures (lap time), annual and economics keys are
        left out (see the module doc).
    """
    out = {}
    first = members[0]
    for key in first:
        if not all(key in m for m in members[1:]):
            continue            # not computed on every profile of the mix
        m = REGISTRY.get(key)
        if m is None:
            continue
        if m.kind == PER_DISTANCE:
            out[key] = weighted_mean([mm[key] for mm in members], shares)
        elif m.kind == DISTANCE_PER:
            out[key] = harmonic_mean([mm[key] for mm in members], shares)
        elif m.kind == INDEPENDENT:
            v = first[key]
            out[key] = v.copy() if isinstance(v, np.ndarray) else v
    return out
