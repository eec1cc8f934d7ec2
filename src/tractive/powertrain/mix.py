"""Combining profiles into a weighted mix (a duty cycle) by distance share.

Consumption per distance of a mix is the distance-share-weighted mean of the
profiles' consumption per distance, c_mix = Σ s_k·c_k with Σ s_k = 1. For fuel
economy in distance per volume this is the weighted harmonic mean, as in the
US combined fuel economy 1 / (0.55/city + 0.45/highway).

References
----------
.. [1] 40 CFR Part 600, Appendix II (combined fuel economy: harmonic mean
   with 55 % city and 45 % highway weights).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..errors import InputError
from ..metrics import check_shares, l_per_100km_to_mpg, weighted_mean
from ..units import UK_GALLON_L, US_GALLON_L
from ._common import plain, range_from


@dataclass(frozen=True)
class MixResult:
    """Consumption and range on a distance-weighted mix of profiles.

    Attributes
    ----------
    profiles : tuple of str
    shares : tuple of float
        Distance shares [-], summing to 1.
    kind : str
        ``"electric"`` or ``"combustion"``.
    per_km : float or (N,) array
        Store use per km: battery kWh/km, or fuel L/km (kg/km for CNG).
    store_size : float
        Usable battery [kWh] or tank [L or kg].
    unit : str
        ``"kWh"``, ``"L"`` or ``"kg"``.
    co2_g_per_km : float, array or None
        Tailpipe CO2 (combustion only).
    """

    profiles: tuple
    shares: tuple
    kind: str
    per_km: object
    store_size: float
    unit: str
    co2_g_per_km: object = None

    @property
    def range_km(self):
        return range_from(self.store_size, self.per_km)

    def to_dict(self) -> dict:
        out = {"cycle": "mix", "profiles": list(self.profiles), "shares": list(self.shares),
               "powertrain": self.kind, "range_km": plain(self.range_km)}
        per_km = np.asarray(self.per_km, float)
        if self.unit == "kWh":
            out["battery_wh_per_km"] = plain(per_km * 1000.0)
        elif self.unit == "L":
            out["fuel_l_per_100km"] = plain(per_km * 100.0)
            out["mpg_us"] = plain(l_per_100km_to_mpg(per_km * 100.0, US_GALLON_L))
            out["mpg_uk"] = plain(l_per_100km_to_mpg(per_km * 100.0, UK_GALLON_L))
        else:
            out["fuel_kg_per_100km"] = plain(per_km * 100.0)
        if self.co2_g_per_km is not None:
            out["co2_g_per_km"] = plain(self.co2_g_per_km)
        return out


def mix_results(results: Sequence, shares: Sequence[float]) -> MixResult:
    """Weighted mix of per-profile powertrain results by distance share [1].

    Parameters
    ----------
    results : sequence of ElectricResult or CombustionResult
        One per profile, all from the same powertrain.
    shares : sequence of float
        Distance shares [-], one per result, ≥ 0, summing to 1 (within 1e-6).
    """
    results = list(results)
    shares = check_shares(shares, len(results))
    kinds = {r.kind for r in results}
    if len(kinds) != 1:
        raise InputError("all results in a mix must come from one powertrain", field="shares")
    kind = kinds.pop()
    for r in results:
        if not r.distance_km > 0:
            raise InputError(f"profile '{r.profile}' has no distance; it cannot be part of a "
                             "mix by distance", field="shares")
    per_km = weighted_mean([np.asarray(r.store_used, float) / r.distance_km
                            for r in results], shares)
    first = results[0]
    if kind == "electric":
        unit = "kWh"
        co2 = None
    else:
        unit = "kg" if first.tank_l is None else "L"
        co2 = weighted_mean([np.asarray(r.co2_g_per_km, float) for r in results], shares)
    return MixResult(tuple(r.profile for r in results), tuple(shares), kind, per_km,
                     float(np.asarray(first.store_size)), unit, co2)
