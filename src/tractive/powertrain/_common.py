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


#: shortest run of consecutive intervals beyond a drive's limit that counts as the
#: drive not following the profile [s]: a speed logger's noise of a few tenths of a
#: km/h at 10 Hz asks for brief spikes of acceleration that no driver asks of a car,
#: each one sample long (common practice: judge a drive's limit over at least 1 s)
SUSTAINED_LIMIT_S = 1.0


def sustained_seconds(over, dt_s, min_s: float = SUSTAINED_LIMIT_S):
    """Time [s] spent in runs of consecutive ``over`` intervals that last at least
    ``min_s`` (shorter runs are taken as logger noise); per vehicle, along the last axis.

    With a 1 Hz profile every interval lasts 1 s, so every exceedance counts.
    """
    over = np.asarray(over, bool)
    dt = np.broadcast_to(np.asarray(dt_s, float), over.shape)
    flat_over = over.reshape(-1, over.shape[-1])
    flat_dt = dt.reshape(-1, over.shape[-1])
    # a False column between rows keeps runs from joining across vehicles
    pad_over = np.concatenate([flat_over, np.zeros((flat_over.shape[0], 1), bool)], axis=1)
    pad_dt = np.concatenate([flat_dt, np.zeros((flat_dt.shape[0], 1))], axis=1)
    o = pad_over.ravel()
    d = np.where(o, pad_dt.ravel(), 0.0)
    edges = np.diff(np.concatenate([[0], o.astype(np.int8)]))
    starts = np.flatnonzero(edges == 1)
    ends = np.flatnonzero(edges == -1)
    csum = np.concatenate([[0.0], np.cumsum(d)])
    length = csum[ends] - csum[starts]
    keep = length >= min_s * (1.0 - 1e-9)
    rows = starts // pad_over.shape[1]
    out = np.zeros(flat_over.shape[0])
    np.add.at(out, rows[keep], length[keep])
    return out.reshape(over.shape[:-1]) if over.ndim > 1 else float(out[0])
