"""Money and annual amounts of a study: duty mixes, annual energy, cost and CO2, fleet
totals, the comparison with the baseline (saving, payback, NPV), uncertain prices and
costs, and the economics echo.

Formulas: :mod:`tractive.study.economics` (annual amount, simple payback, NPV) and
:mod:`tractive.metrics` (mixing by distance share, US units).
"""

from __future__ import annotations

import numpy as np

from ..metrics import KM_PER_MI, mix, to_units
from ..units import US_GALLON_L
from .economics import annual_amount, net_present_value, simple_payback_years
from .spec import StudySpec
from .uncertainty import standard_normal_draws


#: share of the bought electricity lost in charging (US DOE VTO Fact #750, 2012)
CHARGING_LOSS_TEXT = "charging typically loses 16-19 % (US DOE VTO Fact #750)"


def _check_money(spec: StudySpec, raw_results, warnings) -> None:
    """Refuse money without the prices the vehicles need; warn when no charging loss
    is stated anywhere for an electric vehicle."""
    e = spec.economics
    if e is None:
        return
    electric = fuel = False
    for per_profile in raw_results.values():
        for met in per_profile.values():
            electric |= "battery_wh_per_km" in met
            fuel |= "fuel_l_per_100km" in met
    if not electric and not fuel:
        raise e.error("annual energy and money need vehicles with a powertrain block "
                      "(electric or combustion)", "")
    if electric and e.electricity_price_per_kwh is None:
        raise e.error("missing: the vehicles use electricity, so money needs this price "
                      "(money per kWh)", "electricity_price_per_kwh")
    if fuel and e.fuel_price_per_l is None:
        raise e.error("missing: the vehicles burn fuel, so money needs fuel_price_per_l "
                      "(or fuel_price_per_gal)", "fuel_price_per_l")
    if e.charging_efficiency is None:
        lossless = [name for name, per_profile in raw_results.items()
                    if any("battery_wh_per_km" in m and "wall_wh_per_km" not in m
                           for m in per_profile.values())]
        if lossless:
            warnings.append(
                f"no charging loss counted for {', '.join(lossless)}: neither the powertrain "
                f"(charger_efficiency) nor economics.charging_efficiency states one, so the "
                f"electricity bought, its cost and its CO2 equal the battery energy; "
                f"{CHARGING_LOSS_TEXT}")


def _mix(per_profile: dict, shares_pct: dict) -> dict:
    """Duty-mix metrics from per-profile metrics by distance share (:func:`tractive.metrics.mix`)."""
    return mix([per_profile[k] for k in shares_pct], [v / 100.0 for v in shares_pct.values()])


def _derive(spec: StudySpec, per_profile: dict, prices: dict | None = None) -> dict:
    """Add duty mixes and annual quantities (not the comparisons).

    ``prices`` holds the fuel price [money/L] and electricity price
    [money/kWh] as floats or arrays along the vehicle axis (Monte Carlo draws);
    the nominal prices when None.
    """
    out = {p: dict(m) for p, m in per_profile.items()}
    for mx in spec.mixes:
        out[mx.name] = _mix(per_profile, mx.shares_pct)
    if spec.economics is not None:
        if prices is None:
            prices = {"fuel": spec.economics.fuel_price_per_l,
                      "electricity": spec.economics.electricity_price_per_kwh}
        for met in out.values():
            _annual(spec.economics, met, prices)
            _fleet_totals(spec.economics, met)
    return out


def _annual(e, met: dict, prices: dict) -> None:
    """Annual distance, energy, cost and CO2 of one profile's metrics (in place)."""
    size = next(iter(met.values())).shape
    dist = e.annual_distance_km
    met["annual_distance_km"] = np.full(size, dist)
    if "battery_wh_per_km" in met:
        battery = annual_amount(met["battery_wh_per_km"] / 1000.0, dist)
        if "wall_wh_per_km" in met:
            # the powertrain states its own charger efficiency
            grid = annual_amount(met["wall_wh_per_km"] / 1000.0, dist)
        elif e.charging_efficiency is not None:
            grid = battery / e.charging_efficiency
        else:
            # no charging efficiency anywhere: bought = stored (warned, see _check_money)
            grid = battery
        met["annual_battery_energy_kwh"] = battery
        met["annual_grid_energy_kwh"] = grid
        if prices["electricity"] is not None:
            met["annual_energy_cost"] = grid * prices["electricity"]
        if e.electricity_co2_g_per_kwh is not None:
            met["annual_co2_kg"] = grid * e.electricity_co2_g_per_kwh / 1000.0
    elif "fuel_l_per_100km" in met:
        fuel = annual_amount(met["fuel_l_per_100km"] / 100.0, dist)
        met["annual_fuel_l"] = fuel
        if prices["fuel"] is not None:
            met["annual_energy_cost"] = fuel * prices["fuel"]
        if e.fuel_co2_g_per_l is not None:
            met["annual_co2_kg"] = fuel * e.fuel_co2_g_per_l / 1000.0
        elif "co2_g_per_km" in met:
            met["annual_co2_kg"] = annual_amount(met["co2_g_per_km"] / 1000.0, dist)


