"""Fitting road-load coefficients to coasting runs, with their covariance.

Model
-----
Each run k obeys  m_inertial · dv/dt = −F_k(v)  with the apparent road load

    F_k(v) = a_k + b_k·v + c_k·(v + h_k)²  (+ known grade force)

where h_k is the measured headwind component [m/s] (zero when not measured).
Across runs the apparent coefficients share the vehicle's road load
f0 + f1·v + f2·v_air²; in opposite directions (sign s = +1 for A, −1 for B)
a steady unmeasured wind w along the road (positive against direction A) and a
constant road slope shift them:

    a_k = c0 + s·G + d·s·h̄_k,   b_k = f1 + d·s,   c_k = f2,
    with d = 2·f2·w and c0 = f0 + f2·w²

(f2·(v_air + s·w)² expanded). The parameters (c0, G, f1, d, f2) enter
linearly; afterwards f0 = c0 − d²/(4·f2) and w = d/(2·f2), their covariance by
first-order propagation.

Methods
-------
``"deceleration"``
    Regression of deceleration on speed, as in SAE J2263 practice: each run is
    put on a uniform grid (linear interpolation), speed and its derivative are
    taken with Savitzky-Golay filters, and F = −m_inertial·dv/dt is regressed on
    the columns above by weighted least squares (weight 1/σ² per run). Because
    the filters and the interpolation are linear maps of the measured speeds,
    the covariance is computed exactly from them (a sandwich estimator with the
    speed noise σ of each run estimated from the smoothing residual).
``"speed-time"``
    The closed-form speed-time solution (:mod:`.motion`) is fitted directly to
    the measured speeds of all runs with ``scipy.optimize.least_squares``
    (shared coefficients, one start speed per run), which avoids differentiating
    noise. Covariance (JᵀJ)⁻¹ with each run's residuals scaled by its own noise;
    where residuals are serially correlated the covariance is widened by the
    AR(1) factor (1 + ρ)/(1 − ρ).

Combining runs
--------------
``"joint"`` fits all runs at once with the wind and slope terms (both
directions needed); ``"pairs"`` fits each run alone, averages each
opposite-direction pair and then the pairs (SAE J2263, UN GTR No. 15 Annex 4);
``"none"`` fits all runs with shared coefficients and no direction terms.

Run-to-run variation
--------------------
Every run is also fitted alone. Its apparent coefficients scatter about what
the combined fit predicts by its own noise plus genuine run-to-run variation
(gusts, tyre temperature, driver). That variation is estimated from the
scatter (multivariate method of moments [7]) and added to the covariance;
with few runs its estimate is uncertain, so each standard uncertainty is then
widened to the Student-t 95 % interval with Welch-Satterthwaite effective
degrees of freedom [8]. A χ² test says whether the runs agree within their
noise [5]; each run's mean force over its speed range is compared with the
prediction from the other runs (Student-t) and the run flagged at p < 0.001.

References
----------
.. [1] SAE J2263, Road Load Measurement Using Onboard Anemometry and Coastdown
   Techniques (deceleration regression, three-term model, direction pairs).
.. [2] UN GTR No. 15 (WLTP), Annex 4 (coast-down, averaging opposite runs).
.. [3] White and Korst, SAE 720099 (1972) (speed-time solution).
.. [4] Savitzky and Golay, Analytical Chemistry 36 (1964) 1627-1639.
.. [5] Cochran, W. G., "The combination of estimates from different
   experiments", Biometrics 10 (1954) 101-129 (χ² test of homogeneity).
.. [6] Bence, J. R., "Analysis of short time series: correcting for
   autocorrelation", Ecology 76 (1995) 628-639 (effective sample size
   n(1 − ρ)/(1 + ρ)).
.. [7] Jackson, D., White, I. R. and Riley, R. D., "Quantifying the impact of
   between-study heterogeneity in multivariate meta-analyses", Statistics in
   Medicine 31 (2012) 3805-3820 (multivariate method-of-moments estimate of
   the between-study covariance).
.. [8] JCGM 100:2008 (GUM), Annex G.4 (Welch-Satterthwaite effective degrees
   of freedom, Student-t coverage factor).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from .._lazy import LazyModule, lazy_function

sp = LazyModule("scipy.sparse")
stats = LazyModule("scipy.stats")
least_squares = lazy_function("scipy.optimize", "least_squares")

from ..errors import InputError
from ..units import STANDARD_GRAVITY_MS2
from .motion import (coast_speed_gradient, coast_speed_ms, interpolation_operator, odd_window,
                     savgol_operator)

METHODS = ("speed-time", "deceleration")
COMBINES = ("joint", "pairs", "none")
#: p-value below which a run is flagged as disagreeing with the others
FLAG_P_VALUE = 0.001
_POLYORDER = 2


@dataclass(frozen=True)
class FitRun:
    """One run prepared for fitting (SI).

    Attributes
    ----------
    run_id : int
    time_s : (n,) array
        Time since the first sample of the run [s].
    speed_ms : (n,) array
        Measured speed [m/s].
    headwind_ms : (n,) array
        Measured headwind component [m/s] (zeros when not measured).
    sign : float
        +1 for direction A, −1 for B, 0 when directions are not modelled.
    known_force_n : float
        Grade force from elevations [N] (0 when not used).
    pair : int or None
    """

    run_id: int
    time_s: np.ndarray
    speed_ms: np.ndarray
    headwind_ms: np.ndarray
    sign: float = 0.0
    known_force_n: float = 0.0
    pair: int | None = None

    @property
    def mean_headwind_ms(self) -> float:
        return float(np.mean(self.headwind_ms))


@dataclass(frozen=True)
class RunFit:
    """A run fitted alone (apparent coefficients in SI) and its check against the rest.

    ``coef`` is (a, b, c) [N, N/(m/s), N/(m/s)²] of the run's apparent road
    load (wind and slope of its direction included; known grade removed).
    ``deviation_n`` is its mean road-load force over its speed range minus what
    the other runs predict [N]; ``t_statistic`` and ``p_value`` test it.
    """

    run_id: int
    coef: np.ndarray
    cov: np.ndarray
    predicted: np.ndarray
    deviation_n: float
    t_statistic: float
    p_value: float
    flagged: bool
    noise_ms: float
    autocorrelation: float
    residual_rms: float
    samples: int


@dataclass(frozen=True)
class RunSeries:
    """Measured and fitted curves of one run (for residuals and plots)."""

    run_id: int
    time_s: np.ndarray
    speed_ms: np.ndarray
    speed_fit_ms: np.ndarray
    decel_speed_ms: np.ndarray
    decel_ms2: np.ndarray
    sign: float
    headwind_ms: float
    apparent_coef: np.ndarray


@dataclass(frozen=True)
class FitOutcome:
    """Result of one fit, SI units.

    Attributes
    ----------
    coef : (3,) array
        f0 [N], f1 [N/(m/s)], f2 [N/(m/s)²] at test conditions.
    cov : (3, 3) array
        Their covariance: within-run noise plus run-to-run variation, widened
        to Student-t 95 % intervals (see the module docstring).
    wind_ms, wind_std_ms : float or None
        Fitted steady wind along the road, positive against direction A [m/s].
    grade, grade_std : float or None
        Fitted road slope force over mass·g [-], positive uphill in direction A.
    homogeneity_chi2, homogeneity_dof, homogeneity_p : float, int, float
        χ² test that all runs share one road load within their own noise.
    between_dof : float or None
        Degrees of freedom of the between-run covariance estimate.
    effective_dof : (3,) array
        Welch-Satterthwaite degrees of freedom of f0, f1, f2 (inf when the
        runs agree).
    t_factor : (3,) array
        Factor on each standard uncertainty so that ±1.96 σ is the Student-t
        95 % interval with the effective degrees of freedom.
    cov_between : (3, 3) array
        Part of the covariance from run-to-run variation (before t factors).
    r_squared : float
        Of speed (speed-time) or of road-load force (deceleration).
    residual_rms : float
        [m/s] (speed-time) or [N] (deceleration).
    runs : dict
        run_id → :class:`RunFit`.
    series : list of RunSeries
    notes : list of str
    """

    method: str
    combine: str
    terms: int
    coef: np.ndarray
    cov: np.ndarray
    cov_internal: np.ndarray
    wind_ms: float | None
    wind_std_ms: float | None
    grade: float | None
    grade_std: float | None
    homogeneity_chi2: float
    homogeneity_dof: int
    homogeneity_p: float
    between_dof: float | None
    effective_dof: np.ndarray
    t_factor: np.ndarray
    cov_between: np.ndarray
    r_squared: float
    residual_rms: float
    runs: dict
    series: list
    notes: list = field(default_factory=list)


# ---------------------------------------------------------------------------
# parameterisation
# ---------------------------------------------------------------------------

def _param_names(combine: str, terms: int, both_directions: bool):
    names = ["c0"]
    if combine == "joint" and both_directions:
        names.append("g")
    if terms == 3:
        names.append("f1")
    if combine == "joint" and both_directions:
        names.append("d")
    names.append("f2")
    return names


def _prediction_matrix(names, run: FitRun):
    """P (3 × p): apparent (a, b, c) of a run from the shared parameters."""
    s, hbar = run.sign, run.mean_headwind_ms
    rows = {"c0": (1.0, 0.0, 0.0), "g": (s, 0.0, 0.0), "f1": (0.0, 1.0, 0.0),
            "d": (s * hbar, s, 0.0), "f2": (0.0, 0.0, 1.0)}
    return np.array([rows[n] for n in names]).T


def _physical(names, theta, cov):
    """(f0, f1, f2), 3×3 covariance, wind (value, std) and G (value, std)."""
    p = dict(zip(names, theta))
    idx = {n: i for i, n in enumerate(names)}
    f2 = p["f2"]
    d = p.get("d", 0.0)
    jac = np.zeros((3, len(names)))
    jac[0, idx["c0"]] = 1.0
    if "d" in idx:
        jac[0, idx["d"]] = -d / (2.0 * f2)
        jac[0, idx["f2"]] = d * d / (4.0 * f2 * f2)
    if "f1" in idx:
        jac[1, idx["f1"]] = 1.0
    jac[2, idx["f2"]] = 1.0
    coef = np.array([p["c0"] - d * d / (4.0 * f2), p.get("f1", 0.0), f2])
    cov3 = jac @ cov @ jac.T
    wind = grade_force = None
    if "d" in idx:
        jw = np.zeros(len(names))
        jw[idx["d"]] = 1.0 / (2.0 * f2)
        jw[idx["f2"]] = -d / (2.0 * f2 * f2)
        wind = (d / (2.0 * f2), float(np.sqrt(max(jw @ cov @ jw, 0.0))))
    if "g" in idx:
        grade_force = (p["g"], float(np.sqrt(max(cov[idx["g"], idx["g"]], 0.0))))
    return coef, cov3, wind, grade_force


def _columns(names, sign, v, u):
    cols = {"c0": np.ones_like(v), "g": np.full_like(v, sign), "f1": v, "d": sign * u,
            "f2": u * u}
    return np.column_stack([cols[n] for n in names])


# ---------------------------------------------------------------------------
# deceleration regression
# ---------------------------------------------------------------------------

@dataclass
class _DecelRun:
    run: FitRun
    speed: np.ndarray      # smoothed speed on the grid [m/s]
    air: np.ndarray        # smoothed speed + headwind [m/s]
    force: np.ndarray      # −m·dv/dt − known force [N]
    deriv_op: sp.csr_matrix  # grid derivative of the samples (n_grid × n)
    sigma_ms: float


def _decel_prepare(run: FitRun, mass_kg, window_s):
    t, v = run.time_s, run.speed_ms
    dt = float(np.median(np.diff(t)))
    grid = np.arange(0.0, t[-1] + 1e-9 * dt, dt)
    n = len(grid)
    if n < _POLYORDER + 3:
        raise InputError(f"run {run.run_id} is too short to differentiate ({n} samples)")
    win = odd_window(window_s, dt, _POLYORDER, n_max=n)
    interp = interpolation_operator(t, grid)
    smooth = savgol_operator(n, win, _POLYORDER, deriv=0, delta=dt) @ interp
    deriv = savgol_operator(n, win, _POLYORDER, deriv=1, delta=dt) @ interp
    resid_op = interp - smooth
    denom = resid_op.multiply(resid_op).sum()
    r = resid_op @ v
    sigma = float(np.sqrt(r @ r / denom)) if denom > 0 else 0.0
    vs = smooth @ v
    hw = interp @ run.headwind_ms
    force = -mass_kg * (deriv @ v) - run.known_force_n
    return _DecelRun(run, vs, vs + hw, force, deriv.tocsr(), max(sigma, 1e-6))


def _decel_solve(preps, names, mass_kg):
    """Weighted least squares over runs with the exact sandwich covariance."""
    xs, ys, ws = [], [], []
    for p in preps:
        x = _columns(names, p.run.sign, p.speed, p.air)
        xs.append(x)
        ys.append(p.force)
        ws.append(1.0 / p.sigma_ms ** 2)
    xtwx = sum(w * x.T @ x for x, w in zip(xs, ws))
    xtwy = sum(w * x.T @ y for x, y, w in zip(xs, ys, ws))
    try:
        bread = np.linalg.inv(xtwx)
    except np.linalg.LinAlgError:
        raise InputError("the runs do not determine the coefficients (too narrow a speed "
                         "range?)") from None
    theta = bread @ xtwy
    meat = np.zeros_like(xtwx)
    for p, x, w in zip(preps, xs, ws):
        g = p.deriv_op.T @ (w * x)            # (n_samples × p)
        meat += (mass_kg * p.sigma_ms) ** 2 * (g.T @ g)
    cov = bread @ meat @ bread
    resid = [y - x @ theta for x, y in zip(xs, ys)]
    return theta, cov, resid, ys


def _fit_deceleration(runs, names, mass_kg, window_s):
    preps = [_decel_prepare(r, mass_kg, window_s) for r in runs]
    theta, cov, resid, ys = _decel_solve(preps, names, mass_kg)
    y_all = np.concatenate(ys)
    r_all = np.concatenate(resid)
    r2 = 1.0 - float(r_all @ r_all) / float(np.sum((y_all - y_all.mean()) ** 2))
    singles = {}
    for p in preps:
        th, cv, res, _ = _decel_solve([p], ["c0", "f1", "f2"], mass_kg)
        singles[p.run.run_id] = (th, cv, p.sigma_ms, 0.0, float(np.sqrt(np.mean(res[0] ** 2))),
                                 len(p.run.time_s))
    return theta, cov, r2, float(np.sqrt(np.mean(r_all ** 2))), singles, preps


# ---------------------------------------------------------------------------
# speed-time fit
# ---------------------------------------------------------------------------

def _apparent_to_abc(coef, run: FitRun):
    """Apparent (a, b, c) in F = a + b·v + c·(v + h̄)² → quadratic in ground speed."""
    a, b, c = coef
    h = run.mean_headwind_ms
    return a + c * h * h + run.known_force_n, b + 2.0 * c * h, c


def _speed_curve(coef, v0, run, mass_kg):
    a, b, c = _apparent_to_abc(coef, run)
    return coast_speed_ms(run.time_s, v0, a, b, c, mass_kg)


def _ar1(resid):
    if len(resid) < 3:
        return 0.0
    r = resid - resid.mean()
    den = float(r @ r)
    return float(r[1:] @ r[:-1] / den) if den > 0 else 0.0


def _speed_time_solve(runs, names, mass_kg, theta0, v0s, sigmas):
    """Joint least squares over runs; returns theta, v0s, cov of theta, per-run info."""
    p = len(names)
    mats = [_prediction_matrix(names, r) for r in runs]
    sizes = [len(r.time_s) for r in runs]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    weights = [1.0 / s for s in sigmas]
    n_par = p + len(runs)
    cache = {}

    def evaluate(x):
        key = x.tobytes()
        if key in cache:
            return cache[key]
        theta = x[:p]
        res = np.empty(offsets[-1])
        jac = np.zeros((offsets[-1], n_par))
        for k, run in enumerate(runs):
            a, b, c = _apparent_to_abc(mats[k] @ theta, run)
            v, g = coast_speed_gradient(run.time_s, x[p + k], a, b, c, mass_kg)
            sl = slice(offsets[k], offsets[k + 1])
            res[sl] = (v - run.speed_ms) * weights[k]
            # (a, b, c) of the quadratic in ground speed from the apparent (a', b', c')
            h = run.mean_headwind_ms
            to_abc = np.array([[1.0, 0.0, h * h], [0.0, 1.0, 2.0 * h], [0.0, 0.0, 1.0]])
            jac[sl, :p] = weights[k] * (g[:, :3] @ to_abc @ mats[k])
            jac[sl, p + k] = weights[k] * g[:, 3]
        bad = ~np.isfinite(res)
        res[bad] = 1e6
        jac[~np.isfinite(jac)] = 0.0
        cache.clear()
        cache[key] = (res, jac)
        return res, jac

    x0 = np.concatenate([theta0, v0s])
    sol = least_squares(lambda x: evaluate(x)[0], x0, jac=lambda x: evaluate(x)[1],
                        method="lm", x_scale="jac", xtol=1e-10, ftol=1e-10, gtol=1e-10,
                        max_nfev=100 * n_par)
    x = sol.x
    res, jac = evaluate(x)
    info = []
    scale = np.empty(offsets[-1])
    for k, run in enumerate(runs):
        rk = res[offsets[k]:offsets[k + 1]] / weights[k]          # m/s
        dof = max(sizes[k] - 1.0 - p / len(runs), 1.0)
        sig = float(np.sqrt(rk @ rk / dof))
        rho = _ar1(rk)
        infl = max(1.0, (1.0 + rho) / (1.0 - rho)) if rho < 0.99 else 199.0
        scale[offsets[k]:offsets[k + 1]] = 1.0 / (weights[k] * max(sig, 1e-9) * np.sqrt(infl))
        info.append((sig, rho, float(np.sqrt(np.mean(rk ** 2))), rk))
    jw = jac * scale[:, None]
    try:
        cov_full = np.linalg.inv(jw.T @ jw)
    except np.linalg.LinAlgError:
        raise InputError("the runs do not determine the coefficients (too narrow a speed "
                         "range?)") from None
    return x[:p], x[p:], cov_full[:p, :p], info, sol.success


def _fit_speed_time(runs, names, mass_kg, window_s):
    # start from the deceleration regression (also gives each run's speed noise)
    preps = [_decel_prepare(r, mass_kg, window_s) for r in runs]
    theta0, _, _, _ = _decel_solve(preps, names, mass_kg)
    v0s = np.array([p.speed[0] for p in preps])
    sigmas = [p.sigma_ms for p in preps]
    theta, v0s, cov, info, ok = _speed_time_solve(runs, names, mass_kg, theta0, v0s, sigmas)
    fitted, meas = [], []
    mats = [_prediction_matrix(names, r) for r in runs]
    for k, run in enumerate(runs):
        fitted.append(_speed_curve(mats[k] @ theta, v0s[k], run, mass_kg))
        meas.append(run.speed_ms)
    vm = np.concatenate(meas)
    r_all = np.concatenate([i[3] for i in info])
    r2 = 1.0 - float(r_all @ r_all) / float(np.sum((vm - vm.mean()) ** 2))
    singles = {}
    single_names = ["c0", "f1", "f2"]
    for k, (run, prep) in enumerate(zip(runs, preps)):
        th0, _, _, _ = _decel_solve([prep], single_names, mass_kg)
        th, v0, cv, inf1, _ = _speed_time_solve([run], single_names, mass_kg, th0,
                                                np.array([prep.speed[0]]), [prep.sigma_ms])
        singles[run.run_id] = (th, cv, inf1[0][0], inf1[0][1], inf1[0][2], len(run.time_s))
    notes = [] if ok else ["the speed-time fit stopped before converging; check the runs"]
    return theta, cov, r2, float(np.sqrt(np.mean(r_all ** 2))), singles, preps, v0s, notes


# ---------------------------------------------------------------------------
# combining
# ---------------------------------------------------------------------------

def fit_runs(runs, *, mass_kg, method="speed-time", combine="joint", terms=3,
             window_s=5.0, test_mass_kg=None) -> FitOutcome:
    """Fit road-load coefficients to prepared runs.

    Parameters
    ----------
    runs : sequence of FitRun
        The used runs, with signs set (+1/−1) when directions are known.
    mass_kg : float
        Inertial mass [kg] (test mass plus rotating-mass allowance).
    method : {"speed-time", "deceleration"}
    combine : {"joint", "pairs", "none"}
    terms : {3, 2}
        3: f0 + f1·v + f2·v²; 2: f1 fixed at zero.
    window_s : float
        Savitzky-Golay window [s] for the deceleration method (and the start
        values of the speed-time fit).
    test_mass_kg : float, optional
        Test mass [kg] on which the road slope acts (default ``mass_kg``);
        only used to express the fitted slope force as a grade.

    References
    ----------
    See the module docstring.
    """
    if method not in METHODS:
        raise InputError(f"unknown method '{method}'; use {' or '.join(METHODS)}",
                         field="method")
    if combine not in COMBINES:
        raise InputError(f"unknown combine '{combine}'; use {', '.join(COMBINES)}",
                         field="combine")
    if terms not in (2, 3):
        raise InputError(f"terms must be 2 or 3, got {terms}", field="terms")
    signs = {r.sign for r in runs}
    both = {1.0, -1.0} <= signs
    notes = []
    if combine == "pairs":
        return _fit_pairs(runs, mass_kg, method, terms, window_s)
    if combine == "none":
        runs = [FitRun(r.run_id, r.time_s, r.speed_ms, r.headwind_ms, 0.0, r.known_force_n,
                       r.pair) for r in runs]
    names = _param_names(combine, terms, both)
    if method == "deceleration":
        theta, cov, r2, rms, singles, preps = _fit_deceleration(runs, names, mass_kg, window_s)
        v0s = np.array([p.speed[0] for p in preps])
    else:
        theta, cov, r2, rms, singles, preps, v0s, extra = _fit_speed_time(runs, names, mass_kg,
                                                                         window_s)
        notes += extra
    mats = [_prediction_matrix(names, r) for r in runs]
    betas = [singles[r.run_id][0] for r in runs]
    covs = [singles[r.run_id][1] for r in runs]
    comb = combine_estimates(betas, covs, mats, [_mean_regressors(r) for r in runs])
    run_fits = {}
    for r, (dev, tstat, pval, pred) in zip(runs, comb["checks"]):
        th, cv, sig, rho, rrms, n = singles[r.run_id]
        run_fits[r.run_id] = RunFit(r.run_id, th, cv, pred, dev, tstat, pval,
                                    bool(pval < FLAG_P_VALUE), sig, rho, rrms, n)
    coef, cov_w, wind, grade_force = _physical(names, theta, cov)
    _, cov_b, wind_b, _ = _physical(names, theta, comb["cov_between"])
    cov3, nu_eff, tfac = _widen(cov_w, cov_b, comb["between_dof"])
    series = _series(runs, names, theta, v0s, preps, mass_kg)
    grade = grade_std = None
    if grade_force is not None:
        weight_n = (test_mass_kg or mass_kg) * STANDARD_GRAVITY_MS2
        _, _, _, gf_tot = _physical(names, theta, cov + comb["cov_between"])
        grade = grade_force[0] / weight_n          # sin θ ≈ tan θ for a road
        grade_std = gf_tot[1] / weight_n
    wind_std = None
    if wind is not None:
        wind_std = float(np.hypot(wind[1], wind_b[1]))
    if comb["between_dof"] is None:
        notes.append("too few runs to estimate run-to-run variation; the uncertainty "
                     "covers measurement noise only")
    return FitOutcome(method=method, combine=combine, terms=terms, coef=coef, cov=cov3,
                      cov_internal=cov_w, wind_ms=None if wind is None else wind[0],
                      wind_std_ms=wind_std, grade=grade, grade_std=grade_std,
                      homogeneity_chi2=comb["chi2"], homogeneity_dof=comb["dof"],
                      homogeneity_p=comb["p_value"], between_dof=comb["between_dof"],
                      effective_dof=nu_eff, t_factor=tfac, cov_between=cov_b,
                      r_squared=r2, residual_rms=rms, runs=run_fits, series=series,
                      notes=notes)


def _sym_inv(m):
    try:
        out = np.linalg.inv(m)
    except np.linalg.LinAlgError:
        out = np.linalg.pinv(m)
    return 0.5 * (out + out.T)


def _psd(m):
    w, v = np.linalg.eigh(0.5 * (m + m.T))
    return (v * np.clip(w, 0.0, None)) @ v.T


def _gls(betas, covs, mats, omega):
    """Generalised least squares of θ from β_k ~ N(P_k θ, C_k + Ω)."""
    ws = [_sym_inv(c + omega) for c in covs]
    info = sum(p.T @ w @ p for p, w in zip(mats, ws))
    cov = _sym_inv(info)
    theta = cov @ sum(p.T @ w @ b for p, w, b in zip(mats, ws, betas))
    return theta, cov


def _between_covariance(betas, covs, mats):
    """Moment estimate of the between-run covariance Ω and its degrees of freedom."""
    k, d = len(betas), len(betas[0])
    p = mats[0].shape[1]
    nu = k - p / d
    theta, cov = _gls(betas, covs, mats, np.zeros((d, d)))
    if nu < 1.0:
        return np.zeros((d, d)), None, theta, cov
    scatter = sum(np.outer(b - m @ theta, b - m @ theta) for b, m in zip(betas, mats))
    expected = sum(c - m @ cov @ m.T for c, m in zip(covs, mats))
    return _psd((scatter - expected) / nu), nu, theta, cov


def combine_estimates(betas, covs, mats, directions=None):
    """Combine per-run (or per-pair) estimates, allowing for run-to-run variation.

    Each run's estimate β_k (covariance C_k from its own noise) is taken as
    β_k ~ N(P_k θ, C_k + Ω): Ω is the covariance of genuine run-to-run
    variation (gusts, tyre temperature, driver). Ω is estimated by
    the method of moments from the scatter of the fixed-effects residuals,
    (Σ δ_k δ_kᵀ − Σ (C_k − P_k V P_kᵀ)) / ν with ν = K − p/d, clipped to be
    positive semi-definite [7]; θ's covariance with Ω, minus its covariance
    without, is the between-run part. A χ² test (Σ δ_kᵀ C_k⁻¹ δ_k with
    dK − p degrees of freedom) says whether the runs agree within their noise.

    Each run is checked against the others along ``directions[k]`` (g_k, the
    mean regressors over its speed range, so that g_k·β_k is its mean road-load
    force): the deviation g_k·(β_k − P_k θ₋ₖ) is divided by its standard
    uncertainty from C_k + Ω₋ₖ + P_k V₋ₖ P_kᵀ and referred to Student's t with
    the ν of Ω₋ₖ (normal when Ω cannot be estimated).

    Returns
    -------
    dict with ``cov_between`` (p × p), ``between_dof`` (ν or None), ``chi2``,
    ``dof``, ``p_value``, ``omega`` and ``checks`` (per run: deviation of the
    mean force, its t statistic, two-sided p-value, prediction).
    """
    k, d = len(betas), len(betas[0])
    p = mats[0].shape[1]
    if directions is None:
        directions = [np.ones(d)] * k
    omega, nu, theta_fe, cov_fe = _between_covariance(betas, covs, mats)
    chi2 = 0.0
    for b, c, m in zip(betas, covs, mats):
        delta = b - m @ theta_fe
        chi2 += max(float(delta @ _sym_inv(c) @ delta), 0.0)
    dof = d * k - p
    p_value = float(stats.chi2.sf(chi2, dof)) if dof > 0 else 1.0
    _, cov_re = _gls(betas, covs, mats, omega)
    cov_between = _psd(cov_re - cov_fe)
    checks = []
    for i in range(k):
        rest = [j for j in range(k) if j != i]
        g = directions[i]
        if len(rest) * d >= p:
            sub = ([betas[j] for j in rest], [covs[j] for j in rest], [mats[j] for j in rest])
            om_i, nu_i, _, _ = _between_covariance(*sub)
            th_i, cov_i = _gls(*sub, om_i)
            var = float(g @ (covs[i] + om_i + mats[i] @ cov_i @ mats[i].T) @ g)
            pred = mats[i] @ th_i
            dev = float(g @ (betas[i] - pred))
            tstat = dev / np.sqrt(var) if var > 0 else 0.0
            pv = float(2 * (stats.t.sf(abs(tstat), nu_i) if nu_i is not None
                            else stats.norm.sf(abs(tstat))))
        else:
            pred, dev, tstat, pv = mats[i] @ theta_fe, float("nan"), float("nan"), 1.0
        checks.append((dev, tstat, pv, pred))
    return {"cov_between": cov_between, "between_dof": nu, "chi2": chi2, "dof": dof,
            "p_value": p_value, "omega": omega, "checks": checks}


def _mean_regressors(run: FitRun, d=3):
    """Mean of (1, v, (v + h̄)²) over a uniform spread of the run's speeds."""
    lo, hi = float(np.min(run.speed_ms)), float(np.max(run.speed_ms))
    h = run.mean_headwind_ms
    if hi - lo < 1e-9:
        sq = (lo + h) ** 2
    else:
        sq = ((hi + h) ** 3 - (lo + h) ** 3) / (3.0 * (hi - lo))
    g = np.array([1.0, 0.5 * (lo + hi), sq])
    return g if d == 3 else g[[0, 2]]


