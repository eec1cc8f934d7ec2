"""From raw coast-down logs to road-load coefficients with their covariance.

:func:`analyze_coastdown` wires the steps together: read the logs
(:mod:`.logs`), find and judge coasting runs (:mod:`.runs`), group and pair
directions, fit (:mod:`.fitting`), add the test-mass uncertainty, correct to
reference conditions (:mod:`.corrections`) and derive CdA, Cd and Crr.

References
----------
.. [1] SAE J2263, Road Load Measurement Using Onboard Anemometry and Coastdown
   Techniques.
.. [2] UN GTR No. 15 (WLTP), Annex 4.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np

from ..demand import inertial_mass_kg
from ..errors import InputError
from ..units import KMH_MS, STANDARD_GRAVITY_MS2
from .corrections import correction_factors
from .fitting import FitOutcome, FitRun, fit_runs
from .logs import CoastdownLog, read_coastdown_log
from .runs import (Run, apply_user_choice, assign_directions, find_runs, grade_force_n,
                   pair_runs, run_grade)
from .settings import CoastdownSettings

#: SI → GTR 15 units for (f0, f1, f2): N, N/(km/h), N/(km/h)² (exact)
TO_GTR_UNITS = np.array([1.0, KMH_MS, KMH_MS ** 2])
#: ISA sea-level density [kg/m³] used for CdA when the test air is unknown
_ISA_DENSITY_KG_M3 = 1.225


def _std(cov):
    return np.sqrt(np.clip(np.diag(cov), 0.0, None))


@dataclass(frozen=True)
class RunReport:
    """One run as reported: where it is, whether it is used and why, and its own fit.

    Per-run coefficients are *apparent* ones: the road load in that run's
    direction at test conditions (wind and slope included, known grade
    removed), in GTR 15 units.
    """

    run: Run
    coef: np.ndarray | None = None       # GTR units
    cov: np.ndarray | None = None
    deviation_n: float | None = None
    t_statistic: float | None = None
    p_value: float | None = None
    flagged: bool = False
    noise_kmh: float | None = None
    autocorrelation: float | None = None
    residual_rms: float | None = None
    residual_unit: str = ""
    elevation_grade: float | None = None
    air_temperature_c: float | None = None
    air_pressure_pa: float | None = None
    headwind_ms: float | None = None

    def to_dict(self) -> dict:
        r = self.run
        out = {"run": r.run_id, "log": r.source, "direction": r.direction, "group": r.group,
               "pair": r.pair, "start_s": r.start_s, "end_s": r.end_s,
               "speed_start_kmh": r.speed_start_kmh, "speed_end_kmh": r.speed_end_kmh,
               "samples": int(len(r.samples)), "used": r.used, "reason": r.reason,
               "notes": list(r.notes), "heading_deg": r.heading_deg,
               "flagged": self.flagged}
        if self.flagged:
            out["flag"] = (f"disagrees with the other runs: its road load is "
                           f"{self.deviation_n:+.1f} N off their prediction (t = "
                           f"{self.t_statistic:.1f}, p = {self.p_value:.1e})")
        if self.coef is not None:
            std = _std(self.cov)
            out.update({"f0_n": self.coef[0], "f1_n_per_kmh": self.coef[1],
                        "f2_n_per_kmh2": self.coef[2], "f0_std_n": std[0],
                        "f1_std_n_per_kmh": std[1], "f2_std_n_per_kmh2": std[2],
                        "deviation_n": self.deviation_n, "t_statistic": self.t_statistic,
                        "p_value": self.p_value,
                        "speed_noise_kmh": self.noise_kmh,
                        "residual_autocorrelation": self.autocorrelation,
                        f"residual_rms_{self.residual_unit}": self.residual_rms})
        if self.elevation_grade is not None:
            out["elevation_grade_percent"] = 100.0 * self.elevation_grade
        if self.air_temperature_c is not None:
            out["air_temperature_c"] = self.air_temperature_c
        if self.air_pressure_pa is not None:
            out["air_pressure_pa"] = self.air_pressure_pa
        if self.headwind_ms is not None:
            out["measured_headwind_ms"] = self.headwind_ms
        return out


@dataclass(frozen=True)
class CoastdownResult:
    """Road load fitted to coast-down logs, at reference conditions, with covariance.

    Attributes
    ----------
    f0_n, f1_n_per_kmh, f2_n_per_kmh2 : float
        Coefficients [N], [N/(km/h)], [N/(km/h)²] at reference conditions
        (at test conditions when ``reference`` is "none").
    covariance : (3, 3) array
        Their covariance in [N², N²/(km/h), ...] (GTR 15 units), including
        run-to-run variation (Student-t widened) and the test-mass uncertainty.
    measured : (3,) array, measured_covariance : (3, 3) array
        The same at test conditions.
    cda_m2, cda_std_m2 : float
        Drag area f2/(½ρ) [m²] with ρ the density f2 refers to.
    cd, cd_std : float or None
        CdA / frontal area [-] when the area is given.
    crr, crr_std : float
        f0 / (m·g) [-] with the test mass.
    runs : tuple of RunReport
    scans : tuple of LogScan
    corrections : dict
    fit : FitOutcome
        The fit in SI (curves and residuals for plots).
    notes : tuple of str
    """

    f0_n: float
    f1_n_per_kmh: float
    f2_n_per_kmh2: float
    covariance: np.ndarray
    measured: np.ndarray
    measured_covariance: np.ndarray
    cda_m2: float
    cda_std_m2: float
    cd: float | None
    cd_std: float | None
    crr: float
    crr_std: float
    air_density_for_cda_kg_m3: float
    frontal_area_m2: float | None
    mass_kg: float
    mass_std_kg: float
    rotating_mass_fraction: float
    inertial_mass_kg: float
    method: str
    combine: str
    terms: int
    speed_window_kmh: tuple
    reference: str
    corrections: dict
    runs: tuple
    scans: tuple
    fit: FitOutcome
    notes: tuple = ()

    @property
    def coefficients(self) -> np.ndarray:
        return np.array([self.f0_n, self.f1_n_per_kmh, self.f2_n_per_kmh2])

    @property
    def std(self) -> np.ndarray:
        """Standard uncertainties of f0 [N], f1 [N/(km/h)], f2 [N/(km/h)²]."""
        return _std(self.covariance)

    def interval95(self) -> np.ndarray:
        """(3, 2) array of 95 % intervals (±1.96 σ, normal approximation)."""
        c, s = self.coefficients, self.std
        return np.column_stack([c - 1.959963984540054 * s, c + 1.959963984540054 * s])

    @property
    def block_air_density_kg_m3(self):
        """Air density [kg/m³] at which the reported f2 holds: the reference density
        when f2 was corrected to it, else the measured test density, else None."""
        corr = self.corrections
        if corr.get("aero_factor", 1.0) != 1.0 or any(
                str(a).startswith("f2 to the reference") for a in corr.get("applied", [])):
            return corr.get("reference_air_density_kg_m3")
        return corr.get("test_air_density_kg_m3")

    def road_load_block(self) -> dict:
        """The block a vehicle file's ``road_load:`` accepts (coefficients, covariance and,
        when known, the air density at which f2 holds)."""
        block = {"f0_n": float(self.f0_n), "f1_n_per_kmh": float(self.f1_n_per_kmh),
                 "f2_n_per_kmh2": float(self.f2_n_per_kmh2),
                 "covariance": [[float(x) for x in row] for row in self.covariance]}
        rho = self.block_air_density_kg_m3
        if rho is not None:
            block["reference_air_density_kg_m3"] = float(rho)
        return block

    def to_dict(self) -> dict:
        std = self.std
        mstd = _std(self.measured_covariance)
        fit = self.fit
        out = {
            "f0_n": self.f0_n, "f1_n_per_kmh": self.f1_n_per_kmh,
            "f2_n_per_kmh2": self.f2_n_per_kmh2,
            "f0_std_n": std[0], "f1_std_n_per_kmh": std[1], "f2_std_n_per_kmh2": std[2],
            "covariance": self.covariance.tolist(),
            "cda_m2": self.cda_m2, "cda_std_m2": self.cda_std_m2,
            "cd": self.cd, "cd_std": self.cd_std, "crr": self.crr, "crr_std": self.crr_std,
            "frontal_area_m2": self.frontal_area_m2,
            "air_density_for_cda_kg_m3": self.air_density_for_cda_kg_m3,
            "r_squared": fit.r_squared,
            ("residual_rms_kmh" if fit.method == "speed-time" else "residual_rms_n"):
                fit.residual_rms / KMH_MS if fit.method == "speed-time" else fit.residual_rms,
            "method": self.method, "combine": self.combine, "terms": self.terms,
            "speed_window_kmh": list(self.speed_window_kmh),
            "mass_kg": self.mass_kg, "mass_std_kg": self.mass_std_kg,
            "rotating_mass_fraction": self.rotating_mass_fraction,
            "inertial_mass_kg": self.inertial_mass_kg,
            "wind_ms": fit.wind_ms, "wind_std_ms": fit.wind_std_ms,
            "road_grade_percent": None if fit.grade is None else 100.0 * fit.grade,
            "road_grade_std_percent": None if fit.grade_std is None else 100.0 * fit.grade_std,
            "runs_agree_chi2": fit.homogeneity_chi2, "runs_agree_dof": fit.homogeneity_dof,
            "runs_agree_p_value": fit.homogeneity_p,
            "between_run_dof": fit.between_dof,
            "effective_dof": [None if not np.isfinite(x) else float(x)
                              for x in fit.effective_dof],
            "t_factor": fit.t_factor.tolist(),
            "between_run_covariance": (fit.cov_between * np.outer(TO_GTR_UNITS,
                                                                  TO_GTR_UNITS)).tolist(),
            "as_measured": {"f0_n": self.measured[0], "f1_n_per_kmh": self.measured[1],
                            "f2_n_per_kmh2": self.measured[2], "f0_std_n": mstd[0],
                            "f1_std_n_per_kmh": mstd[1], "f2_std_n_per_kmh2": mstd[2],
                            "covariance": self.measured_covariance.tolist()},
            "reference": self.reference,
            "corrections": self.corrections,
            "runs_used": sum(1 for r in self.runs if r.run.used),
            "runs": [r.to_dict() for r in self.runs],
            "logs": [s.to_dict() for s in self.scans],
            "notes": list(self.notes),
            "road_load": self.road_load_block(),
        }
        if fit.pairs_wind is not None:
            out["pairs_wind"] = fit.pairs_wind.to_dict()
        return out


def _as_log(item, speed_column=None) -> CoastdownLog:
    if isinstance(item, CoastdownLog):
        return item
    return read_coastdown_log(item, speed_column=speed_column)


def _mean_over(logs, runs, attr):
    vals = []
    for r in runs:
        arr = getattr(logs[r.log_index], attr)
        if arr is not None:
            x = arr[r.samples]
            x = x[np.isfinite(x)]
            if x.size:
                vals.append(float(x.mean()))
    return vals


def analyze_coastdown(logs: Sequence, settings: CoastdownSettings | None = None,
                      **options) -> CoastdownResult:
    """Fit road-load coefficients (f0, f1, f2) with covariance to coast-down logs.

    Parameters
    ----------
    logs : sequence of path or CoastdownLog
        One or more raw logs (CSV or GPX).
    settings : CoastdownSettings, optional
        Every setting (test vehicle, detection, fit, corrections, run choice);
        see :mod:`.settings`.
    **options
        Flat option names instead of (or changing fields of) ``settings``:
        ``mass_kg`` (required without ``settings``), ``rotating_mass_fraction``,
        ``mass_std_kg``, ``frontal_area_m2``, ``method``, ``combine``,
        ``terms``, ``smoothing_s``, ``xtol``, ``ftol``, ``gtol``,
        ``speed_window_kmh``, ``min_span_kmh``, ``max_gap_s``, ``reference``,
        ``air_temperature_c``, ``air_pressure_pa``, ``rolling_factor_per_k``,
        ``grade_from_elevation``, ``keep``, ``drop``, ``speed_column``.

    Returns
    -------
    CoastdownResult

    Raises
    ------
    InputError
        For unreadable logs, no usable run, one direction only when
        ``combine`` needs two, or invalid options (``field`` names the option).

    References
    ----------
    .. [1] SAE J2263 (coast-down, deceleration regression, pairs of runs).
    .. [2] UN GTR No. 15 Annex 4 (averaging, corrections, rotating mass).
    .. [3] White and Korst, SAE 720099 (speed-time solution).
    """
    if settings is None:
        settings = CoastdownSettings.from_options(**options)
    elif options:
        settings = settings.with_options(**options)
    if not logs:
        raise InputError("give at least one log", field="logs")
    return _analyze(logs, settings)


def _analyze(logs, settings: CoastdownSettings) -> CoastdownResult:
    """The analysis with checked settings (see :func:`analyze_coastdown`); one long chain
    of steps kept together so the order of the notes follows the order of the work."""
    veh, fs, cs = settings.vehicle, settings.fit, settings.corrections
    mass_kg, mass_std_kg = veh.mass_kg, veh.mass_std_kg
    rotating_mass_fraction, frontal_area_m2 = veh.rotating_mass_fraction, veh.frontal_area_m2
    combine, method, terms = fs.combine, fs.method, fs.terms
    reference, grade_from_elevation = cs.reference, cs.grade_from_elevation
    air_temperature_c, air_pressure_pa = cs.air_temperature_c, cs.air_pressure_pa
    lo, hi = settings.detection.speed_window_kmh
    keep, drop, speed_column = settings.keep, settings.drop, settings.speed_column
    logs = [_as_log(x, speed_column) for x in logs]
    runs, scans = find_runs(logs, settings.detection)
    runs = apply_user_choice(runs, keep=keep, drop=drop)
    runs, notes = assign_directions(runs)
    notes = list(notes)
    needs_two = combine in ("joint", "pairs")
    if needs_two:
        used = [r for r in runs if r.used]
        if used and all(r.group is None for r in used):
            raise InputError(f"combine '{combine}' needs runs in both directions, but the logs "
                             "have no heading_deg or direction column to tell them apart; add "
                             "one, or use combine 'none'", field="combine")
        runs = [replace(r, used=False, reason="direction unknown (no heading or label)",
                        problem="direction") if r.used and r.group is None else r
                for r in runs]
        groups = {r.group for r in runs if r.used}
        if len(groups) < 2:
            only = next((r.direction for r in runs if r.used), "?")
            other = [r for r in runs if not r.used and r.group is not None
                     and r.group not in groups]
            hint = ""
            if other:
                hint = (f" (opposite run{'s' if len(other) > 1 else ''} "
                        f"{', '.join(str(r.run_id) for r in other)} rejected: "
                        f"{other[0].reason}; see keep)")
            raise InputError(f"combine '{combine}' needs runs in both directions, but all used "
                             f"runs go one way ({only}){hint}; add the opposite runs, or use "
                             "combine 'none' (wind and slope then stay in the result)",
                             field="combine")
    if combine == "pairs":
        runs = pair_runs(runs)
        runs = [replace(r, used=False, reason="no opposite-direction run to pair with",
                        problem="unpaired") if r.used and r.pair is None else r for r in runs]
    used = [r for r in runs if r.used]
    if not used:
        reasons = "; ".join(f"run {r.run_id}: {r.reason}" for r in runs[:3])
        raise InputError(f"no usable coasting run ({reasons})", field="runs")
    if combine == "none" and len({r.group for r in used}) == 2:
        notes.append("runs in both directions fitted without direction terms: wind and slope "
                     "are averaged, not removed")
    if combine == "none" and len({r.group for r in used}) < 2:
        notes.append("one direction only: a steady wind or a road slope stays in the result")
    inertial = inertial_mass_kg(mass_kg, rotating_mass_fraction)
    fit_runs_in, extra = [], {}
    for r in used:
        log = logs[r.log_index]
        t = log.time_s[r.samples]
        hw = log.headwind_ms()
        hw = np.zeros(len(t)) if hw is None else hw[r.samples]
        grade = run_grade(log, r.samples)
        known = float(grade_force_n(mass_kg, grade)) if (grade_from_elevation and grade
                                                         is not None) else 0.0
        sign = {"A": 1.0, "B": -1.0}.get(r.group, 0.0) if combine != "none" else 0.0
        fit_runs_in.append(FitRun(r.run_id, t - t[0], log.speed_ms[r.samples], hw, sign, known,
                                  r.pair))
        extra[r.run_id] = grade
    if grade_from_elevation and all(g is None for g in extra.values()):
        raise InputError("grade from elevation asked for, but no log has an elevation_m "
                         "column", field="grade_from_elevation")
    if not grade_from_elevation and any(g is not None for g in extra.values()):
        notes.append("elevation_m is read but not used for grade (opposite runs cancel a "
                     "constant slope); ask for grade from elevation to remove each run's "
                     "mean grade")
    if any(np.any(fr.headwind_ms != 0) for fr in fit_runs_in):
        notes.append("measured wind used: the drag term uses air speed (ground speed plus "
                     "the measured headwind component)")
    fit = fit_runs(fit_runs_in, mass_kg=inertial, settings=fs, test_mass_kg=mass_kg)
    notes += fit.notes
    if fit.homogeneity_p < 0.01:
        notes.append(f"the runs scatter more than their noise explains (chi2 "
                     f"{fit.homogeneity_chi2:.0f} with {fit.homogeneity_dof} dof): run-to-run "
                     "variation (gusts, tyre warm-up, driving) is estimated from the scatter "
                     "and included in the uncertainty")
    coef_si = fit.coef
    cov_si = fit.cov.copy()
    cov_nomass = cov_si.copy()
    rel_m = mass_std_kg / mass_kg
    cov_si = cov_si + rel_m ** 2 * np.outer(coef_si, coef_si)
    measured = coef_si * TO_GTR_UNITS
    measured_cov = cov_si * np.outer(TO_GTR_UNITS, TO_GTR_UNITS)
    nomass_cov = cov_nomass * np.outer(TO_GTR_UNITS, TO_GTR_UNITS)
    # test conditions: log columns where present, options otherwise
    temps = _mean_over(logs, used, "air_temperature_c")
    press = _mean_over(logs, used, "air_pressure_pa")
    t_c = float(np.mean(temps)) if temps else air_temperature_c
    p_pa = float(np.mean(press)) if press else air_pressure_pa
    if temps and air_temperature_c is not None:
        notes.append("air temperature taken from the logs; the option value is not used")
    if press and air_pressure_pa is not None:
        notes.append("air pressure taken from the logs; the option value is not used")
    try:
        factors, corr = correction_factors(reference, temperature_c=t_c, pressure_pa=p_pa,
                                           rolling_factor_per_k=cs.rolling_factor_per_k)
    except InputError as exc:
        if temps and exc.field == "air_temperature_c":   # the temperature came from the logs
            raise InputError(exc.message, field="air_temperature_c column of the logs"
                             ) from None
        raise
    coef = measured * factors
    cov = measured_cov * np.outer(factors, factors)
    cov_nm = nomass_cov * np.outer(factors, factors)
    # density that f2 now refers to
    if corr["aero_factor"] != 1.0 or (reference != "none" and corr["test_air_density_kg_m3"]):
        rho = corr["reference_air_density_kg_m3"]
        rho_basis = f"reference air density of {corr['standard']}"
    elif corr["test_air_density_kg_m3"] is not None:
        rho = corr["test_air_density_kg_m3"]
        rho_basis = "test-day air density"
    else:
        rho = _ISA_DENSITY_KG_M3
        rho_basis = "ISA sea-level density (test air unknown)"
        notes.append("CdA assumes ISA sea-level air density 1.225 kg/m³: the test air "
                     "temperature and pressure are unknown")
    corr["air_density_for_cda"] = rho_basis
    f2_si_to_cda = 1.0 / (TO_GTR_UNITS[2] * 0.5 * rho)
    cda = coef[2] * f2_si_to_cda
    cda_std = float(np.sqrt(cov[2, 2])) * f2_si_to_cda
    cd = cd_std = None
    if frontal_area_m2 is not None:
        cd, cd_std = cda / frontal_area_m2, cda_std / frontal_area_m2
    weight = mass_kg * STANDARD_GRAVITY_MS2
    crr = coef[0] / weight
    crr_std = float(np.sqrt(cov_nm[0, 0])) / weight
    if coef[1] < 0:
        notes.append("f1 is negative (within noise this is common); the three terms are "
                     "strongly correlated over a short speed range, consider terms 2")
    reports = []
    for r in runs:
        rf = fit.runs.get(r.run_id) if r.used else None
        log = logs[r.log_index]
        temps_r = _mean_over(logs, [r], "air_temperature_c")
        press_r = _mean_over(logs, [r], "air_pressure_pa")
        hw = log.headwind_ms()
        kw = dict(elevation_grade=run_grade(log, r.samples) if len(r.samples) >= 10 else None,
                  air_temperature_c=temps_r[0] if temps_r else None,
                  air_pressure_pa=press_r[0] if press_r else None,
                  headwind_ms=float(np.mean(hw[r.samples])) if hw is not None and len(
                      r.samples) else None)
        if rf is None:
            reports.append(RunReport(r, **kw))
            continue
        unit = "kmh" if method == "speed-time" else "n"
        rms = rf.residual_rms / KMH_MS if method == "speed-time" else rf.residual_rms
        reports.append(RunReport(
            r, coef=rf.coef * TO_GTR_UNITS, cov=rf.cov * np.outer(TO_GTR_UNITS, TO_GTR_UNITS),
            deviation_n=rf.deviation_n, t_statistic=rf.t_statistic, p_value=rf.p_value,
            flagged=rf.flagged,
            noise_kmh=rf.noise_ms / KMH_MS, autocorrelation=rf.autocorrelation,
            residual_rms=rms, residual_unit=unit, **kw))
        if rf.flagged:
            notes.append(f"run {r.run_id} disagrees with the other runs ({rf.deviation_n:+.1f} N, "
                         f"p = {rf.p_value:.1e}); look at it and drop it if something went "
                         "wrong")
    numbers = np.concatenate([np.ravel(coef), np.ravel(cov), [cda, cda_std, crr, crr_std]])
    if not np.all(np.isfinite(numbers)):
        raise InputError("the fit gave no finite road load (not a number); check the runs "
                         "and the options", field="runs")
    return CoastdownResult(
        f0_n=float(coef[0]), f1_n_per_kmh=float(coef[1]), f2_n_per_kmh2=float(coef[2]),
        covariance=cov, measured=measured, measured_covariance=measured_cov,
        cda_m2=float(cda), cda_std_m2=cda_std, cd=cd, cd_std=cd_std, crr=float(crr),
        crr_std=crr_std, air_density_for_cda_kg_m3=float(rho),
        frontal_area_m2=frontal_area_m2, mass_kg=float(mass_kg),
        mass_std_kg=float(mass_std_kg), rotating_mass_fraction=float(rotating_mass_fraction),
        inertial_mass_kg=inertial, method=method, combine=combine, terms=terms,
        speed_window_kmh=(lo, hi), reference=reference, corrections=corr,
        runs=tuple(reports), scans=tuple(scans), fit=fit, notes=tuple(notes))