#: annual metric → (fleet metric, factor): fleet totals of ``economics.vehicles``
FLEET_TOTALS = {"annual_fuel_l": ("fleet_annual_fuel_l", 1.0),
                "annual_grid_energy_kwh": ("fleet_annual_grid_energy_kwh", 1.0),
                "annual_co2_kg": ("fleet_annual_co2_t", 1e-3),
                "annual_energy_cost": ("fleet_annual_energy_cost", 1.0)}


def _fleet_totals(e, met: dict) -> None:
    """Fleet totals per year (``economics.vehicles`` × one vehicle's annual amounts)."""
    if e.vehicles is None:
        return
    for key, (fleet_key, factor) in FLEET_TOTALS.items():
        if key in met:
            met[fleet_key] = met[key] * (e.vehicles * factor)


def _compare_economics(spec: StudySpec, derived: dict, base: dict, cost) -> None:
    """Saving against the baseline, payback and NPV of a variant (in place).

    ``cost`` is a float, or an array of the cost's Monte Carlo draws (nominal
    first) when the study gives ``cost_std``.
    """
    e = spec.economics
    if e is None:
        return
    for p, met in derived.items():
        b = base[p]
        if "annual_energy_cost" not in met or "annual_energy_cost" not in b:
            continue
        saving = b["annual_energy_cost"] - met["annual_energy_cost"]
        met["annual_saving"] = saving
        if e.vehicles is not None:
            met["fleet_annual_saving"] = saving * e.vehicles
        if cost is None:
            continue
        cost_arr = np.broadcast_to(np.asarray(cost, float), saving.shape).copy()
        met["modification_cost"] = cost_arr
        met["payback_years"] = simple_payback_years(cost_arr if np.ndim(cost) else cost,
                                                    saving)
        if e.service_life_years is not None:
            met["npv"] = net_present_value(cost_arr if np.ndim(cost) else cost, saving,
                                           e.discount_rate, e.service_life_years)
            if e.vehicles is not None:
                met["fleet_npv"] = met["npv"] * e.vehicles


def _price_draws(spec: StudySpec, rng, n: int, uncertain: list) -> dict:
    """Fuel and electricity prices: floats, or arrays (nominal + n draws, normal,
    clipped at 0) when the study gives their standard uncertainty."""
    e = spec.economics
    if e is None:
        return {"fuel": None, "electricity": None}
    out = {}
    for name, price, std, unit in (
            ("fuel", e.fuel_price_per_l, e.fuel_price_std_per_l, "per L"),
            ("electricity", e.electricity_price_per_kwh, e.electricity_price_std_per_kwh,
             "per kWh")):
        out[name] = price
        if price is not None and std > 0 and n > 0:
            z = standard_normal_draws(rng, n)
            out[name] = np.maximum(price + std * z, 0.0)      # index 0: z = 0, the nominal
            uncertain.append(f"{name} price ± {std:g} {spec.currency} {unit}")
    return out


def _cost_draws(spec: StudySpec, variants, rng, n: int, uncertain: list) -> dict:
    """Cost draws (nominal + n) of every variant whose cost is uncertain (``cost_std``);
    a combination's cost is the sum of its members' draws."""
    mods = {m.name: m for m in spec.modifications}
    draws = {}
    for m in spec.modifications:
        if m.cost is not None and m.cost_std > 0 and n > 0:
            z = standard_normal_draws(rng, n)
            draws[m.name] = m.cost + m.cost_std * z           # index 0: the nominal cost
            uncertain.append(f"{m.name}: cost ± {m.cost_std:g} {spec.currency}")
    out = {}
    for v in variants:
        if v.cost is None or not any(k in draws for k in v.members):
            continue
        total = np.zeros(n + 1)
        for k in v.members:
            total = total + (draws[k] if k in draws else mods[k].cost)
        out[v.name] = total
    return out


# ---------------------------------------------------------------------------
# output units
# ---------------------------------------------------------------------------

_KM_PER_MI = KM_PER_MI
#: km/h per mph (exact: 1 mi = 1.609344 km)
_KMH_PER_MPH = KM_PER_MI


def _to_units(met: dict, units: str) -> dict:
    """Metric arrays in the study's output units (:func:`tractive.metrics.to_units`)."""
    return to_units(met, units)


def _economics_echo(e, units: str, currency: str) -> dict:
    """The economics inputs as used, for the result's ``economics``.

    Annual distance, fuel price and fuel CO2 are in the study's units: US
    studies state them per mile and per US gallon (exact factors of
    :mod:`tractive.units`), whichever unit the study file used. Electricity
    price and CO2 are per kWh, the discount rate in percent.
    """
    if units != "us":
        out = {"annual_distance_km": e.annual_distance_km,
               "fuel_price_per_l": e.fuel_price_per_l,
               "fuel_co2_g_per_l": e.fuel_co2_g_per_l}
    else:
        per_gal = lambda x: None if x is None else x * US_GALLON_L  # noqa: E731
        out = {"annual_distance_mi": e.annual_distance_km / _KM_PER_MI,
               "fuel_price_per_gal": per_gal(e.fuel_price_per_l),
               "fuel_co2_g_per_gal": per_gal(e.fuel_co2_g_per_l)}
    out.update({"electricity_price_per_kwh": e.electricity_price_per_kwh,
                "charging_efficiency": e.charging_efficiency,
                "electricity_co2_g_per_kwh": e.electricity_co2_g_per_kwh,
                "discount_rate_pct": e.discount_rate * 100.0,
                "service_life_years": e.service_life_years, "currency": currency})
    return out
