"""The two-interval quick estimate: road load from two timed speed drops.

A user with a stopwatch (or only two readings from a log) times the coast
from V1 to V2 (a high-speed interval) and from V3 to V4 (a low-speed
interval). With the two-term model of White and Korst,

    m_inertial · dv/dt = −(A + B·v²)        (A rolling, B = ½·ρ·CdA)

each time has the closed form

    t = m / √(A·B) · [arctan(V_start·√(B/A)) − arctan(V_end·√(B/A))],

so the ratio t_high/t_low depends only on k² = B/A. It is solved for k²
(one-dimensional root, monotonic between the pure-rolling limit
(V1 − V2)/(V3 − V4) and the pure-drag limit (1/V2 − 1/V1)/(1/V4 − 1/V3)),
then A from either time. The textbook shortcut that takes each interval's mean
deceleration at its mean speed, m·ΔV/t = A + B·V̄², is reported beside it; it
is close for narrow intervals and drifts for wide ones.

Assumptions: level road; no wind (or the mean of runs in both directions);
rolling resistance independent of speed (no f1 term); drag proportional to
v²; inertial mass known (test mass plus rotating-mass allowance); the vehicle
in neutral; both intervals under the same conditions.

References
----------
.. [1] White, R. A. and Korst, H. H., "The Determination of Vehicle Drag
   Contributions from Coast-Down Tests", SAE Technical Paper 720099 (1972).
.. [2] 40 CFR 86.529-98 (coast-down time for F = A + C·V², closed form).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from ..errors import InputError
from ..units import KMH_MS, STANDARD_GRAVITY_MS2
from ..demand import inertial_mass_kg
from ..limits import MAX_MASS_KG, MAX_TEST_SPEED_KMH
from .motion import coast_time_s

_F2_MS_TO_KMH = KMH_MS ** 2   # N/(m/s)² → N/(km/h)²
#: accepted inputs: test mass [kg], speeds [km/h], coast times [s], air density [kg/m³]
#: (air at -60 °C and 110 kPa is about 1.8 kg/m³, at 6 km altitude about 0.66)
MAX_SPEED_KMH = MAX_TEST_SPEED_KMH
MAX_TIME_S = 3600.0
AIR_DENSITY_RANGE_KG_M3 = (0.5, 2.0)


def _checked(value, field, low, high, unit, *, low_open=False) -> float:
    """``value`` as a finite float within [low, high] (``low`` excluded if ``low_open``)."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"must be a number, got {value!r}", field=field) from None
    ok = np.isfinite(x) and (x > low if low_open else x >= low) and x <= high
    if not ok:
        bound = "above" if low_open else "at least"
        unit_text = f" {unit}" if unit else ""
        raise InputError(f"must be {bound} {low:g} and at most {high:g}{unit_text}, got {x:g}",
                         field=field)
    return x

ASSUMPTIONS = (
    "level road, no wind (or the mean of both directions)",
    "rolling resistance independent of speed (f1 = 0)",
    "drag proportional to speed squared",
    "inertial mass known (test mass plus rotating-mass allowance)",
    "vehicle in neutral, both intervals under the same conditions",
)


@dataclass(frozen=True)
class TwoIntervalEstimate:
    """Road load from two timed coasting intervals (two-term model).

    Attributes
    ----------
    f0_n : float
        Constant (rolling) term [N].
    f2_n_per_kmh2 : float
        Quadratic (drag) term [N/(km/h)²].
    mean_decel_f0_n, mean_decel_f2_n_per_kmh2 : float
        The same from the mean-deceleration shortcut.
    crr : float
        f0 / (m·g) [-] with the test mass.
    cda_m2 : float or None
        f2 / (½·ρ) [m²] when an air density is given.
    """

    mass_kg: float
    inertial_mass_kg: float
    high_kmh: tuple
    high_time_s: float
    low_kmh: tuple
    low_time_s: float
    f0_n: float
    f2_n_per_kmh2: float
    mean_decel_f0_n: float
    mean_decel_f2_n_per_kmh2: float
    crr: float
    cda_m2: float | None
    air_density_kg_m3: float | None
    assumptions: tuple = ASSUMPTIONS

    def to_dict(self) -> dict:
        return {"method": "two-interval estimate (two-term speed-time solution)",
                "mass_kg": self.mass_kg, "inertial_mass_kg": self.inertial_mass_kg,
                "high_interval_kmh": list(self.high_kmh), "high_time_s": self.high_time_s,
                "low_interval_kmh": list(self.low_kmh), "low_time_s": self.low_time_s,
                "f0_n": self.f0_n, "f1_n_per_kmh": 0.0, "f2_n_per_kmh2": self.f2_n_per_kmh2,
                "mean_decel_f0_n": self.mean_decel_f0_n,
                "mean_decel_f2_n_per_kmh2": self.mean_decel_f2_n_per_kmh2,
                "crr": self.crr, "cda_m2": self.cda_m2,
                "air_density_kg_m3": self.air_density_kg_m3,
                "assumptions": list(self.assumptions)}