#: two-sided 95 % quantile of the standard normal distribution, as
#: scipy.stats.norm.ppf(0.975) gives it (written out so importing loads no scipy)
_Z95 = 1.959963984540054


def _widen(cov_within, cov_between, nu_between):
    """Total covariance, widened so that ±1.96 σ is the Welch-Satterthwaite t interval.

    For each coefficient, ν_eff = (u_w² + u_b²)² / (u_b⁴ / ν_b) [8] (the
    within-run part is taken as exactly known); its standard uncertainty is
    multiplied by t₀.₉₇₅(ν_eff) / 1.96, keeping the correlations.
    """
    total = cov_within + cov_between
    var_w = np.clip(np.diag(cov_within), 0.0, None)
    var_b = np.clip(np.diag(cov_between), 0.0, None)
    nu_eff = np.full(len(var_w), np.inf)
    if nu_between is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            nu_eff = np.where(var_b > 0, (var_w + var_b) ** 2 / (var_b ** 2 / nu_between),
                              np.inf)
    factor = np.where(np.isfinite(nu_eff), stats.t.ppf(0.975, np.where(
        np.isfinite(nu_eff), nu_eff, 1.0)) / _Z95, 1.0)
    return total * np.outer(factor, factor), nu_eff, factor


def _series(runs, names, theta, v0s, preps, mass_kg):
    out = []
    for k, (run, prep) in enumerate(zip(runs, preps)):
        coef = _prediction_matrix(names, run) @ theta
        vfit = _speed_curve(coef, v0s[k], run, mass_kg)
        out.append(RunSeries(run.run_id, run.time_s, run.speed_ms, vfit, prep.speed,
                             (prep.force + run.known_force_n) / mass_kg, run.sign,
                             run.mean_headwind_ms, coef))
    return out


