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

from dataclasses import dataclass, field, replace

import numpy as np
from .._lazy import LazyModule, lazy_function

sp = LazyModule("scipy.sparse")
stats = LazyModule("scipy.stats")
least_squares = lazy_function("scipy.optimize", "least_squares")

from ..errors import InputError
from ..units import STANDARD_GRAVITY_MS2
from .motion import (coast_speed_gradient, coast_speed_ms, interpolation_operator, odd_window,
                     savgol_operator)
from .settings import COMBINES, METHODS, FitSettings

__all__ = ["METHODS", "COMBINES", "FitRun", "RunFit", "RunSeries", "FitOutcome", "SingleFit",
           "MethodFit", "RunCheck", "Combination", "fit_runs", "combine_estimates"]
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
    success, message, nfev : bool, str, int
        As in :class:`scipy.optimize.OptimizeResult`: whether every solve
        converged, the joint solve's message, and the function evaluations of
        all solves (0 for the closed-form deceleration regression).
    pairs_wind : PairsWind or None
        With ``combine="pairs"`` and three terms: the steady wind the pairs
        show and the bias f2·w² it leaves in f0.
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
    success: bool = True
    message: str = ""
    nfev: int = 0
    pairs_wind: object = None


@dataclass(frozen=True)
class SingleFit:
    """One run fitted alone: apparent coefficients (SI) and its noise.

    Attributes
    ----------
    coef : (3,) array
        Apparent (a, b, c) [N, N/(m/s), N/(m/s)²].
    cov : (3, 3) array
        Their covariance from the run's own noise.
    noise_ms : float
        Speed noise σ [m/s].
    autocorrelation : float
        Lag-one autocorrelation of the speed residuals [-] (0 for the
        deceleration method).
    residual_rms : float
        [m/s] (speed-time) or [N] (deceleration).
    samples : int
    """

    coef: np.ndarray
    cov: np.ndarray
    noise_ms: float
    autocorrelation: float
    residual_rms: float
    samples: int


@dataclass(frozen=True)
class MethodFit:
    """What one method gives for a set of runs, before the runs are combined.

    ``theta`` and ``cov`` are the shared parameters (names as in
    ``_param_names``) and their covariance; ``singles`` maps run_id to
    :class:`SingleFit`; ``success``, ``message`` and ``nfev`` are as in
    :class:`scipy.optimize.OptimizeResult` (the deceleration method is a
    closed-form solve: always successful, no function evaluations).
    """

    theta: np.ndarray
    cov: np.ndarray
    r_squared: float
    residual_rms: float
    singles: dict
    preps: list
    v0s: np.ndarray
    notes: list = field(default_factory=list)
    success: bool = True
    message: str = "linear least squares (closed form)"
    nfev: int = 0


@dataclass(frozen=True)
class RunCheck:
    """A run (or pair) checked against the others: deviation of its mean road-load
    force [N] from their prediction, its t statistic, two-sided p-value, and the
    prediction itself."""

    deviation_n: float
    t_statistic: float
    p_value: float
    predicted: np.ndarray


@dataclass(frozen=True)
class Combination:
    """Per-run estimates combined (see :func:`combine_estimates`).

    Attributes
    ----------
    cov_between : (p, p) array
        Part of the covariance of θ from run-to-run variation.
    between_dof : float or None
        Degrees of freedom of the run-to-run covariance estimate (None: too
        few runs).
    chi2, dof, p_value : float, int, float
        χ² test that the runs agree within their own noise.
    omega : (d, d) array
        Run-to-run covariance of one run's estimate.
    checks : list of RunCheck
    """

    cov_between: np.ndarray
    between_dof: float | None
    chi2: float
    dof: int
    p_value: float
    omega: np.ndarray
    checks: list


@dataclass(frozen=True)
class _Physical:
    """(f0, f1, f2) and covariance from the fitted parameters, with wind and slope."""

    coef: np.ndarray
    cov: np.ndarray
    wind_ms: float | None = None
    wind_std_ms: float | None = None
    grade_force_n: float | None = None
    grade_force_std_n: float | None = None


