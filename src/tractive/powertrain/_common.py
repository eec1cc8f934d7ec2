"""Small helpers shared by the powertrain models."""

from __future__ import annotations

import numpy as np

from ..plain import plain_number as plain  # noqa: F401 (the one JSON rule; mix.py uses it)

#: speeds below this [m/s] count as standstill
STANDSTILL_MS = 1e-6


def col(x):
    """Give a per-vehicle parameter of shape (N,) a trailing axis for (N, T) arrays."""
    x = np.asarray(x, float)
    return x[..., None] if x.ndim >= 1 else x


def safe_divide(num, den):
    """num / den, with NaN where den is 0 (reported as null in JSON)."""
    num = np.asarray(num, float)
    den = np.asarray(den, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(den != 0, num / np.where(den != 0, den, 1.0), np.nan)


def range_from(store, per_km):
    """Range [km] = store / consumption per km; +inf where nothing is consumed."""
    store = np.asarray(store, float)
    per_km = np.asarray(per_km, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(per_km > 0, store / np.where(per_km > 0, per_km, 1.0), np.inf)
    return np.where(np.isnan(per_km), np.nan, out)