def _fit_pairs(runs, mass_kg, method, terms, window_s):
    names = ["c0", "f1", "f2"] if terms == 3 else ["c0", "f2"]
    pairs = {}
    for r in runs:
        if r.pair is None:
            raise InputError(f"run {r.run_id} has no opposite-direction run to pair with",
                             field="combine")
        pairs.setdefault(r.pair, []).append(r)
    run_fits, series, notes = {}, [], []
    coefs, covs = {}, {}
    r2s, rmss = [], []
    for r in runs:
        if method == "deceleration":
            theta, cov, r2, rms, singles, preps = _fit_deceleration([r], names, mass_kg,
                                                                    window_s)
            v0s = np.array([preps[0].speed[0]])
            sig, rho = preps[0].sigma_ms, 0.0
        else:
            theta, cov, r2, rms, singles, preps, v0s, extra = _fit_speed_time(
                [r], names, mass_kg, window_s)
            notes += extra
            sig, rho = singles[r.run_id][2], singles[r.run_id][3]
        full = _physical(names, theta, cov)
        coefs[r.run_id], covs[r.run_id] = full[0], full[1]
        r2s.append(r2)
        rmss.append(rms)
        series += _series([r], names, theta, v0s, preps, mass_kg)
        run_fits[r.run_id] = (sig, rho, rms, len(r.time_s))
    pair_ids = list(pairs)
    pair_means = [np.mean([coefs[m.run_id] for m in pairs[j]], axis=0) for j in pair_ids]
    pair_covs = [sum(covs[m.run_id] for m in pairs[j]) / len(pairs[j]) ** 2 for j in pair_ids]
    n_pairs = len(pair_means)
    sel = [0, 1, 2] if terms == 3 else [0, 2]
    # the result is the plain mean of the pair means (J2263, GTR 15 practice)
    coef = np.mean(pair_means, axis=0)
    cov_w = sum(pair_covs) / n_pairs ** 2
    eye = np.eye(len(sel))
    grids = [np.mean([_mean_regressors(m, len(sel)) for m in pairs[j]], axis=0)
             for j in pair_ids]
    comb = combine_estimates([pm[sel] for pm in pair_means],
                             [pc[np.ix_(sel, sel)] for pc in pair_covs], [eye] * n_pairs, grids)
    cov_b = np.zeros((3, 3))
    cov_b[np.ix_(sel, sel)] = comb["omega"] / n_pairs
    cov3, nu_eff, tfac = _widen(cov_w, cov_b, comb["between_dof"])
    pair_check = dict(zip(pair_ids, comb["checks"]))
    fits = {}
    for r in runs:
        sig, rho, rms, n = run_fits[r.run_id]
        dev, tstat, pval, _ = pair_check[r.pair]
        fits[r.run_id] = RunFit(r.run_id, coefs[r.run_id], covs[r.run_id], coef, dev, tstat,
                                pval, bool(pval < FLAG_P_VALUE), sig, rho, rms, n)
    notes.append("pairs: runs are averaged per opposite-direction pair; a steady wind w "
                 "leaves f2·w² in f0 (combine 'joint' removes it); a run's check is its "
                 "pair's against the other pairs")
    if comb["between_dof"] is None:
        notes.append("one pair only: run-to-run variation cannot be estimated; the "
                     "uncertainty covers measurement noise only")
    return FitOutcome(method=method, combine="pairs", terms=terms, coef=coef, cov=cov3,
                      cov_internal=cov_w, wind_ms=None, wind_std_ms=None, grade=None,
                      grade_std=None, homogeneity_chi2=comb["chi2"],
                      homogeneity_dof=comb["dof"], homogeneity_p=comb["p_value"],
                      between_dof=comb["between_dof"], effective_dof=nu_eff, t_factor=tfac,
                      cov_between=cov_b, r_squared=float(np.mean(r2s)),
                      residual_rms=float(np.sqrt(np.mean(np.square(rmss)))), runs=fits,
                      series=series, notes=notes)
