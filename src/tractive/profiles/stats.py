"""Statistics of a profile: duration, distance, speeds, idle share, PKE, accelerations.

:func:`profile_statistics` gives duration, distance, mean speed (distance /
duration), top speed, idle share, mean moving speed, positive kinetic energy
(PKE) [1]_ and the largest acceleration and deceleration. A time step counts
as idle when the speed at both its ends is at most :data:`IDLE_SPEED_MS`
(0.01 m/s = 0.036 km/h); every other step is moving. The threshold is below
the smallest step of the bundled tables (0.1 km/h = 0.028 m/s), so on them
idle means standing still at exactly 0; pass a higher ``idle_speed_ms`` for
noisy logged data.

References
----------
.. [1] E. Ericsson, "Independent driving pattern factors and their influence
   on fuel-use and exhaust emission factors", Transportation Research Part D
   6(5), 325-345, 2001 (PKE as a driving-pattern factor; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import Profile

__all__ = ["IDLE_SPEED_MS", "ProfileStats", "profile_statistics"]

#: a time step is idle when the speed at both its ends is at most this [m/s]
IDLE_SPEED_MS = 0.01


@dataclass(frozen=True)
class ProfileStats:
    """Summary statistics of a profile (see :func:`profile_statistics`).

    Attributes
    ----------
    duration_s : float
        Duration [s].
    distance_km : float
        Distance [km] (trapezoid).
    mean_speed_kmh : float
        Distance / duration [km/h].
    max_speed_kmh : float
        Top speed [km/h].
    mean_moving_speed_kmh : float
        Distance covered in moving steps / time of moving steps [km/h]
        (0 when nothing moves).
    idle_share : float
        Fraction of the duration in idle steps [-]: steps with the speed at
        both ends at most the idle threshold.
    positive_kinetic_energy_m_per_s2 : float
        PKE [m/s²] = sum over steps of max(v_i² - v_(i-1)², 0) / distance
        (0 when the distance is 0).
    max_accel_ms2 : float
        Largest step acceleration [m/s²] (0 if the speed never rises).
    max_decel_ms2 : float
        Largest step deceleration as a positive number [m/s²] (0 if the
        speed never falls).
    name : str
        Profile name.
    """

    duration_s: float
    distance_km: float
    mean_speed_kmh: float
    max_speed_kmh: float
    mean_moving_speed_kmh: float
    idle_share: float
    positive_kinetic_energy_m_per_s2: float
    max_accel_ms2: float
    max_decel_ms2: float
    name: str = ""

    def to_dict(self) -> dict:
        """JSON-ready data."""
        return {"name": self.name, "duration_s": self.duration_s,
                "distance_km": self.distance_km, "mean_speed_kmh": self.mean_speed_kmh,
                "max_speed_kmh": self.max_speed_kmh,
                "mean_moving_speed_kmh": self.mean_moving_speed_kmh,
                "idle_share": self.idle_share,
                "positive_kinetic_energy_m_per_s2": self.positive_kinetic_energy_m_per_s2,
                "max_accel_ms2": self.max_accel_ms2, "max_decel_ms2": self.max_decel_ms2}



def profile_statistics(profile: Profile, idle_speed_ms: float = IDLE_SPEED_MS) -> ProfileStats:
    """Duration, distance, speeds, idle share, PKE and extreme accelerations.

    Parameters
    ----------
    profile : Profile
        The trace.
    idle_speed_ms : float
        A step is idle when the speed at both its ends is at most this [m/s].

    Returns
    -------
    ProfileStats
        See its attributes for the definitions.

    References
    ----------
    .. [1] E. Ericsson, Transportation Research Part D 6(5), 325-345, 2001
       (positive kinetic energy as a driving-pattern factor; from memory).
    """
    v = profile.speed_ms
    dt = profile.dt_s
    duration = profile.duration_s
    step_m = 0.5 * (v[1:] + v[:-1]) * dt
    distance = float(np.sum(step_m))
    idle = (v[:-1] <= idle_speed_ms) & (v[1:] <= idle_speed_ms)
    moving_time = float(np.count_nonzero(~idle)) * dt
    moving_m = float(np.sum(step_m[~idle]))
    pke = float(np.sum(np.clip(np.diff(v * v), 0.0, None))) / distance if distance > 0 else 0.0
    accel = np.diff(v) / dt
    return ProfileStats(
        duration_s=duration,
        distance_km=distance / 1000.0,
        mean_speed_kmh=distance / duration * 3.6,
        max_speed_kmh=float(v.max()) * 3.6,
        mean_moving_speed_kmh=moving_m / moving_time * 3.6 if moving_time > 0 else 0.0,
        idle_share=float(np.count_nonzero(idle)) * dt / duration,
        positive_kinetic_energy_m_per_s2=pke,
        max_accel_ms2=max(float(accel.max()), 0.0),
        max_decel_ms2=max(float(-accel.min()), 0.0),
        name=profile.name)