def two_interval_estimate(*, mass_kg, high_kmh, high_time_s, low_kmh, low_time_s,
                          rotating_mass_fraction=0.03, air_density_kg_m3=None
                          ) -> TwoIntervalEstimate:
    """Estimate f0 and f2 from two timed speed drops (White and Korst model).

    Parameters
    ----------
    mass_kg : float
        Test mass [kg].
    high_kmh : (float, float)
        Start and end speed [km/h] of the high-speed interval.
    high_time_s : float
        Its coast time [s].
    low_kmh : (float, float)
        Start and end speed [km/h] of the low-speed interval.
    low_time_s : float
        Its coast time [s].
    rotating_mass_fraction : float
        Rotating-mass allowance [-] (inertial mass = mass × (1 + fraction)).
    air_density_kg_m3 : float, optional
        Air density [kg/m³] for CdA.

    Raises
    ------
    InputError
        When a value is not a finite number in its range (mass above 0 to
        100 000 kg, rotating-mass fraction 0 to 1, speeds above 0 to 400 km/h,
        times above 0 to 3600 s, air density 0.5 to 2 kg/m³), the speeds do not
        fall, the intervals coincide, or the times imply a negative rolling or
        drag term.

    References
    ----------
    .. [1] White and Korst, SAE 720099 (1972).
    """
    mass_kg = _checked(mass_kg, "mass_kg", 0.0, MAX_MASS_KG, "kg", low_open=True)
    rotating_mass_fraction = _checked(rotating_mass_fraction, "rotating_mass_fraction", 0.0,
                                      1.0, "")
    if air_density_kg_m3 is not None:
        air_density_kg_m3 = _checked(air_density_kg_m3, "air_density_kg_m3",
                                     *AIR_DENSITY_RANGE_KG_M3, "kg/m³")
    for name, pair, t in (("high", high_kmh, high_time_s), ("low", low_kmh, low_time_s)):
        if len(tuple(pair)) != 2:
            raise InputError("give a start and an end speed", field=f"{name}_kmh")
        for x in pair:
            _checked(x, f"{name}_kmh", 0.0, MAX_SPEED_KMH, "km/h", low_open=True)
        _checked(t, f"{name}_time_s", 0.0, MAX_TIME_S, "s", low_open=True)
    v1, v2 = (float(x) * KMH_MS for x in high_kmh)
    v3, v4 = (float(x) * KMH_MS for x in low_kmh)
    high_time_s, low_time_s = float(high_time_s), float(low_time_s)
    for name, (a, b) in (("high", (v1, v2)), ("low", (v3, v4))):
        if not (a > b > 0):
            raise InputError("start speed must exceed end speed, both above zero",
                             field=f"{name}_kmh")
    if v1 * v2 <= v3 * v4:
        raise InputError("the high interval must lie at higher speeds than the low one",
                         field="high_kmh")
    m = inertial_mass_kg(mass_kg, rotating_mass_fraction)
    ratio = high_time_s / low_time_s

    def ratio_at(x):  # x = B/A [1/(m/s)²]; A = 1
        return coast_time_s(v1, v2, 1.0, 0.0, x, m) / coast_time_s(v3, v4, 1.0, 0.0, x, m)

    r_roll = (v1 - v2) / (v3 - v4)
    r_drag = (1.0 / v2 - 1.0 / v1) / (1.0 / v4 - 1.0 / v3)
    if not (r_drag < ratio < r_roll):
        raise InputError(f"the time ratio {ratio:.4f} lies outside {r_drag:.4f}-{r_roll:.4f}, "
                         "the range a positive rolling and drag term allow; check the times "
                         "and speeds", field="high_time_s")
    lo_x, hi_x = 1e-12, 1e6
    try:
        x = float(np.exp(brentq(lambda lx: ratio_at(np.exp(lx)) - ratio, np.log(lo_x),
                                np.log(hi_x), xtol=1e-14, rtol=1e-14)))
    except ValueError:
        raise InputError(f"the time ratio {ratio:.6f} is too close to a limit of "
                         f"{r_drag:.6f}-{r_roll:.6f} (all rolling or all drag) to give both "
                         "terms; check the times and speeds", field="high_time_s") from None
    a = float(coast_time_s(v1, v2, 1.0, 0.0, x, m)) / high_time_s
    b = x * a
    # mean-deceleration shortcut: m·ΔV/t = A + B·V̄²
    mat = np.array([[1.0, ((v1 + v2) / 2) ** 2], [1.0, ((v3 + v4) / 2) ** 2]])
    rhs = np.array([m * (v1 - v2) / high_time_s, m * (v3 - v4) / low_time_s])
    a_md, b_md = np.linalg.solve(mat, rhs)
    cda = None if air_density_kg_m3 is None else b / (0.5 * air_density_kg_m3)
    if not np.all(np.isfinite([a, b, a_md, b_md])):
        raise InputError("the times and speeds give no finite road load; check them",
                         field="high_time_s")
    return TwoIntervalEstimate(
        mass_kg=float(mass_kg), inertial_mass_kg=m, high_kmh=tuple(map(float, high_kmh)),
        high_time_s=float(high_time_s), low_kmh=tuple(map(float, low_kmh)),
        low_time_s=float(low_time_s), f0_n=a, f2_n_per_kmh2=b * _F2_MS_TO_KMH,
        mean_decel_f0_n=float(a_md), mean_decel_f2_n_per_kmh2=float(b_md) * _F2_MS_TO_KMH,
        crr=a / (mass_kg * STANDARD_GRAVITY_MS2), cda_m2=cda,
        air_density_kg_m3=air_density_kg_m3)