@dataclass(frozen=True)
class _Solve:
    """A least-squares solve: parameters, covariance, residuals per run."""

    theta: np.ndarray
    cov: np.ndarray
    residuals: list
    v0s: np.ndarray | None = None
    noise_ms: tuple = ()
    autocorrelation: tuple = ()
    residual_rms: tuple = ()
    success: bool = True
    message: str = "linear least squares (closed form)"
    nfev: int = 0


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


def _physical(names, theta, cov) -> _Physical:
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
    out = _Physical(coef, jac @ cov @ jac.T)
    if "d" in idx:
        jw = np.zeros(len(names))
        jw[idx["d"]] = 1.0 / (2.0 * f2)
        jw[idx["f2"]] = -d / (2.0 * f2 * f2)
        out = replace(out, wind_ms=d / (2.0 * f2),
                      wind_std_ms=float(np.sqrt(max(jw @ cov @ jw, 0.0))))
    if "g" in idx:
        out = replace(out, grade_force_n=p["g"],
                      grade_force_std_n=float(np.sqrt(max(cov[idx["g"], idx["g"]], 0.0))))
    return out


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


def _decel_solve(preps, names, mass_kg) -> _Solve:
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
    return _Solve(theta, cov, resid)


def _fit_deceleration(runs, names, mass_kg, settings: FitSettings) -> MethodFit:
    """Deceleration regression of all runs together and of each run alone."""
    preps = [_decel_prepare(r, mass_kg, settings.smoothing_s) for r in runs]
    sol = _decel_solve(preps, names, mass_kg)
    y_all = np.concatenate([p.force for p in preps])
    r_all = np.concatenate(sol.residuals)
    r2 = 1.0 - float(r_all @ r_all) / float(np.sum((y_all - y_all.mean()) ** 2))
    singles = {}
    for p in preps:
        one = _decel_solve([p], ["c0", "f1", "f2"], mass_kg)
        singles[p.run.run_id] = SingleFit(
            one.theta, one.cov, p.sigma_ms, 0.0,
            float(np.sqrt(np.mean(one.residuals[0] ** 2))), len(p.run.time_s))
    return MethodFit(sol.theta, sol.cov, r2, float(np.sqrt(np.mean(r_all ** 2))), singles,
                     preps, np.array([p.speed[0] for p in preps]))


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


def _speed_time_solve(runs, names, mass_kg, theta0, v0s, sigmas,
                      settings: FitSettings) -> _Solve:
    """Joint least squares of the speed-time solution over runs (see the module
    docstring); the covariance of the shared parameters uses each run's noise and
    residual autocorrelation."""
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
                        method="lm", x_scale="jac", xtol=settings.xtol, ftol=settings.ftol,
                        gtol=settings.gtol, max_nfev=settings.max_nfev_per_parameter * n_par)
    x = sol.x
    res, jac = evaluate(x)
    sigs, rhos, rmss, resids = [], [], [], []
    scale = np.empty(offsets[-1])
    for k, run in enumerate(runs):
        rk = res[offsets[k]:offsets[k + 1]] / weights[k]          # m/s
        dof = max(sizes[k] - 1.0 - p / len(runs), 1.0)
        sig = float(np.sqrt(rk @ rk / dof))
        rho = _ar1(rk)
        infl = max(1.0, (1.0 + rho) / (1.0 - rho)) if rho < 0.99 else 199.0
        scale[offsets[k]:offsets[k + 1]] = 1.0 / (weights[k] * max(sig, 1e-9) * np.sqrt(infl))
        sigs.append(sig)
        rhos.append(rho)
        rmss.append(float(np.sqrt(np.mean(rk ** 2))))
        resids.append(rk)
    jw = jac * scale[:, None]
    try:
        cov_full = np.linalg.inv(jw.T @ jw)
    except np.linalg.LinAlgError:
        raise InputError("the runs do not determine the coefficients (too narrow a speed "
                         "range?)") from None
    return _Solve(x[:p], cov_full[:p, :p], resids, v0s=x[p:], noise_ms=tuple(sigs),
                  autocorrelation=tuple(rhos), residual_rms=tuple(rmss),
                  success=bool(sol.success), message=str(sol.message), nfev=int(sol.nfev))


