"""Wheel demand: force, power and energy at the wheels along a speed trace.

Implements the cycle energy demand of UN GTR No. 15 (WLTP), Annex 7: a trace
sampled at times t_0..t_{T-1} is split into T-1 intervals; for interval i
(between samples i-1 and i)

    v_i = (v_i + v_{i-1}) / 2           mean speed [m/s]
    a_i = (v_i - v_{i-1}) / Δt_i        acceleration [m/s²]
    d_i = v_i · Δt_i                    distance [m]
    F_i = f0 + f1·v_i + f2·v_i² + m_inertial·a_i + m·g·sin(θ_i)     [N]

with θ_i the road angle from the mean of the two samples' grades
(grade = tan θ). The positive energy is Σ F_i·d_i over intervals with
F_i > 0; the negative (braking) energy is Σ −F_i·d_i over intervals with
F_i < 0, reported as a positive number. The same terms are listed in SAE
J2951 (drive-quality metrics, cycle energy).

Attribution of the positive energy: over the intervals with F_i > 0, each
force part times distance is summed separately, so

    rolling + aero + inertia + grade = positive energy   (exactly)

where rolling = f0 + f1·v (+ the downforce share of f2·v² for physical
input), aero = f2·v² (drag only), inertia = m_inertial·a, grade =
m·g·sin θ. A part can be negative inside a positive interval (e.g. a
downhill grade while the vehicle still pulls).

All functions take whole arrays; vehicle parameters may carry a leading
vehicle axis of shape (N,), giving results of shape (N, T-1) or (N,).

References
----------
.. [1] UN GTR No. 15, Worldwide harmonized Light vehicles Test Procedure,
   Annex 7 (cycle energy demand).
.. [2] SAE J2951, Drive Quality Evaluation for Chassis Dynamometer Testing.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .roadload import RoadLoad, _col
from .units import KWH_J, STANDARD_GRAVITY_MS2

COMPONENTS = ("rolling", "aero", "inertia", "grade")


def inertial_mass_kg(mass_kg, rotating_mass_fraction):
    """Mass for acceleration [kg] = mass_kg × (1 + rotating_mass_fraction).

    The rotating parts (wheels, driveline) store kinetic energy as if the
    vehicle were heavier by their equivalent mass, stated as a fraction of the
    test mass (UN GTR No. 15 Annex 4 uses 3 % of the test mass when it is not
    measured; from memory). Scalars or arrays of any matching shape.
    """
    return mass_kg * (1.0 + rotating_mass_fraction)


@dataclass(frozen=True)
class Intervals:
    """Kinematics of the T-1 intervals of a sampled trace (GTR 15 Annex 7).

    Attributes
    ----------
    dt_s : (T-1,) interval durations [s]
    speed_ms : (T-1,) mean speeds [m/s]
    accel_ms2 : (T-1,) accelerations [m/s²]
    distance_m : (T-1,) distances [m]
    sin_grade : (T-1,) sine of the road angle [-]
    """

    dt_s: np.ndarray
    speed_ms: np.ndarray
    accel_ms2: np.ndarray
    distance_m: np.ndarray
    sin_grade: np.ndarray


def interval_kinematics(time_s, speed_ms, grade_fraction=0.0) -> Intervals:
    """Split a sampled trace into intervals.

    Parameters
    ----------
    time_s : (T,) array
        Sample times [s], strictly increasing.
    speed_ms : (T,) array
        Speeds [m/s].
    grade_fraction : float or (T,) array
        Road grade rise/run [-] at each sample (0.05 = 5 %).
    """
    t = np.asarray(time_s, float)
    v = np.asarray(speed_ms, float)
    dt = np.diff(t)
    v_mean = 0.5 * (v[1:] + v[:-1])
    accel = np.diff(v) / dt
    g = np.broadcast_to(np.asarray(grade_fraction, float), t.shape)
    g_mean = 0.5 * (g[1:] + g[:-1])
    sin_grade = g_mean / np.sqrt(1.0 + g_mean * g_mean)
    return Intervals(dt, v_mean, accel, v_mean * dt, sin_grade)


def wheel_force_parts_n(road_load: RoadLoad, mass_kg, inertial_mass_kg, speed_ms, accel_ms2,
                        sin_grade) -> dict:
    """Force parts at the wheels [N].

    Parameters
    ----------
    road_load : RoadLoad
        Level-road resistance (coefficients may have a vehicle axis (N,)).
    mass_kg : float or (N,) array
        Test mass [kg] (grade force).
    inertial_mass_kg : float or (N,) array
        Mass for acceleration [kg] (including rotating-mass allowance).
    speed_ms, accel_ms2, sin_grade : (T-1,) arrays
        Interval mean speed [m/s], acceleration [m/s²], sin of road angle [-].

    Returns
    -------
    dict of arrays (broadcast to (N, T-1) or (T-1,)) keyed by
    ``rolling``, ``aero``, ``inertia``, ``grade``.
    """
    v = np.asarray(speed_ms, float)
    rolling = road_load.rolling_force_n(v)
    aero = road_load.aero_force_n(v)
    inertia = _col(inertial_mass_kg) * np.asarray(accel_ms2, float)
    grade = _col(mass_kg) * STANDARD_GRAVITY_MS2 * np.asarray(sin_grade, float)
    shape = np.broadcast_shapes(np.shape(rolling), np.shape(aero), np.shape(inertia),
                                np.shape(grade))
    return {name: np.broadcast_to(part, shape)
            for name, part in zip(COMPONENTS, (rolling, aero, inertia, grade))}


@dataclass(frozen=True)
class WheelDemand:
    """Wheel force and energy over one profile (GTR 15 Annex 7 method).

    Per-interval arrays have shape (T-1,) or (N, T-1); totals () or (N,).

    Attributes
    ----------
    profile : str
        Profile name.
    intervals : Intervals
        Interval kinematics.
    force_n : array
        Total wheel force [N] per interval.
    positive_energy_j, negative_energy_j : array
        Traction energy and braking energy [J], both ≥ 0.
    components_j : dict
        Parts of the positive energy [J]; they add up to it exactly.
    distance_m : float
        Profile distance [m].
    """

    profile: str
    intervals: Intervals
    road_load: RoadLoad
    mass_kg: object
    inertial_mass_kg: object
    force_n: np.ndarray
    positive_energy_j: np.ndarray
    negative_energy_j: np.ndarray
    components_j: dict
    distance_m: float

    @cached_property
    def force_parts_n(self) -> dict:
        """Force parts [N] per interval (rolling, aero, inertia, grade), computed on demand."""
        iv = self.intervals
        return wheel_force_parts_n(self.road_load, self.mass_kg, self.inertial_mass_kg,
                                   iv.speed_ms, iv.accel_ms2, iv.sin_grade)

    @property
    def power_w(self):
        """Wheel power per interval [W] = F · v_mean."""
        return self.force_n * self.intervals.speed_ms

    @property
    def distance_km(self) -> float:
        return self.distance_m / 1000.0

    @property
    def positive_energy_kwh(self):
        return self.positive_energy_j / KWH_J

    @property
    def negative_energy_kwh(self):
        return self.negative_energy_j / KWH_J

    def to_dict(self) -> dict:
        """Totals as JSON-ready data (energies in kWh and Wh/km)."""
        km = self.distance_km

        def per_km(e_j):
            return _plain(np.asarray(e_j) / 3600.0 / km) if km > 0 else None

        return {
            "cycle": self.profile,
            "distance_km": km,
            "positive_energy_kwh": _plain(self.positive_energy_kwh),
            "negative_energy_kwh": _plain(self.negative_energy_kwh),
            "positive_energy_wh_per_km": per_km(self.positive_energy_j),
            "negative_energy_wh_per_km": per_km(self.negative_energy_j),
            "components_kwh": {k: _plain(np.asarray(v) / KWH_J)
                               for k, v in self.components_j.items()},
        }


def _plain(x):
    x = np.asarray(x, float)
    return float(x) if x.ndim == 0 else x.tolist()


def wheel_demand(road_load: RoadLoad, mass_kg, inertial_mass_kg, time_s, speed_ms,
                 grade_fraction=0.0, *, profile: str = "") -> WheelDemand:
    """Wheel force and positive/negative energy along a trace (GTR 15 Annex 7).

    Parameters
    ----------
    road_load : RoadLoad
        Level-road resistance [SI coefficients], optionally with a vehicle axis.
    mass_kg : float or (N,) array
        Test mass [kg].
    inertial_mass_kg : float or (N,) array
        Inertial mass [kg].
    time_s, speed_ms : (T,) arrays
        The trace: times [s] and speeds [m/s].
    grade_fraction : float or (T,) array
        Grade rise/run [-] at each sample.
    profile : str
        Name carried into the result.
    """
    iv = interval_kinematics(time_s, speed_ms, grade_fraction)
    # Every force term is a coefficient (per vehicle) times a function of the
    # trace (per interval): F = C @ B.T with basis B = [1, v, v², a, sin θ] and
    # C = [f0, f1, f2, m_inertial, m·g]. Sums over the traction intervals then
    # need one product, S = w @ B with w = d where F > 0, instead of one pass
    # over (N, T) per part.
    v = iv.speed_ms
    basis = np.stack([np.ones_like(v), v, v * v, iv.accel_ms2, iv.sin_grade], axis=-1)
    f2_rolling = np.asarray(road_load.f2_rolling_n_per_ms2, float)
    f2_aero = np.asarray(road_load.f2_aero_n_per_ms2, float)
    coeffs = np.broadcast_arrays(
        np.asarray(road_load.f0_n, float), np.asarray(road_load.f1_n_per_ms, float),
        f2_aero + f2_rolling, np.asarray(inertial_mass_kg, float),
        np.asarray(mass_kg, float) * STANDARD_GRAVITY_MS2)
    coeffs = np.stack(coeffs, axis=-1)                  # (..., 5)
    # einsum's own loops (not BLAS) keep every vehicle's result independent of how
    # many vehicles share the call, to the last bit
    force = np.einsum("...k,tk->...t", coeffs, basis)   # (..., T-1)
    d = iv.distance_m
    w = np.where(force > 0.0, d, 0.0)
    sums = np.einsum("...t,tk->...k", w, basis)         # (..., 5): Σ w·[1, v, v², a, sin θ]
    c = [coeffs[..., k] for k in range(5)]
    s = [sums[..., k] for k in range(5)]
    components = {
        "rolling": c[0] * s[0] + c[1] * s[1] + f2_rolling * s[2],
        "aero": f2_aero * s[2],
        "inertia": c[3] * s[3],
        "grade": c[4] * s[4],
    }
    positive = components["rolling"] + components["aero"] + components["inertia"] + \
        components["grade"]
    braking = np.einsum("...t,tk->...k", np.where(force < 0.0, d, 0.0), basis)  # F < 0
    negative = 0.0 - np.sum(coeffs * braking, axis=-1)   # 0.0 - x: no negative zero
    return WheelDemand(profile=profile, intervals=iv, road_load=road_load, mass_kg=mass_kg,
                       inertial_mass_kg=inertial_mass_kg, force_n=force,
                       positive_energy_j=positive, negative_energy_j=negative,
                       components_j=components, distance_m=float(np.sum(d)))


def vehicle_wheel_demand(vehicle, profile) -> WheelDemand:
    """:func:`wheel_demand` for a :class:`~tractive.vehicle.Vehicle` on a
    :class:`~tractive.profiles.Profile`."""
    return wheel_demand(vehicle.resistance(), vehicle.mass_kg, vehicle.inertial_mass_kg,
                        profile.time_s, profile.speed_ms, profile.grade_fraction,
                        profile=profile.name)
