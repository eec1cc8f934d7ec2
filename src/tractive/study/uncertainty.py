"""Monte Carlo propagation of standard uncertainties to every result.

Each uncertain input given by a standard uncertainty is drawn from a normal
distribution with it (coefficients f0, f1, f2 jointly from their covariance
matrix; powertrain keys such as the drive efficiency or the auxiliary power
as per-vehicle arrays of the powertrain model, see
:data:`tractive.study.modify.POWERTRAIN_UNCERTAIN`). A tyre-label class
gives an interval, not a standard uncertainty: its Crr is drawn uniformly
over the class (rectangular distribution, sampled as JCGM 101:2008 6.4.2
asks; its standard deviation is the width / √12 reported for it,
JCGM 100:2008 4.3.7). The uniform draw is Φ(z) of the change's
standard-normal draw z, so it follows the same common random numbers.
The whole sample is one vehicle axis: one wheel-demand call per profile and
variant, no loop over draws (JCGM 101:2008, propagation of distributions by
a Monte Carlo method).

Index 0 of every parameter array is the nominal vehicle (all draws zero),
indices 1 … N are the draws. The same draw of a baseline parameter is used
in every variant (common random numbers), so the change of a variant carries
only the uncertainty that does not cancel. Each modification's own
uncertainty is drawn once and shared by every combination that contains it.

Reported per metric: the Monte Carlo mean and the central interval between
the (1 − p)/2 and (1 + p)/2 quantiles (p = 95 % by default). A change is
*distinguishable from zero* when its interval excludes zero. With no
uncertain input, every draw equals the nominal vehicle and every interval has
zero width.

References
----------
.. [1] JCGM 101:2008, Evaluation of measurement data - Supplement 1 to the
   GUM - Propagation of distributions using a Monte Carlo method.
.. [2] JCGM 100:2008 (GUM), 4.3.7 (rectangular distribution, its standard
   deviation).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

#: parameters that may carry a standard uncertainty, in draw order
UNCERTAIN_PARAMS = ("mass_kg", "crr", "cda_m2", "cla_m2")
#: lower limits that draws are clipped to (a physical parameter cannot go below)
CLIP_MIN = {"mass_kg": 1e-6, "crr": 0.0, "cda_m2": 1e-6, "f0_n": 0.0, "f2_n_per_kmh2": 1e-9}


def standard_normal_draws(rng, n_draws: int) -> np.ndarray:
    """(1 + n,) standard-normal values with index 0 fixed at 0 (the nominal)."""
    out = np.zeros(n_draws + 1)
    if n_draws:
        out[1:] = rng.standard_normal(n_draws)
    return out


def covariance_factor(cov) -> np.ndarray:
    """A matrix L with L Lᵀ = cov for a symmetric positive semi-definite ``cov``."""
    cov = np.asarray(cov, float)
    w, v = np.linalg.eigh(0.5 * (cov + cov.T))
    return v * np.sqrt(np.clip(w, 0.0, None))


def expand(ps, stds: dict, cov, z: dict, n_draws: int):
    """A nominal (length-1) parameter set widened to 1 + n draws.

    Parameters
    ----------
    ps : ParamSet
        Nominal parameters (vehicle axis of length 1).
    stds : dict
        Standard uncertainty per parameter (in its unit).
    cov : (3, 3) array or None
        Covariance of f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²].
    z : dict
        Standard-normal draws (length 1 + n, index 0 zero) per name in
        :data:`UNCERTAIN_PARAMS` and ``coef0``, ``coef1``, ``coef2``.
    n_draws : int

    Returns
    -------
    (ParamSet, clipped) where ``clipped`` maps parameter → share of draws
    clipped at a physical lower limit.
    """
    size = n_draws + 1
    params = {k: np.repeat(np.asarray(v, float)[:1], size) for k, v in ps.params.items()}
    for name, std in stds.items():
        if std and name in params:
            params[name] = params[name] + std * z[name]
    if cov is not None and "f0_n" in params:
        factor = covariance_factor(cov)
        zz = np.stack([z["coef0"], z["coef1"], z["coef2"]])     # (3, size)
        delta = factor @ zz
        params["f0_n"] = params["f0_n"] + delta[0]
        params["f1_n_per_kmh"] = params["f1_n_per_kmh"] + delta[1]
        params["f2_n_per_kmh2"] = params["f2_n_per_kmh2"] + delta[2]
    clipped = clip(params)
    return replace(ps, params=params), clipped


def clip(params: dict) -> dict:
    """Clip drawn parameters at their physical lower limits, in place; share clipped."""
    shares = {}
    for name, lo in CLIP_MIN.items():
        if name in params:
            arr = params[name]
            below = arr[1:] < lo
            if np.any(below):
                shares[name] = float(np.mean(below))
                params[name] = np.where(arr < lo, lo, arr)
    return shares


def clip_powertrain(values: dict) -> dict:
    """Clip drawn powertrain values at their physical limits, in place; share clipped.

    Efficiencies and shares stay within [0, 1] (a draw above 1 would create
    energy), powers, fuel rates and battery energy stay non-negative (see
    :data:`tractive.study.modify.POWERTRAIN_UNCERTAIN` for each key's limits).
    """
    from .modify import POWERTRAIN_UNCERTAIN

    shares = {}
    for name, arr in values.items():
        lo, hi = POWERTRAIN_UNCERTAIN[name][2]
        arr = np.asarray(arr, float)
        outside = (arr[1:] < lo) | (arr[1:] > hi)
        if np.any(outside):
            shares[f"powertrain.{name}"] = float(np.mean(outside))
            values[name] = np.clip(arr, lo, hi)
    return shares


def interval(samples, confidence_pct: float):
    """Mean and central interval (low, high) of Monte Carlo samples.

    Returns None for every value when the samples are not all finite.
    """
    samples = np.asarray(samples, float)
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        return None, None, None
    tail = (100.0 - confidence_pct) / 2.0
    low, high = np.percentile(samples, [tail, 100.0 - tail])
    return float(np.mean(samples)), float(low), float(high)