def _fit_speed_time(runs, names, mass_kg, settings: FitSettings) -> MethodFit:
    """Speed-time fit of all runs together and of each run alone, each started from
    the deceleration regression (which also gives each run's speed noise)."""
    preps = [_decel_prepare(r, mass_kg, settings.smoothing_s) for r in runs]
    start = _decel_solve(preps, names, mass_kg)
    v0s = np.array([p.speed[0] for p in preps])
    sigmas = [p.sigma_ms for p in preps]
    sol = _speed_time_solve(runs, names, mass_kg, start.theta, v0s, sigmas, settings)
    vm = np.concatenate([run.speed_ms for run in runs])
    r_all = np.concatenate(sol.residuals)
    r2 = 1.0 - float(r_all @ r_all) / float(np.sum((vm - vm.mean()) ** 2))
    singles = {}
    single_names = ["c0", "f1", "f2"]
    nfev, success, message = sol.nfev, sol.success, sol.message
    for run, prep in zip(runs, preps):
        th0 = _decel_solve([prep], single_names, mass_kg).theta
        one = _speed_time_solve([run], single_names, mass_kg, th0, np.array([prep.speed[0]]),
                                [prep.sigma_ms], settings)
        nfev += one.nfev
        if success and not one.success:
            success, message = False, f"run {run.run_id} alone: {one.message}"
        singles[run.run_id] = SingleFit(one.theta, one.cov, one.noise_ms[0],
                                        one.autocorrelation[0], one.residual_rms[0],
                                        len(run.time_s))
    notes = [] if success else ["the speed-time fit stopped before converging "
                                f"({message}); check the runs"]
    return MethodFit(sol.theta, sol.cov, r2, float(np.sqrt(np.mean(r_all ** 2))), singles,
                     preps, sol.v0s, notes, success=success, message=message, nfev=nfev)


# ---------------------------------------------------------------------------
# combining
# ---------------------------------------------------------------------------

def fit_runs(runs, *, mass_kg, settings: FitSettings | None = None, test_mass_kg=None,
             **options) -> FitOutcome:
    """Fit road-load coefficients to prepared runs.

    Parameters
    ----------
    runs : sequence of FitRun
        The used runs, with signs set (+1/−1) when directions are known.
    mass_kg : float
        Inertial mass [kg] (test mass plus rotating-mass allowance).
    settings : FitSettings, optional
        Method, combination, terms, smoothing window and solver tolerances
        (default ``FitSettings()``); ``options`` (``method="deceleration"``
        ...) change single fields of it.
    test_mass_kg : float, optional
        Test mass [kg] on which the road slope acts (default ``mass_kg``);
        only used to express the fitted slope force as a grade.

    References
    ----------
    See the module docstring.
    """
    settings = settings or FitSettings()
    if options:
        settings = replace(settings, **options)
    both = {1.0, -1.0} <= {r.sign for r in runs}
    if settings.combine == "pairs":
        return _fit_pairs(runs, mass_kg, settings)
    if settings.combine == "none":
        runs = [replace(r, sign=0.0) for r in runs]
    names = _param_names(settings.combine, settings.terms, both)
    fitter = _fit_deceleration if settings.method == "deceleration" else _fit_speed_time
    mf = fitter(runs, names, mass_kg, settings)
    notes = list(mf.notes)
    mats = [_prediction_matrix(names, r) for r in runs]
    singles = [mf.singles[r.run_id] for r in runs]
    comb = combine_estimates([x.coef for x in singles], [x.cov for x in singles], mats,
                             [_mean_regressors(r) for r in runs])
    run_fits = {r.run_id: _run_fit(r.run_id, one, check)
                for r, one, check in zip(runs, singles, comb.checks)}
    within = _physical(names, mf.theta, mf.cov)
    between = _physical(names, mf.theta, comb.cov_between)
    cov3, nu_eff, tfac = _widen(within.cov, between.cov, comb.between_dof)
    grade = grade_std = None
    if within.grade_force_n is not None:
        weight_n = (test_mass_kg or mass_kg) * STANDARD_GRAVITY_MS2
        total = _physical(names, mf.theta, mf.cov + comb.cov_between)
        grade = within.grade_force_n / weight_n          # sin θ ≈ tan θ for a road
        grade_std = total.grade_force_std_n / weight_n
    wind_std = None
    if within.wind_ms is not None:
        wind_std = float(np.hypot(within.wind_std_ms, between.wind_std_ms))
    if comb.between_dof is None:
        notes.append("too few runs to estimate run-to-run variation; the uncertainty "
                     "covers measurement noise only")
    return FitOutcome(method=settings.method, combine=settings.combine, terms=settings.terms,
                      coef=within.coef, cov=cov3, cov_internal=within.cov,
                      wind_ms=within.wind_ms, wind_std_ms=wind_std, grade=grade,
                      grade_std=grade_std, homogeneity_chi2=comb.chi2,
                      homogeneity_dof=comb.dof, homogeneity_p=comb.p_value,
                      between_dof=comb.between_dof, effective_dof=nu_eff, t_factor=tfac,
                      cov_between=between.cov, r_squared=mf.r_squared,
                      residual_rms=mf.residual_rms, runs=run_fits,
                      series=_series(runs, names, mf.theta, mf.v0s, mf.preps, mass_kg),
                      notes=notes, success=mf.success, message=mf.message, nfev=mf.nfev)


