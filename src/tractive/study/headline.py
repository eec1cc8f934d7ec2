"""One sentence per variant that a person can forward: what it changes, per year, and
whether it pays back within its service life, with the Monte Carlo intervals.

Example::

    roof rack (EUR 420): range -6.9 km (-10 … -3.6) on town deliveries, -8.1 km
    (-12 … -4.4) on ring road; per year on florist week, energy cost +EUR 21
    (+10 … +32); never pays back: it raises the energy cost.

The main figure per profile is the range of an electric vehicle, the fuel
consumption of a combustion one, else the wheel energy per distance; top speed and 0-100 (0-60 mph) follow when
they change. Money per year is taken on the first duty mix (the study's
description of a year's driving), else on the first profile. A change whose
interval includes zero says so ("about 0"). Text only: numbers are rounded
for reading (:mod:`tractive.numfmt`); the JSON keeps full precision.
"""

from __future__ import annotations

from ..metrics import lookup
from ..numfmt import interval, number
from .results import BASELINE

#: main figure per profile, first present wins (metric and US keys): range for an
#: electric vehicle (the converter's question), fuel for a combustion one (the fleet's),
#: else wheel energy per distance
MAIN_KEYS = ("battery_range", "fuel_l_per_100km", "fuel_economy_mpg",
             "positive_energy_wh_per_km", "positive_energy_wh_per_mi")
#: figures the same on every profile, shown once when they change
PERFORMANCE_KEYS = ("top_speed_kmh", "top_speed_mph", "accel_0_100_kmh_s",
                    "accel_0_60_mph_s")


def headlines(result) -> dict:
    """Variant name → one sentence, for every variant but the baseline."""
    return {v.name: headline(result, v.name) for v in result.variants if v.role != BASELINE}


def headline(result, variant: str) -> str:
    """The sentence of one variant (see the module doc)."""
    info = next(v for v in result.variants if v.name == variant)
    rows = [r for r in result.rows if r.variant == variant]
    cost = "" if info.cost is None else f" (cost {_money(result, info.cost)})"
    parts = [_per_profile(result, rows)]
    perf = _performance(result, rows)
    if perf:
        parts.append(perf)
    money = _per_year(result, rows)
    if money:
        parts.append(money)
    return f"{variant}{cost}: " + "; ".join(p for p in parts if p) + "."


def _unit(result, key: str) -> str:
    """Unit text of a metric (the currency for money)."""
    return result.unit_of(key)


def _label(key: str) -> str:
    """Short label of a metric."""
    m = lookup(key)
    return key if m is None else m.label


def _change(result, row, key: str) -> str | None:
    """``-6.9 km (-10 … -3.6)`` or ``about 0 km (-1.2 … +0.8)``; None without a change."""
    c = row.change.get(key)
    if c is None:
        return None
    lo, hi = row.change_low.get(key), row.change_high.get(key)
    unit = _unit(result, key)
    rng = interval(lo, hi, signed=True)
    if not row.distinguishable.get(key, True):
        return f"about 0 {unit} {rng}".replace("  ", " ").strip()
    value = number(c, signed=True, like=max(abs(x) for x in (c, lo or 0, hi or 0)))
    return f"{value} {unit} {rng}".strip()


def _main_keys(rows) -> tuple:
    """MAIN_KEYS with "battery_range" standing for the range of an electric vehicle."""
    electric = any(k.startswith("battery_wh_per") for r in rows for k in r.metrics)
    out = []
    for k in MAIN_KEYS:
        if k == "battery_range":
            out += ["range_km", "range_mi"] if electric else []
        else:
            out.append(k)
    return tuple(out)


def _per_profile(result, rows) -> str:
    """The main figure's change on each profile and mix; the lap time on a simulated lap."""
    key = next((k for k in _main_keys(rows) if any(k in r.change for r in rows)), None)
    if key is None:
        return "no change that a profile shows"
    pieces = []
    for r in rows:
        text = _change(result, r, key)
        if text is not None:
            pieces.append(f"{text} on {r.profile}")
    laps = [f"{_change(result, r, 'lap_time_s')} on {r.profile}" for r in rows
            if "lap_time_s" in r.change]
    lap_text = f"lap time {', '.join(laps)}; " if laps else ""
    return f"{lap_text}{_label(key)} " + ", ".join(pieces)


def _performance(result, rows) -> str:
    """Top speed and acceleration changes, once (they do not depend on the profile)."""
    out = []
    row = rows[0]
    for key in PERFORMANCE_KEYS:
        if key in row.change and row.change[key] != 0:
            out.append(f"{_label(key)} {_change(result, row, key)}")
    return ", ".join(out)


def _money(result, value, signed: bool = False) -> str:
    """An amount in the study currency: ``EUR 420`` / ``+EUR 21``."""
    text = number(value, signed=signed)
    if text.startswith(("+", "-")):
        return f"{text[0]}{result.currency} {text[1:]}".strip()
    return f"{result.currency} {text}".strip()


def _year_row(rows):
    """The row that money per year is read on: first mix, else first profile."""
    mixes = [r for r in rows if r.profile_kind == "mix"]
    return (mixes or rows)[0]


def _per_year(result, rows) -> str:
    """Money per year, fleet totals and the payback verdict."""
    row = _year_row(rows)
    m = row.metrics
    saving = m.get("annual_saving")
    if "annual_energy_cost" not in m or saving is None:
        return ""
    lo, hi = row.interval_low.get("annual_saving"), row.interval_high.get("annual_saving")
    if saving >= 0:
        text = f"on {row.profile} it saves {_money(result, saving)} a year in energy"
        rng = interval(lo, hi)
    else:
        text = f"on {row.profile} it adds {_money(result, -saving)} a year in energy"
        rng = interval(None if hi is None else -hi, None if lo is None else -lo)
    text = f"{text} {rng}".rstrip()
    fleet = m.get("fleet_annual_saving")
    if fleet is not None:
        text += f" ({_money(result, abs(fleet))} for the fleet)"
    pay = _payback(result, row)
    return f"{text}; {pay}" if pay else text


def _payback(result, row) -> str:
    """Whether and when the variant pays back within its service life, and its NPV."""
    m, v = row.metrics, row.verdict
    if "payback_years" not in m:
        return ""
    life = result.economics.get("service_life_years")
    p = m["payback_years"]
    rng = interval(row.interval_low.get("payback_years"),
                   row.interval_high.get("payback_years"))
    cost = m.get("modification_cost")
    if p is None:
        text = "never pays back (it does not lower the energy cost)" if (cost or 0) > 0 \
            else "no payback: it lowers the price but raises the energy cost"
    elif p == 0:
        text = "pays back at once (it costs nothing or lowers the price)"
    else:
        text = f"pays back in {number(p)} years" + (f" {rng}" if rng else "")
        if life is not None and v:
            where = "beyond" if v.get("payback_exceeds_life") else "within"
            text += f", {where} its {number(life)}-year service life"
            share = v.get("pays_back_within_life_pct")
            if share is not None and 0 < share < 100:
                text += f" ({number(share)} % of the draws pay back in time)"
    if "npv" in m:
        npv_rng = interval(row.interval_low.get("npv"), row.interval_high.get("npv"),
                           signed=True)
        text += f"; NPV {_money(result, m['npv'], signed=True)} {npv_rng}".rstrip()
    return text
