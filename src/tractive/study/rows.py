"""Result rows of a study: nominal values, Monte Carlo intervals, changes against the
baseline with their intervals (JCGM 101:2008 central intervals), payback intervals and
the economic verdict."""

from __future__ import annotations

import numpy as np

from ..metrics import ECONOMICS, INDEPENDENT, lookup
from .results import BASELINE, ResultRow
from .uncertainty import interval


def _nominal(x) -> float | None:
    """The nominal value (index 0 of the vehicle axis), None when not finite."""
    v = float(np.asarray(x)[0])
    return v if np.isfinite(v) else None


def _row(name, role, profile, kind, met, base, n, conf, economics=None) -> ResultRow:
    """One result row: nominal values, Monte Carlo intervals, changes against the
    baseline with their intervals, and the economic verdict."""
    metrics, mean, low, high = {}, {}, {}, {}
    change, change_pct, c_mean, c_low, c_high, dist = {}, {}, {}, {}, {}, {}
    for key, arr in met.items():
        arr = np.asarray(arr, float)
        metrics[key] = _nominal(arr)
        samples = arr[1:] if n > 0 else arr[:1]
        if key == "payback_years" and "annual_saving" in met:
            mean[key], low[key], high[key] = _payback_interval(met, n, conf)
        else:
            mean[key], low[key], high[key] = interval(samples, conf)
        if role == BASELINE or _is_comparative(key) or key not in base:
            continue
        b = np.asarray(base[key], float)
        b0 = _nominal(b)
        if metrics[key] is None or b0 is None:
            continue
        change[key] = metrics[key] - b0
        change_pct[key] = 100.0 * change[key] / b0 if b0 != 0 else None
        diff = arr - b
        d_samples = diff[1:] if n > 0 else np.array([change[key]])
        c_mean[key], c_low[key], c_high[key] = interval(d_samples, conf)
        if c_low[key] is not None:
            dist[key] = bool(c_low[key] > 0.0 or c_high[key] < 0.0)
    return ResultRow(name, role, profile, kind, metrics, change, change_pct, mean, low, high,
                     c_mean, c_low, c_high, dist, _verdict(met, n, economics))


def _verdict(met: dict, n: int, economics) -> dict:
    """Whether a variant's payback exceeds the service life and its NPV is negative.

    ``payback_exceeds_life``: the nominal modification costs money and never pays
    back, or pays back later than ``service_life_years``; ``npv_negative``: the
    nominal NPV is below 0; ``pays_back_within_life_pct``: share of the Monte
    Carlo draws (the nominal when there are none) that pay back within the
    service life [%]. Empty without a cost or a service life.
    """
    life = getattr(economics, "service_life_years", None)
    if "payback_years" not in met or life is None:
        return {}
    payback = np.asarray(met["payback_years"], float)
    samples = payback[1:] if n > 0 else payback[:1]
    p0 = float(payback[0])
    cost0 = float(np.asarray(met["modification_cost"])[0])
    out = {"payback_exceeds_life": bool(cost0 > 0 and not (p0 <= life)),
           "pays_back_within_life_pct": float(np.mean(samples <= life) * 100.0)}
    if "npv" in met:
        out["npv_negative"] = bool(float(np.asarray(met["npv"])[0]) < 0.0)
    return out


def _is_comparative(key: str) -> bool:
    """True for metrics that already compare with the baseline (saving, payback, NPV,
    the modification's cost), which have no change of their own."""
    m = lookup(key)
    return m is not None and (m.kind == ECONOMICS or m.is_money and m.kind == INDEPENDENT)


def _payback_interval(met, n, conf):
    """Payback quantiles from the saving quantiles (cost / saving is monotone); with an
    uncertain cost, quantiles of the payback of each draw (never = beyond any bound)."""
    costs = np.asarray(met["modification_cost"], float)
    if n > 0 and np.any(costs[1:] != costs[0]):
        return _payback_interval_drawn(met, n, conf)
    cost = float(costs[0])
    saving = np.asarray(met["annual_saving"], float)
    samples = saving[1:] if n > 0 else saving[:1]
    s_mean, s_low, s_high = interval(samples, conf)
    if cost <= 0:
        if s_low is not None and s_low >= 0:
            return 0.0, 0.0, 0.0
        return None, None, None
    if s_low is None or s_high is None or s_high <= 0:
        return None, None, None
    high = cost / s_low if s_low > 0 else None
    mean = float(np.mean(cost / samples)) if np.all(samples > 0) else None
    return mean, cost / s_high, high


def _payback_interval_drawn(met, n, conf):
    """Mean and interval of the payback of each draw; a draw that never pays back
    counts as infinitely long (an upper bound at infinity is reported as None)."""
    payback = np.asarray(met["payback_years"], float)[1:]
    samples = np.where(np.isnan(payback), np.inf, payback)
    tail = (100.0 - conf) / 2.0
    low, high = (float(x) for x in np.percentile(samples, [tail, 100.0 - tail]))
    mean = float(np.mean(samples)) if np.all(np.isfinite(samples)) else None
    return mean, (low if np.isfinite(low) else None), (high if np.isfinite(high) else None)