def _run_fit(run_id, one: SingleFit, check: RunCheck, coef=None, cov=None) -> RunFit:
    """A run's report entry from its own fit and its check against the others."""
    return RunFit(run_id, one.coef if coef is None else coef, one.cov if cov is None else cov,
                  check.predicted, check.deviation_n, check.t_statistic, check.p_value,
                  bool(check.p_value < FLAG_P_VALUE), one.noise_ms, one.autocorrelation,
                  one.residual_rms, one.samples)


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


def combine_estimates(betas, covs, mats, directions=None) -> Combination:
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
    Combination
        ``cov_between`` (p × p), ``between_dof`` (ν or None), ``chi2``,
        ``dof``, ``p_value``, ``omega`` and ``checks`` (a :class:`RunCheck`
        per run).
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
        checks.append(RunCheck(dev, float(tstat), pv, pred))
    return Combination(cov_between, nu, chi2, dof, p_value, omega, checks)


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


def _fit_pairs(runs, mass_kg, settings: FitSettings) -> FitOutcome:
    """Each run alone, averaged per opposite-direction pair, then over the pairs
    (SAE J2263, UN GTR No. 15 Annex 4); the pairs' scatter gives the run-to-run part."""
    terms = settings.terms
    names = ["c0", "f1", "f2"] if terms == 3 else ["c0", "f2"]
    pairs = {}
    for r in runs:
        if r.pair is None:
            raise InputError(f"run {r.run_id} has no opposite-direction run to pair with",
                             field="combine")
        pairs.setdefault(r.pair, []).append(r)
    fitter = _fit_deceleration if settings.method == "deceleration" else _fit_speed_time
    series, notes, coefs, covs, methods = [], [], {}, {}, {}
    for r in runs:
        mf = fitter([r], names, mass_kg, settings)
        notes += mf.notes
        full = _physical(names, mf.theta, mf.cov)
        coefs[r.run_id], covs[r.run_id], methods[r.run_id] = full.coef, full.cov, mf
        series += _series([r], names, mf.theta, mf.v0s, mf.preps, mass_kg)
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
    cov_b[np.ix_(sel, sel)] = comb.omega / n_pairs
    cov3, nu_eff, tfac = _widen(cov_w, cov_b, comb.between_dof)
    pair_check = dict(zip(pair_ids, comb.checks))
    fits = {}
    for r in runs:
        mf = methods[r.run_id]
        one = replace(mf.singles[r.run_id], residual_rms=mf.residual_rms)
        fits[r.run_id] = _run_fit(r.run_id, one, replace(pair_check[r.pair], predicted=coef),
                                  coef=coefs[r.run_id], cov=covs[r.run_id])
    wind = _pairs_wind(pairs, coefs, covs, coef) if terms == 3 else None
    notes.append(_pairs_wind_note(wind, coef))
    if comb.between_dof is None:
        notes.append("one pair only: run-to-run variation cannot be estimated; the "
                     "uncertainty covers measurement noise only")
    return FitOutcome(method=settings.method, combine="pairs", terms=terms, coef=coef,
                      cov=cov3, cov_internal=cov_w, wind_ms=None, wind_std_ms=None,
                      grade=None, grade_std=None, homogeneity_chi2=comb.chi2,
                      homogeneity_dof=comb.dof, homogeneity_p=comb.p_value,
                      between_dof=comb.between_dof, effective_dof=nu_eff, t_factor=tfac,
                      cov_between=cov_b,
                      r_squared=float(np.mean([m.r_squared for m in methods.values()])),
                      residual_rms=float(np.sqrt(np.mean(np.square(
                          [m.residual_rms for m in methods.values()])))),
                      runs=fits, series=series, notes=notes,
                      success=all(m.success for m in methods.values()),
                      message="; ".join(dict.fromkeys(m.message for m in methods.values())),
                      nfev=sum(m.nfev for m in methods.values()),
                      pairs_wind=wind)


@dataclass(frozen=True)
class PairsWind:
    """Steady wind along the road seen by the pairs, and the bias it leaves in f0.

    With F = f0 + f1·v + f2·(v + s·w)² in the two directions (s = ±1), a run's
    apparent linear term is f1 + 2·f2·w·s, so w = (f1_A − f1_B)/(4·f2) within
    each pair; averaging the directions cancels the linear term but leaves
    f2·w² in the constant term (SAE J2263 and UN GTR No. 15 Annex 4 average
    the directions; the expansion is algebra).

    Attributes
    ----------
    wind_ms, wind_std_ms : float
        Mean over the pairs [m/s] and its standard uncertainty (the larger of
        the noise-based one and the pairs' scatter, when there are several).
    f0_bias_n, f0_bias_std_n : float
        f2·w² [N] (f0 reads this much high) and its uncertainty by first-order
        propagation plus the term f2·u_w² of the mean of a square.
    """

    wind_ms: float
    wind_std_ms: float
    f0_bias_n: float
    f0_bias_std_n: float

    def to_dict(self) -> dict:
        return {"wind_ms": self.wind_ms, "wind_std_ms": self.wind_std_ms,
                "f0_bias_n": self.f0_bias_n, "f0_bias_std_n": self.f0_bias_std_n}


def _pairs_wind(pairs, coefs, covs, coef) -> PairsWind | None:
    """Wind from the difference of the directions' linear terms within each pair."""
    f2 = float(coef[2])
    if not f2 > 0:
        return None
    winds, variances = [], []
    for members in pairs.values():
        by_sign = {}
        for m in members:
            by_sign.setdefault(m.sign, []).append(m.run_id)
        if set(by_sign) != {1.0, -1.0}:
            return None                 # directions unknown: nothing to tell
        a, b = by_sign[1.0][0], by_sign[-1.0][0]
        winds.append((coefs[a][1] - coefs[b][1]) / (4.0 * f2))
        variances.append((covs[a][1, 1] + covs[b][1, 1]) / (4.0 * f2) ** 2)
    w = float(np.mean(winds))
    u2 = float(np.sum(variances)) / len(winds) ** 2
    if len(winds) > 1:
        u2 = max(u2, float(np.var(winds, ddof=1)) / len(winds))
    u = float(np.sqrt(u2))
    return PairsWind(w, u, f2 * w * w, float(np.hypot(2.0 * f2 * abs(w) * u, f2 * u2)))


def _pairs_wind_note(wind: PairsWind | None, coef) -> str:
    """The note of a pairs fit: what averaging leaves in f0, sized when it can be."""
    head = ("pairs: runs are averaged per opposite-direction pair; a run's check is its "
            "pair's against the other pairs; ")
    if wind is None:
        return head + ("a steady wind w leaves f2·w² in f0 (its size needs the f1 term and "
                       "known directions; combine 'joint' removes it)")
    share = 100.0 * wind.f0_bias_n / coef[0] if coef[0] > 0 else float("nan")
    return head + (f"the directions' f1 differ as a steady wind of {abs(wind.wind_ms):.2f} ± "
                   f"{wind.wind_std_ms:.2f} m/s along the road would make; averaging cancels "
                   f"its linear effect only, so f0 holds f2·w² ≈ {wind.f0_bias_n:.2g} ± "
                   f"{wind.f0_bias_std_n:.2g} N too much ({share:.2g} % of f0, not in its "
                   "interval); combine 'joint' removes it")
