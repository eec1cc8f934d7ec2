"""Performance: top speed, acceleration times and gradeability.

Wheel force available in gear g at speed v [m/s]:

* engine: F = T_fl(ω)·i_g·i_fd·η / r with ω = v·i_g·i_fd / r between the
  lowest speed of the full-load curve and the rev limit; in first gear below
  the launch speed the clutch slips and the engine holds the launch speed,
  unless it gives more torque in gear (F = max(T_fl(ω), T_fl(ω_launch))·i_1·i_fd·η / r);
* motor: F = T_max(ω)·i·η / r with the constant-torque / constant-power
  envelope, zero above the motor speed limit.

Traction limit (Gillespie ch. 2, "traction-limited acceleration"): the
driven wheels transmit at most μ·N_d, with the driven-axle normal load

    N_d = s·m·g·cos θ + s_df·½ρ·ClA·v_air² + σ·(h/L)·(m·a + m·g·sin θ)

(s: static driven-axle share, s_df: its share of the downforce, σ = +1 rear,
−1 front, 0 all-wheel drive or no load-transfer data, h: centre-of-gravity
height, L: wheelbase). With m·a = (m / m_inertial)·(F − R) this is solved for
F in closed form.

Road load at grade θ and head wind w (w < 0: tail wind), air speed
v_air = v + w:

    R = cos θ·(f0 + f1·v) + f2,rolling·v_air² + f2,aero·v_air·|v_air| + m·g·sin θ

(the weight-proportional rolling terms scale with cos θ; the downforce and
aerodynamic terms with the air speed).

* Top speed in each gear: the highest speed where the available force still
  meets the road load, found on a grid (:data:`TOP_SPEED_INTERVALS` equal
  steps from the gear's lowest to its highest speed, plus the speeds where the
  full-load curve has a corner or the motor reaches its base speed) and
  refined by bisection; the binding limit is ``power`` (force curve meets road
  load), ``traction``, ``rev_limit`` (engine), ``motor_speed_limit``, or
  ``governor`` (a set speed limit below the others).
* Acceleration time: the forward integration of m_inertial·dv/dt = F(v) − R(v)
  in the best gear, written as t = ∫ m_inertial / (F − R) dv over speed and
  evaluated with Simpson's rule on each step between nodes: equal speed steps
  of at most :data:`ACCEL_STEP_KMH`, plus for every gear the corners of the
  full-load curve, the motor base speed, the launch speed and a pair of nodes
  a relative 1e-9 apart at each end of the gear's speed range, so that the
  jump of the force where a gear runs out of revs falls between two nodes
  instead of inside a step. Each gear change costs the shift time, during
  which the drive is open: the vehicle slows by Δv = R·t_shift / m_inertial
  and must regain Δv in the new gear.
* Gradeability at a speed: the largest grade tan θ at which the best gear
  still meets the road load (bisection in θ).
* Peak wheel power: η·max T_fl(ω)·ω over the usable engine speeds (exact for
  the piecewise-linear full-load curve: at its corners, its ends or the
  vertex of a segment) or η·P_peak for a motor.

Vehicle axis
------------
Every numeric parameter may be an array of shape (N,) along a vehicle axis
(N vehicles, e.g. Monte Carlo draws): ``mass_kg``, ``rotating_mass_fraction``,
the road-load coefficients (and ``cla_m2``, ``air_density_kg_m3`` of a
physical road load), the numbers of the ``performance`` block (friction, axle
share, centre-of-gravity height, wheelbase, downforce share, shift time,
governor, gradeability speed, launch speed, final drive, tyre radius,
driveline efficiency, rev limit), the motor's peak power, peak torque and
speed limit, and the powertrain's gear or transmission efficiency. Gear ratios
and the full-load curve are shared. Every figure is then computed for all N
vehicles at once (array operations over vehicles, a loop over the few gears,
bisection steps and no loop over vehicles), and the result carries (N,)
arrays; entry i equals the result for vehicle i alone.

References
----------
.. [1] T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 2
   (power-limited and traction-limited acceleration, load transfer) and ch. 4
   (road loads).
.. [2] J. Y. Wong, *Theory of Ground Vehicles*, 4th ed., Wiley 2008, ch. 3
   (tractive effort, gradeability, acceleration time by integration over
   speed).
.. [3] L. Guzzella, A. Sciarretta, *Vehicle Propulsion Systems*, 3rd ed.,
   Springer 2013, §4.1 (electric machine envelope).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import ClassVar

import numpy as np

from .demand import inertial_mass_kg
from .errors import InputError
from .limits import MAX_SHAFT_SPEED_RPM
from .plain import plain
from .powertrain.base import ParamField
from .powertrain.drive import (RPM_RADS, FullLoadCurve, Gearing, MotorEnvelope, motor_fields,
                               parse_full_load, parse_gear_ratios, parse_motor)
from .roadload import PhysicalRoadLoad
from .spec import Section
from .units import KMH_MS, STANDARD_GRAVITY_MS2

#: top-speed search ends here when nothing else limits the speed [m/s]
SEARCH_LIMIT_MS = 1000.0
#: default speed for the gradeability figure [km/h]
DEFAULT_GRADEABILITY_SPEED_KMH = 10.0
#: equal speed steps of the top-speed search grid in each gear
TOP_SPEED_INTERVALS = 200
#: largest equal speed step of the acceleration integral [km/h] (corner nodes come on top)
ACCEL_STEP_KMH = 0.5
_BISECTIONS = 80
#: relative distance of the node pair at the ends of a gear's speed range
_EDGE = 1e-9
#: values per temporary array in a blocked evaluation over nodes (256 KiB)
_BLOCK_VALUES = 32768

# ---------------------------------------------------------------------------
# input
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class PerformanceSpec:
    """The ``performance`` block of a vehicle file (units in the names).

    Drive data given here (``full_load`` or ``motor``, gears, radius,
    efficiency, rev limit) override those of the powertrain block.
    """

    driven_axle_load_share: float
    tyre_road_friction: float
    driven_axle: str | None = None
    cg_height_m: float | None = None
    wheelbase_m: float | None = None
    downforce_driven_share: float | None = None
    shift_time_s: float | None = None
    governor_kmh: float | None = None
    gradeability_speed_kmh: float = DEFAULT_GRADEABILITY_SPEED_KMH
    launch_speed_rpm: float | None = None
    full_load: FullLoadCurve | None = None
    motor: MotorEnvelope | None = None
    gear_ratios: tuple | None = None
    final_drive_ratio: float | None = None
    tyre_radius_m: float | None = None
    driveline_efficiency: float | None = None
    rev_limit_rpm: float | None = None
    file: str | None = None
    line: int | None = None

    #: vehicle-file keys a study may change (see :class:`tractive.powertrain.base.ParamField`)
    CHANGEABLE: ClassVar[dict] = {
        "driven_axle_load_share": ParamField(("driven_axle_load_share",), min=0.0,
                                             min_inclusive=False, max=1.0),
        "tyre_road_friction": ParamField(("tyre_road_friction",), min=0.05, max=3.0),
        "cg_height_m": ParamField(("cg_height_m",), "m", min=0.05, max=3.0),
        "wheelbase_m": ParamField(("wheelbase_m",), "m", min=0.5, max=10.0),
        "downforce_driven_share": ParamField(("downforce_driven_share",), min=0.0, max=1.0,
                                             optional=True),
        "shift_time_s": ParamField(("shift_time_s",), "s", min=0.0, max=5.0, optional=True),
        "governor_kmh": ParamField(("governor_kmh",), "km/h", min=0.0, min_inclusive=False,
                                   max=600.0, optional=True),
        "gradeability_speed_kmh": ParamField(("gradeability_speed_kmh",), "km/h", min=0.0,
                                             max=300.0),
        "launch_speed_rpm": ParamField(("launch_speed_rpm",), "rpm", min=100.0, max=25000.0,
                                       optional=True),
        "final_drive_ratio": ParamField(("final_drive_ratio",), min=0.0, min_inclusive=False,
                                        max=20.0, optional=True),
        "tyre_radius_m": ParamField(("tyre_radius_m",), "m", min=0.1, max=1.5, optional=True),
        "driveline_efficiency": ParamField(("driveline_efficiency",), min=0.5, max=1.0,
                                           optional=True),
        "rev_limit_rpm": ParamField(("rev_limit_rpm",), "rpm", min=500.0,
                                    max=MAX_SHAFT_SPEED_RPM, optional=True),
        **motor_fields(),
    }

    def check_changed(self):
        """(key, message) of a rule between values that a change breaks, else None."""
        h, wb, mu = self.cg_height_m, self.wheelbase_m, self.tyre_road_friction
        if h is not None and wb is not None and h / wb * mu >= 1.0 and \
                self.driven_axle == "rear":
            return ("cg_height_m", f"friction × cg_height_m / wheelbase_m = {mu * h / wb:.2f} "
                    "≥ 1: the front wheels would lift before the rear tyres slip")
        if self.motor is not None:
            if self.rev_limit_rpm is not None or self.launch_speed_rpm is not None:
                key = "rev_limit_rpm" if self.rev_limit_rpm is not None else "launch_speed_rpm"
                return (key, "is for engines; a motor's limit is motor.max_speed_rpm")
            bad = self.motor.check_changed()
            if bad:
                return ("motor." + bad[0], bad[1])
        return None

    def to_dict(self) -> dict:
        out = {k: getattr(self, k) for k in (
            "driven_axle_load_share", "tyre_road_friction", "driven_axle", "cg_height_m",
            "wheelbase_m", "downforce_driven_share", "shift_time_s", "governor_kmh",
            "gradeability_speed_kmh", "launch_speed_rpm", "final_drive_ratio",
            "tyre_radius_m", "driveline_efficiency", "rev_limit_rpm")}
        out["gear_ratios"] = None if self.gear_ratios is None else list(self.gear_ratios)
        out["full_load"] = None if self.full_load is None else self.full_load.to_dict()
        out["motor"] = None if self.motor is None else self.motor.to_dict()
        return out


def parse_performance(sec: Section) -> PerformanceSpec:
    """Read a ``performance`` block (keys documented in docs/vehicle-file.md; the ranges
    are those of :attr:`PerformanceSpec.CHANGEABLE`)."""
    share = _number(sec, "driven_axle_load_share")
    mu = _number(sec, "tyre_road_friction")
    axle = sec.string("driven_axle", required=False, choices=("front", "rear", "all"))
    h = _number(sec, "cg_height_m", required=False)
    wb = _number(sec, "wheelbase_m", required=False)
    if (h is None) != (wb is None):
        missing = "wheelbase_m" if wb is None else "cg_height_m"
        raise sec.error("load transfer needs both cg_height_m and wheelbase_m", missing)
    if h is not None and axle is None:
        raise sec.error("missing required key with cg_height_m (front, rear or all)",
                        "driven_axle")
    df_share = _number(sec, "downforce_driven_share", required=False)
    shift = _number(sec, "shift_time_s", required=False)
    gov = _number(sec, "governor_kmh", required=False)
    gspeed = _number(sec, "gradeability_speed_kmh", required=False,
                     default=DEFAULT_GRADEABILITY_SPEED_KMH)
    launch = _number(sec, "launch_speed_rpm", required=False)
    src = sec.only_one_of(("full_load",), ("motor",), what="drive source")
    full_load = parse_full_load(sec.section("full_load")) if src == 0 else None
    motor = parse_motor(sec.section("motor")) if src == 1 else None
    ratios = parse_gear_ratios(sec) if sec.has("gear_ratios") else None
    final = _number(sec, "final_drive_ratio", required=False)
    radius = _number(sec, "tyre_radius_m", required=False)
    eff = _number(sec, "driveline_efficiency", required=False)
    rev = _number(sec, "rev_limit_rpm", required=False)
    if motor is not None:
        for k in ("rev_limit_rpm", "launch_speed_rpm"):
            if sec.has(k):
                raise sec.error("is for engines; a motor's limit is motor.max_speed_rpm", k)
    sec.finish()
    if h is not None and h / wb * mu >= 1.0 and axle == "rear":
        raise sec.error(f"friction × cg_height_m / wheelbase_m = {mu * h / wb:.2f} ≥ 1: the "
                        "front wheels would lift before the rear tyres slip", "cg_height_m")
    return PerformanceSpec(share, mu, axle, h, wb, df_share, shift, gov, gspeed, launch,
                           full_load, motor, ratios, final, radius, eff, rev, sec.file,
                           sec.line)


def _number(sec: Section, key: str, **kw):
    """A number read with the range of its entry in :attr:`PerformanceSpec.CHANGEABLE`."""
    fld = PerformanceSpec.CHANGEABLE[key]
    return sec.number(key, min=fld.min, max=fld.max, min_inclusive=fld.min_inclusive,
                      unit=fld.unit, **kw)


# ---------------------------------------------------------------------------
# resolved model (every per-vehicle value a column of shape (N, 1))
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Model:
    n: int                           # vehicles (1 for a scalar vehicle)
    batch: bool                      # the vehicle has a vehicle axis
    gear_ratios: tuple               # gearbox ratios (G,), shared
    final: np.ndarray                # final drive ratio [-]
    radius_m: np.ndarray             # tyre radius [m]
    eff: np.ndarray                  # driveline efficiency [-]
    full_load: FullLoadCurve | None
    motor_power_w: np.ndarray | None
    motor_torque_nm: np.ndarray | None
    max_w: np.ndarray                # rev limit or motor speed limit [rad/s] (inf: none)
    min_w: np.ndarray                # lowest engine speed [rad/s] (0 for a motor)
    launch_w: np.ndarray             # launch speed [rad/s]
    launch_torque_nm: np.ndarray     # full-load torque at the launch speed [N m]
    limit_name: str
    sigma: float                     # +1 rear, -1 front, 0 no load transfer
    mu: np.ndarray
    share: np.ndarray
    df_share: np.ndarray
    hl: np.ndarray                   # cg height / wheelbase [-]
    shift_s: np.ndarray
    governor_kmh: np.ndarray         # inf: none
    grade_speed_kmh: np.ndarray
    mass_kg: np.ndarray
    inertial_mass_kg: np.ndarray
    f0: np.ndarray
    f1: np.ndarray
    f2_aero: np.ndarray
    f2_rolling: np.ndarray
    downforce_per_v2: np.ndarray     # ½ρ·ClA [N/(m/s)²]
    # full-load table in rad/s, its ends widened by a relative 1e-12 (zero outside)
    table_rads: np.ndarray | None = None
    speed_limited: bool = True       # some vehicle has a finite limit inside the table

    @property
    def n_gears(self) -> int:
        return len(self.gear_ratios)

    def overall(self):
        """Overall ratio of every gear, shape (G, N, 1) [-]."""
        return np.asarray(self.gear_ratios, float)[:, None, None] * self.final

    # -- forces ---------------------------------------------------------------
    # Arguments broadcast: speeds (N, K), (N, 1) or (G, N, 1) [m/s]; per-vehicle
    # values are (N, 1) columns; results broadcast against the speeds.
    def drive_force_n(self, speed_ms, overall, first):
        """Wheel force from the engine or motor [N] (no traction limit).

        ``overall`` is the overall ratio, (N, 1) for one gear or (G, N, 1);
        ``first`` marks first gear (a bool, or (G, 1, 1) with a gear axis).
        """
        w = speed_ms * (overall / self.radius_m)
        k = overall * (self.eff / self.radius_m)
        if self.full_load is None:
            t = np.minimum(self.motor_torque_nm, self.motor_power_w / np.maximum(w, 1e-12))
        else:
            fl = self.full_load
            t = np.interp(w, self.table_rads, fl.values, left=0.0, right=0.0)
            if fl.quantity == "power":
                t /= np.maximum(w, 1e-12)
            if first is True:
                t = np.where(w < self.launch_w, np.maximum(t, self.launch_torque_nm), t)
            elif first is not False and np.any(first):
                t = np.where(first & (w < self.launch_w), np.maximum(t, self.launch_torque_nm),
                             t)
        if self.speed_limited:
            t = np.where(w <= self.max_w * (1 + 1e-12), t, 0.0)
        return t * k

    def road_load_n(self, speed_ms, theta, wind_ms):
        """Road load [N] at grade angle θ [rad] and head wind [m/s] (see module doc)."""
        cos_t = np.cos(theta)
        c0 = cos_t * self.f0 + self.mass_kg * STANDARD_GRAVITY_MS2 * np.sin(theta)
        c1 = cos_t * self.f1
        if np.ndim(wind_ms) == 0 and wind_ms == 0.0:
            # v ≥ 0: v·|v| = v²
            return c0 + speed_ms * (c1 + (self.f2_rolling + self.f2_aero) * speed_ms)
        va = speed_ms + wind_ms
        return c0 + c1 * speed_ms + va * (self.f2_rolling * va + self.f2_aero * np.abs(va))

    def traction_limit_n(self, speed_ms, theta, wind_ms, road_n):
        """Largest force the driven tyres transmit [N] (closed form, see module doc).

        Broadcasts against the speeds (an (N, 1) column when it does not vary).
        """
        weight = self.mass_kg * STANDARD_GRAVITY_MS2
        static = self.mu * self.share * weight * np.cos(theta)
        down = self.mu * self.df_share * self.downforce_per_v2
        if self.sigma != 0:
            kk = self.mass_kg / self.inertial_mass_kg
            den = 1.0 - self.mu * self.sigma * self.hl * kk
            static = (static + self.mu * self.sigma * self.hl * weight * np.sin(theta)) / den
            down = down / den
        if np.any(down != 0):
            va = speed_ms + wind_ms
            static = static + down * (va * va)
        if self.sigma == 0:
            return static
        return np.maximum(static - (self.mu * self.sigma * self.hl * kk / den) * road_n, 0.0)

    def excess_n(self, speed_ms, overall, first, theta, wind_ms):
        """(usable force − road load, drive force, traction limit) [N]."""
        road = self.road_load_n(speed_ms, theta, wind_ms)
        trac = self.traction_limit_n(speed_ms, theta, wind_ms, road)
        drive = self.drive_force_n(speed_ms, overall, first)
        return np.minimum(drive, trac) - road, drive, trac

    def gear_speed_span_ms(self):
        """Lowest and highest speed [m/s] of each gear, (G, N, 1) each."""
        ov = self.overall()
        hi = np.minimum(self.max_w * self.radius_m / ov, SEARCH_LIMIT_MS)
        lo = self.min_w * self.radius_m / ov
        lo[0] = 0.0
        return lo, hi

    def corner_speeds_ms(self, overall, first):
        """Speeds [m/s] where gear ``overall`` (N, 1) changes regime, shape (N, S).

        The ends of the gear's speed range (each with a node a relative
        ``_EDGE`` outside it), the corners of the full-load curve, the launch
        speed (first gear) and the motor base speed.
        """
        r = self.radius_m
        hi = self.max_w * r / overall
        lo = self.min_w * r / overall
        out = [lo * (1 - _EDGE), lo, hi, hi * (1 + _EDGE)]
        if self.full_load is not None:
            out.append(self.full_load.speed_rpm[None, :] * RPM_RADS * r / overall)
            if first:
                out.append(self.launch_w * r / overall)
        else:
            out.append(self.motor_power_w / self.motor_torque_nm * r / overall)
        return np.concatenate([np.broadcast_to(x, (self.n, np.shape(x)[-1])) for x in out],
                              axis=1)


def _full_load_torque(fl: FullLoadCurve, speed_rads):
    """Full-load torque [N m] at engine speed [rad/s] (linear in the quantity given)."""
    n = speed_rads / RPM_RADS
    if fl.quantity == "torque":
        return np.interp(n, fl.speed_rpm, fl.values)
    return np.interp(n, fl.speed_rpm, fl.values) / np.maximum(speed_rads, 1e-12)


def _powertrain_gearing(pt):
    """The powertrain's gearing, efficiency kept as given (a number or an (N,) array)."""
    if pt is None:
        return None
    if pt.kind == "electric":
        if pt.gear_ratio is None or pt.tyre_radius_m is None:
            return None
        return Gearing((float(pt.gear_ratio),), 1.0, pt.tyre_radius_m, pt.gear_efficiency)
    return pt.gearing


def _drive_and_gearing(vehicle, spec, err) -> tuple:
    """The drive (engine full-load curve or motor; the performance block's, else the
    powertrain's) and the gearing, performance values overriding the powertrain's.

    Returns ``(full_load, motor, gear_ratios, values)``, ``values`` holding the
    scalar parameters of the model by key.
    """
    pt = vehicle.powertrain
    full_load = spec.full_load
    motor = spec.motor
    if full_load is None and motor is None and pt is not None:
        if pt.kind == "combustion":
            full_load = pt.full_load
        else:
            motor = pt.motor
    if full_load is None and motor is None:
        raise err("no drive data: give performance.full_load (engine) or performance.motor, "
                  "or powertrain.full_load / powertrain.motor")
    base = _powertrain_gearing(pt)
    ratios = spec.gear_ratios if spec.gear_ratios is not None else (
        None if base is None else base.gear_ratios)
    if spec.gear_ratios is not None:
        final = spec.final_drive_ratio
        if final is None:
            if motor is None:
                raise err("missing required key with gear_ratios for an engine",
                          "final_drive_ratio")
            final = 1.0
    else:
        final = spec.final_drive_ratio if spec.final_drive_ratio is not None else (
            None if base is None else base.final_drive_ratio)
    radius = spec.tyre_radius_m if spec.tyre_radius_m is not None else (
        None if base is None else base.tyre_radius_m)
    eff = spec.driveline_efficiency if spec.driveline_efficiency is not None else (
        None if base is None else base.efficiency)
    for key, val in (("gear_ratios", ratios), ("final_drive_ratio", final),
                     ("tyre_radius_m", radius), ("driveline_efficiency", eff)):
        if val is None:
            raise err("missing: give it here or in the powertrain block", key)
    ratios = tuple(float(x) for x in ratios)
    if len(ratios) > 1 and spec.shift_time_s is None:
        raise err("missing required key with more than one gear", "shift_time_s")
    values = {"final_drive_ratio": final, "tyre_radius_m": radius,
              "driveline_efficiency": eff,
              "driven_axle_load_share": spec.driven_axle_load_share,
              "tyre_road_friction": spec.tyre_road_friction,
              "shift_time_s": 0.0 if spec.shift_time_s is None else spec.shift_time_s,
              "governor_kmh": math.inf if spec.governor_kmh is None else spec.governor_kmh,
              "gradeability_speed_kmh": spec.gradeability_speed_kmh,
              "downforce_driven_share": spec.driven_axle_load_share
              if spec.downforce_driven_share is None else spec.downforce_driven_share,
              "mass_kg": vehicle.mass_kg,
              "rotating_mass_fraction": vehicle.rotating_mass_fraction}
    return full_load, motor, ratios, values


def _drive_limits(vehicle, spec, full_load, motor, values: dict, err) -> str:
    """Add the motor's envelope or the engine's rev limit and launch speed to ``values``;
    returns the name of the limit that caps the top speed of a gear."""
    if motor is not None:
        values["motor.peak_power_kw"] = np.asarray(motor.peak_power_w, float) / 1000.0
        values["motor.peak_torque_nm"] = motor.peak_torque_nm
        values["motor.max_speed_rpm"] = (math.inf if motor.max_speed_rpm is None
                                         else motor.max_speed_rpm)
        return "motor_speed_limit"
    pt = vehicle.powertrain
    rev = spec.rev_limit_rpm
    if rev is None and pt is not None and pt.kind == "combustion" and \
            full_load is pt.full_load:
        rev = pt.rev_limit_rpm
    if rev is None:
        rev = float(full_load.speed_rpm[-1])
    last = float(full_load.speed_rpm[-1])
    if np.any(np.asarray(rev, float) > last + 1e-9):
        raise err(f"rev limit {np.max(rev):g} rpm is above the last full-load speed "
                  f"{last:g} rpm", "rev_limit_rpm")
    if spec.launch_speed_rpm is not None:
        launch_rpm = np.asarray(spec.launch_speed_rpm, float)
        if np.any((launch_rpm < full_load.speed_rpm[0]) | (launch_rpm > rev)):
            raise err(f"must lie within the full-load curve ({full_load.speed_rpm[0]:g} "
                      f"to {np.min(rev):g} rpm)", "launch_speed_rpm")
    else:
        launch_rpm = full_load.peak_torque()[1]
    values["rev_limit_rpm"] = rev
    values["launch_speed_rpm"] = launch_rpm
    return "rev_limit"


def _model(vehicle) -> _Model:
    """The performance model of a vehicle: drive, gearing, tyres and road load as (N, 1)
    columns along the vehicle axis (see the module doc). A little over 80 lines: the
    model's fields are filled in one place, in the order of the dataclass."""
    spec = vehicle.performance
    src = vehicle.source or None
    if spec is None:
        raise InputError("the vehicle has no performance block; give at least "
                         "driven_axle_load_share and tyre_road_friction", file=src,
                         field="performance")

    def err(msg, key=None):
        field = "performance" if key is None else f"performance.{key}"
        return InputError(msg, file=spec.file or src, field=field, line=spec.line)

    full_load, motor, ratios, values = _drive_and_gearing(vehicle, spec, err)
    sigma = 0.0
    if spec.cg_height_m is not None and spec.driven_axle != "all":
        sigma = 1.0 if spec.driven_axle == "rear" else -1.0
        values["cg_height_m"] = spec.cg_height_m
        values["wheelbase_m"] = spec.wheelbase_m
    limit = _drive_limits(vehicle, spec, full_load, motor, values, err)
    rl = vehicle.resistance()
    values.update({"road_load.f0_n": rl.f0_n, "road_load.f1_n_per_ms": rl.f1_n_per_ms,
                   "road_load.f2_aero_n_per_ms2": rl.f2_aero_n_per_ms2,
                   "road_load.f2_rolling_n_per_ms2": rl.f2_rolling_n_per_ms2})
    if isinstance(vehicle.road_load, PhysicalRoadLoad):
        values["road_load.downforce"] = 0.5 * np.asarray(vehicle.road_load.air_density_kg_m3,
                                                         float) * vehicle.road_load.cla_m2
    # the vehicle axis: every value a number or an array of one common shape (N,)
    arrays = {k: np.asarray(v, float) for k, v in values.items()}
    for key, arr in arrays.items():
        if arr.ndim > 1:
            raise InputError(f"must be a number or an array of shape (N,) along the vehicle "
                             f"axis, got shape {arr.shape}", file=src, field=key)
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        sizes = sorted({a.shape[0] for a in arrays.values() if a.ndim == 1})
        raise InputError(f"vehicle-axis arrays of different lengths {sizes}", file=src,
                         field="vehicle") from None
    n = shape[0] if shape else 1

    def c(key, default=0.0):
        """A value as a column (N, 1)."""
        arr = arrays.get(key)
        if arr is None:
            arr = np.asarray(default, float)
        return np.broadcast_to(arr, (n,)).reshape(n, 1)

    mass = c("mass_kg")
    if full_load is not None:
        max_w = c("rev_limit_rpm") * RPM_RADS
        min_w = np.full((n, 1), full_load.min_speed_rads)
        launch_w = c("launch_speed_rpm") * RPM_RADS
        launch_t = _full_load_torque(full_load, launch_w)
        p_w = t_nm = None
    else:
        max_w = c("motor.max_speed_rpm") * RPM_RADS
        min_w = np.zeros((n, 1))
        launch_w = launch_t = np.zeros((n, 1))
        p_w, t_nm = c("motor.peak_power_kw") * 1000.0, c("motor.peak_torque_nm")
    hl = c("cg_height_m") / c("wheelbase_m", 1.0)
    m = _Model(n=n, batch=bool(shape), gear_ratios=ratios, final=c("final_drive_ratio"),
               radius_m=c("tyre_radius_m"), eff=c("driveline_efficiency"),
               full_load=full_load, motor_power_w=p_w, motor_torque_nm=t_nm, max_w=max_w,
               min_w=min_w, launch_w=launch_w, launch_torque_nm=launch_t, limit_name=limit,
               sigma=sigma, mu=c("tyre_road_friction"),
               share=c("driven_axle_load_share"), df_share=c("downforce_driven_share"), hl=hl,
               shift_s=c("shift_time_s"), governor_kmh=c("governor_kmh"),
               grade_speed_kmh=c("gradeability_speed_kmh"), mass_kg=mass,
               inertial_mass_kg=inertial_mass_kg(mass, c("rotating_mass_fraction")),
               f0=c("road_load.f0_n"), f1=c("road_load.f1_n_per_ms"),
               f2_aero=c("road_load.f2_aero_n_per_ms2"),
               f2_rolling=c("road_load.f2_rolling_n_per_ms2"),
               downforce_per_v2=c("road_load.downforce"))
    if full_load is not None:
        table = full_load.speed_rpm * RPM_RADS
        table[0] *= 1 - 1e-12
        table[-1] *= 1 + 1e-12
        m = replace(m, table_rads=table,
                    speed_limited=bool(np.any(max_w < full_load.max_speed_rads)))
    else:
        m = replace(m, speed_limited=bool(np.any(np.isfinite(max_w))))
    if sigma > 0 and np.any(m.mu * m.hl * m.mass_kg / m.inertial_mass_kg >= 1.0):
        raise err("friction × cg_height_m / wheelbase_m ≥ 1: the front wheels would lift "
                  "before the rear tyres slip", "cg_height_m")
    return m


# ---------------------------------------------------------------------------
# results
# ---------------------------------------------------------------------------

def _plain(x, integer=False):
    """JSON-ready (see :func:`tractive.plain.plain`); ``integer`` turns a float array of
    whole numbers (gears, shift counts) into ints, NaN into None."""
    if integer and isinstance(x, np.ndarray) and x.dtype.kind == "f":
        return [None if not math.isfinite(v) else int(v) for v in x.tolist()]
    return plain(x)


def _one(x, i, integer=False):
    """Entry i of an (N,) array as a scalar result value (NaN → None); numbers pass."""
    if not isinstance(x, np.ndarray):
        return x
    v = x[i].item()
    if isinstance(v, float):
        if not math.isfinite(v):
            return None
        return int(v) if integer else v
    return v


@dataclass(frozen=True)
class GearTopSpeed:
    """Top speed in one gear.

    In a batch result (vehicle axis) ``top_speed_kmh``, ``limit`` and
    ``max_speed_kmh`` are (N,) arrays (NaN where the scalar value is None), and
    ``overall_ratio`` is an (N,) array when the final drive ratio varies.
    """

    gear: int
    ratio: float
    overall_ratio: object
    top_speed_kmh: object
    limit: object
    max_speed_kmh: object

    def to_dict(self) -> dict:
        return {"gear": self.gear, "ratio": self.ratio,
                "overall_ratio": _plain(self.overall_ratio),
                "top_speed_kmh": _plain(self.top_speed_kmh), "top_speed_limit": _plain(self.limit),
                "speed_at_limit_kmh": _plain(self.max_speed_kmh)}

    def entry(self, i: int) -> "GearTopSpeed":
        """The one-vehicle table row of vehicle ``i`` of a batch result."""
        return GearTopSpeed(self.gear, self.ratio, _one(self.overall_ratio, i),
                            _one(self.top_speed_kmh, i), _one(self.limit, i),
                            _one(self.max_speed_kmh, i))


@dataclass(frozen=True)
class PerformanceResult:
    """Top speed, acceleration and gradeability of a vehicle.

    For a vehicle with a vehicle axis (N vehicles) the same class is returned
    with (N,) arrays in place of the per-vehicle values: floats with NaN where
    a single vehicle's value would be None (a speed not reached, no gear), an
    array of str for ``top_speed_limit``, bool for ``launch_traction_limited``;
    ``to_dict()`` then gives lists (NaN as null) and :meth:`entry` the result
    of one vehicle.

    Attributes
    ----------
    top_speed_kmh : float or None
    top_speed_limit : str
        ``power``, ``traction``, ``rev_limit``, ``motor_speed_limit``,
        ``governor``, ``search_limit`` or ``cannot_move``.
    top_speed_gear : int or None
    accel_0_100_kmh_s, accel_80_120_kmh_s : float or None
        Times [s]; None when the speed is not reached.
    gears : tuple of GearTopSpeed
    gradeability_pct : float
        Steepest grade [%] held at ``gradeability_speed_kmh``.
    grade_pct, wind_kmh : float
        Conditions the figures are for.
    peak_wheel_power_kw : float
        Largest wheel power (after driveline losses, before traction) [kW].
    launch_traction_limited : bool
        The driven tyres, not the drive, limit the force at standstill.
    shifts_0_100 : int or None
        Gear changes from 0 to 100 km/h.
    """

    vehicle: str
    top_speed_kmh: object
    top_speed_limit: object
    top_speed_gear: object
    accel_0_100_kmh_s: object
    accel_80_120_kmh_s: object
    gears: tuple
    gradeability_pct: object
    gradeability_speed_kmh: object
    grade_pct: float
    wind_kmh: float
    peak_wheel_power_kw: object
    launch_traction_limited: object
    shifts_0_100: object = None

    @property
    def n_vehicles(self) -> int | None:
        """N for a batch result (vehicle axis), None for one vehicle."""
        x = self.top_speed_kmh
        return int(x.shape[0]) if isinstance(x, np.ndarray) else None

    def entry(self, i: int) -> "PerformanceResult":
        """The one-vehicle result of vehicle ``i`` of a batch result."""
        if self.n_vehicles is None:
            raise ValueError("entry() needs a batch result (a vehicle with a vehicle axis)")
        return PerformanceResult(
            self.vehicle, _one(self.top_speed_kmh, i), _one(self.top_speed_limit, i),
            _one(self.top_speed_gear, i, True), _one(self.accel_0_100_kmh_s, i),
            _one(self.accel_80_120_kmh_s, i), tuple(g.entry(i) for g in self.gears),
            _one(self.gradeability_pct, i), _one(self.gradeability_speed_kmh, i),
            self.grade_pct, self.wind_kmh, _one(self.peak_wheel_power_kw, i),
            _one(self.launch_traction_limited, i), _one(self.shifts_0_100, i, True))

    def to_dict(self) -> dict:
        return {"vehicle": self.vehicle, "grade_pct": self.grade_pct,
                "wind_kmh": self.wind_kmh, "top_speed_kmh": _plain(self.top_speed_kmh),
                "top_speed_limit": _plain(self.top_speed_limit),
                "top_speed_gear": _plain(self.top_speed_gear, True),
                "accel_0_100_kmh_s": _plain(self.accel_0_100_kmh_s),
                "accel_80_120_kmh_s": _plain(self.accel_80_120_kmh_s),
                "shifts_0_100": _plain(self.shifts_0_100, True),
                "gradeability_pct": _plain(self.gradeability_pct),
                "gradeability_speed_kmh": _plain(self.gradeability_speed_kmh),
                "peak_wheel_power_kw": _plain(self.peak_wheel_power_kw),
                "launch_traction_limited": _plain(self.launch_traction_limited),
                "gears": [g.to_dict() for g in self.gears]}


# ---------------------------------------------------------------------------
# calculations, all on (N,) arrays along the vehicle axis
# ---------------------------------------------------------------------------

def _conditions(grade_pct, wind_kmh):
    for name, val in (("grade_pct", grade_pct), ("wind_kmh", wind_kmh)):
        if np.ndim(val) != 0 or not np.isfinite(val):
            raise InputError("must be a finite number", field=name)
    if abs(grade_pct) > 200:
        raise InputError(f"must be within ±200 %, got {grade_pct:g}", field="grade_pct")
    return math.atan(grade_pct / 100.0), wind_kmh * KMH_MS


def _per_vehicle(m: _Model, value, name):
    """A number, or one per vehicle (N,) with a vehicle axis, as an (N, 1) column."""
    arr = np.asarray(value, float)
    if not (arr.ndim == 0 or (m.batch and arr.shape == (m.n,))) or not np.all(np.isfinite(arr)):
        raise InputError(f"must be a finite number{' or one per vehicle' if m.batch else ''}",
                         field=name)
    return np.broadcast_to(arr, (m.n,)).reshape(m.n, 1)


def _out(m: _Model, x, integer=False):
    """(N,) array → the batch value, or the scalar value of one vehicle (NaN → None)."""
    return x if m.batch else _one(x, 0, integer)


def _column_blocks(shape):
    """Column slices of an (N, K) node array, each block about ``_BLOCK_VALUES`` values.

    The temporaries of one block stay in the processor cache; every value is
    computed exactly as without blocks.
    """
    n, k = shape
    step = max(8, _BLOCK_VALUES // max(n, 1))
    return [slice(j, min(j + step, k)) for j in range(0, k, step)]


def _gear_top_speeds(m: _Model, theta, wind):
    """Top speed [m/s] (NaN if none), limit and highest speed per gear, each (G, N)."""
    g_n = m.n_gears
    ov = m.overall()                                               # (G, N, 1)
    lo, hi = m.gear_speed_span_ms()
    frac = np.linspace(0.0, 1.0, TOP_SPEED_INTERVALS + 1)
    a = np.empty((g_n, m.n, 1))
    b = np.empty((g_n, m.n, 1))
    any_ok = np.empty((g_n, m.n), bool)
    at_top = np.empty((g_n, m.n), bool)
    for g in range(g_n):                  # the gears: a fixed small number
        corners = np.sort(np.clip(m.corner_speeds_ms(ov[g], g == 0), lo[g], hi[g]), axis=1)
        # two sorted runs: the stable sort merges them in one pass
        v = np.concatenate([lo[g] + (hi[g] - lo[g]) * frac, corners], axis=1)
        v.sort(axis=1, kind="stable")
        ok = np.empty(v.shape, bool)                                   # (N, K)
        for cols in _column_blocks(v.shape):
            ok[:, cols] = m.excess_n(v[:, cols], ov[g], g == 0, theta, wind)[0] >= 0
        k_n = ok.shape[1]
        any_ok[g] = ok.any(axis=1)
        last = np.where(any_ok[g], k_n - 1 - np.argmax(ok[:, ::-1], axis=1), 0)
        at_top[g] = any_ok[g] & (last == k_n - 1)
        k = np.minimum(last, k_n - 2)
        rows = np.arange(m.n)
        a[g, :, 0] = v[rows, k]
        b[g, :, 0] = v[rows, k + 1]
    first = (np.arange(g_n) == 0)[:, None, None]
    for _ in range(_BISECTIONS):          # bisection: iterations on whole (G, N) arrays
        mid = 0.5 * (a + b)
        if not np.any((mid > a) & (mid < b)):
            break                         # every bracket is two neighbouring floats
        good = m.excess_n(mid, ov, first, theta, wind)[0] >= 0
        a = np.where(good, mid, a)
        b = np.where(good, b, mid)
    top = np.where(at_top, hi[..., 0], a[..., 0])
    top = np.where(any_ok, top, np.nan)
    _, drive, trac = m.excess_n(np.nan_to_num(top)[..., None], ov, first, theta, wind)
    hi = hi[..., 0]
    limits = np.where(~any_ok, "cannot_move",
                      np.where(at_top, np.where(hi >= SEARCH_LIMIT_MS, "search_limit",
                                                m.limit_name),
                               np.where(trac[..., 0] < drive[..., 0], "traction", "power")))
    return top, limits, hi


def _top_speed(m: _Model, theta, wind):
    top, limits, hi = _gear_top_speeds(m, theta, wind)
    ov = m.overall()[..., 0]
    gears = []
    for i in range(m.n_gears):
        at_limit = np.where(hi[i] >= SEARCH_LIMIT_MS, np.nan, hi[i] / KMH_MS)
        overall = ov[i].copy() if m.batch and np.ptp(ov[i]) > 0 else float(ov[i, 0])
        gears.append(GearTopSpeed(i + 1, m.gear_ratios[i], overall,
                                  _out(m, top[i] / KMH_MS), _out(m, limits[i]),
                                  _out(m, at_limit)))
    none = np.all(np.isnan(top), axis=0)
    best = np.argmax(np.where(np.isnan(top), -np.inf, top), axis=0)
    cols = np.arange(m.n)
    v_kmh = top[best, cols] / KMH_MS
    limit = limits[best, cols]
    gov = m.governor_kmh[:, 0]
    capped = ~none & (gov < v_kmh)
    v_kmh = np.where(capped, gov, v_kmh)
    limit = np.where(none, "cannot_move", np.where(capped, "governor", limit))
    gear = np.where(none, np.nan, best + 1.0)
    return (_out(m, v_kmh), _out(m, limit), _out(m, gear, True), tuple(gears))


def _accel_nodes(m: _Model, v0, v1):
    """Integration nodes [m/s], shape (N, K): equal steps plus every gear's corners."""
    ov = m.overall()
    corners = np.concatenate([m.corner_speeds_ms(ov[g], g == 0) for g in range(m.n_gears)],
                             axis=1)
    k = max(1, math.ceil((v1 - v0) / (ACCEL_STEP_KMH * KMH_MS) - 1e-9))
    steps = np.linspace(v0, v1, k + 1)
    if np.all(corners == corners[:1]):
        # the same gearing for every vehicle (the usual case): one set of nodes
        inside = corners[0][(corners[0] > v0) & (corners[0] < v1)]
        nodes = np.unique(np.concatenate([steps, inside]))
        return np.broadcast_to(nodes, (m.n, nodes.size))
    corners = np.sort(np.clip(corners, v0, v1), axis=1)
    nodes = np.concatenate([np.broadcast_to(steps, (m.n, k + 1)), corners], axis=1)
    nodes.sort(axis=1, kind="stable")     # two sorted runs: merged in one pass
    return nodes


def _accel(m: _Model, from_kmh, to_kmh, theta, wind):
    """Times [s] and gear changes, (N,) each, NaN where ``to_kmh`` is not reached."""
    if not (0 <= from_kmh < to_kmh):
        raise InputError("needs 0 ≤ start speed < end speed", field="speeds")
    nodes = _accel_nodes(m, from_kmh * KMH_MS, to_kmh * KMH_MS)      # (N, K + 1)
    n, steps = nodes.shape[0], nodes.shape[1] - 1
    # the integrand at every node and every step's midpoint (Simpson's rule)
    v = np.empty((n, 2 * steps + 1))
    v[:, 0::2] = nodes
    v[:, 1::2] = 0.5 * (nodes[:, :-1] + nodes[:, 1:])
    ov = m.overall()
    part = np.empty((n, steps))           # time of each speed step [s]
    shifts = np.zeros(n)
    stuck = to_kmh > m.governor_kmh[:, 0]
    for cols in _column_blocks((n, steps)):
        vb = v[:, 2 * cols.start:2 * cols.stop + 1]
        road = m.road_load_n(vb, theta, wind)
        trac = m.traction_limit_n(vb, theta, wind, road)
        best = np.minimum(m.drive_force_n(vb, ov[0], True), trac)
        gear = np.zeros(best.shape, np.int8)
        for g in range(1, m.n_gears):     # the gears: the best one at every point
            f = np.minimum(m.drive_force_n(vb, ov[g], False), trac)
            np.copyto(gear, g, where=f > best)
            np.maximum(best, f, out=best)
        net = best - road
        stuck |= np.any(net <= 0, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            inv = m.inertial_mass_kg / net
            width = vb[:, 2::2] - vb[:, :-2:2]
            simpson = width / 6.0 * (inv[:, :-2:2] + 4.0 * inv[:, 1::2] + inv[:, 2::2])
            # a gear change at a point: the drive is open for t_shift, the speed lost,
            # R·t_shift/m_inertial, is regained in the new gear at the net force there
            change = gear[:, 1:] != gear[:, :-1]
            lost = np.where(change, m.shift_s * (1.0 + road[:, 1:] / net[:, 1:]), 0.0)
            part[:, cols] = simpson + lost[:, 0::2] + lost[:, 1::2]
        shifts += np.count_nonzero(change, axis=1)
    t = np.sum(part, axis=1)
    return np.where(stuck, np.nan, t), np.where(stuck, np.nan, shifts)


def _gradeability(m: _Model, v_ms, wind):
    """Steepest grade [%] held at speed ``v_ms`` [m/s] (N, 1); NaN: not even level."""
    lo, hi = -math.pi / 4, math.atan(3.0)
    ov = m.overall()
    first = (np.arange(m.n_gears) == 0)[:, None, None]
    drive = m.drive_force_n(v_ms, ov, first)                      # (G, N, 1), no θ in it

    def excess(theta):
        road = m.road_load_n(v_ms, theta, wind)
        trac = m.traction_limit_n(v_ms, theta, wind, road)
        return np.max(np.minimum(drive, trac), axis=0) - road

    e_lo, e_hi = excess(lo), excess(hi)
    a = np.full((m.n, 1), lo)
    b = np.full((m.n, 1), hi)
    for _ in range(_BISECTIONS):          # bisection iterations on whole arrays
        mid = 0.5 * (a + b)
        if not np.any((mid > a) & (mid < b)):
            break                         # every bracket is two neighbouring floats
        good = excess(mid) >= 0
        a = np.where(good, mid, a)
        b = np.where(good, b, mid)
    out = np.where(e_hi >= 0, 300.0, 100.0 * np.tan(a))
    return np.where(e_lo < 0, np.nan, out)[:, 0]


def _peak_wheel_power_w(m: _Model):
    """Largest wheel power over the usable shaft speeds [W], (N,)."""
    # highest shaft speed reached below the search limit (first gear turns fastest)
    w_hi = np.minimum(m.max_w, SEARCH_LIMIT_MS * m.overall()[0] / m.radius_m)
    if m.full_load is None:
        shaft = np.minimum(m.motor_power_w, m.motor_torque_nm * w_hi)
    else:
        fl = m.full_load
        knots = fl.speed_rpm * RPM_RADS
        cand = [knots[None, :]]
        if fl.quantity == "torque":
            # T = T_j + s (ω − ω_j) on a segment: T·ω is largest at ω = (s ω_j − T_j) / (2 s)
            s = np.diff(fl.values) / np.diff(knots)
            with np.errstate(divide="ignore", invalid="ignore"):
                vertex = np.where(s < 0, (s * knots[:-1] - fl.values[:-1]) / (2 * s), knots[:-1])
            cand.append(np.clip(vertex, knots[:-1], knots[1:])[None, :])
        cand = [np.broadcast_to(x, (m.n, x.shape[1])) for x in cand] + [w_hi, m.min_w]
        w = np.concatenate(cand, axis=1)
        w = np.clip(w, m.min_w, w_hi)
        shaft = np.max(_full_load_torque(fl, w) * w, axis=1, keepdims=True)
    return (shaft * m.eff)[:, 0]


def available_wheel_force_n(vehicle, speed_ms, sin_grade=0.0):
    """Largest tractive force [N] the drive and the tyres give at each speed.

    The best gear at each speed (full-load curve or motor envelope through the
    gearing and driveline efficiency), capped by the traction limit of the
    driven axle (with load transfer and downforce as in :func:`top_speed`),
    calm air.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block; fields may carry a vehicle axis (N,).
    speed_ms : (T,) array
        Speeds [m/s].
    sin_grade : float or (T,) array
        Sine of the road angle [-] at each speed (grade changes the normal load).

    Returns
    -------
    (T,) array for a scalar vehicle, (N, T) with a vehicle axis.

    References
    ----------
    .. [1] T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 2
       (power-limited and traction-limited acceleration; chapter from memory).
    """
    m = _model(vehicle)
    v = np.atleast_1d(np.asarray(speed_ms, float))[None, :]             # (1, T)
    theta = np.arcsin(np.clip(np.broadcast_to(np.asarray(sin_grade, float),
                                              v.shape[-1:]), -1.0, 1.0))[None, :]
    first = (np.arange(m.n_gears) == 0)[:, None, None]
    drive = m.drive_force_n(v, m.overall(), first)                      # (G, N, T)
    road = m.road_load_n(v, theta, 0.0)
    trac = m.traction_limit_n(v, theta, 0.0, road)
    best = np.max(np.minimum(drive, trac), axis=0)                      # (N, T)
    best = np.broadcast_to(best, (m.n, v.shape[-1]))
    scalar = np.ndim(vehicle.mass_kg) == 0
    return best[0] if scalar else best


def top_speed(vehicle, *, grade_pct=0.0, wind_kmh=0.0):
    """Top speed [km/h], its limit and gear, and the per-gear table.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block (and drive data there or in the powertrain);
        numeric fields may be (N,) arrays along a vehicle axis (module doc).
    grade_pct : float
        Road grade [%] (rise/run × 100; negative downhill).
    wind_kmh : float
        Head wind [km/h] (negative for a tail wind).

    Returns
    -------
    (top_speed_kmh or None, limit, gear or None, tuple of GearTopSpeed)
        With a vehicle axis: (N,) arrays (speed and gear NaN where the vehicle
        cannot move, limits as str).
    """
    m = _model(vehicle)
    theta, wind = _conditions(grade_pct, wind_kmh)
    return _top_speed(m, theta, wind)


def acceleration_time_s(vehicle, from_kmh, to_kmh, *, grade_pct=0.0, wind_kmh=0.0):
    """Time [s] to accelerate from ``from_kmh`` to ``to_kmh`` [km/h] at full load.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block; numeric fields may be (N,) arrays.
    from_kmh, to_kmh : float
        Start and end speed [km/h].
    grade_pct : float
        Road grade [%].
    wind_kmh : float
        Head wind [km/h].

    Returns
    -------
    (time_s or None, number of gear changes or None)
        None when the vehicle cannot reach ``to_kmh`` (or the governor stops
        it first). With a vehicle axis: two (N,) float arrays, NaN there.
    """
    m = _model(vehicle)
    theta, wind = _conditions(grade_pct, wind_kmh)
    t, shifts = _accel(m, from_kmh, to_kmh, theta, wind)
    return _out(m, t), _out(m, shifts, True)


def gradeability_pct(vehicle, speed_kmh, *, wind_kmh=0.0):
    """Steepest grade [%] the vehicle holds at ``speed_kmh`` [km/h] in its best gear.

    Negative when it cannot hold the speed even on a level road; None (NaN
    with a vehicle axis) when it cannot hold it even on a 100 % descent.
    ``speed_kmh`` may be an (N,) array with a vehicle axis.
    """
    m = _model(vehicle)
    _, wind = _conditions(0.0, wind_kmh)
    speed = _per_vehicle(m, speed_kmh, "speed_kmh")
    return _out(m, _gradeability(m, speed * KMH_MS, wind))


def performance_summary(vehicle, *, grade_pct=0.0, wind_kmh=0.0,
                        gradeability_speed_kmh=None) -> PerformanceResult:
    """Top speed (per gear, with the binding limit), 0-100 and 80-120 km/h times,
    and gradeability, at a grade and a head or tail wind.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block. Its numeric fields may be (N,) arrays
        along a vehicle axis (see the module doc); the result then carries
        (N,) arrays, computed for all vehicles at once.
    grade_pct : float
        Road grade [%] (negative downhill).
    wind_kmh : float
        Head wind [km/h] (negative: tail wind).
    gradeability_speed_kmh : float, optional
        Speed for the gradeability figure [km/h] (default: the block's
        ``gradeability_speed_kmh``).
    """
    m = _model(vehicle)
    theta, wind = _conditions(grade_pct, wind_kmh)
    v_top, limit, gear, gears = _top_speed(m, theta, wind)
    t100, n100 = _accel(m, 0.0, 100.0, theta, wind)
    t80, _ = _accel(m, 80.0, 120.0, theta, wind)
    gs = m.grade_speed_kmh if gradeability_speed_kmh is None else _per_vehicle(
        m, gradeability_speed_kmh, "gradeability_speed_kmh")
    grade = _gradeability(m, gs * KMH_MS, wind)
    peak = _peak_wheel_power_w(m) / 1000.0
    zero = np.zeros((m.n, 1))
    road0 = m.road_load_n(zero, theta, wind)
    launch = (m.traction_limit_n(zero, theta, wind, road0)
              < m.drive_force_n(zero, m.overall()[0], True))[:, 0]
    gs_out = np.array(gs[:, 0]) if m.batch else float(gs[0, 0])
    return PerformanceResult(vehicle.name, v_top, limit, gear, _out(m, t100), _out(m, t80),
                             gears, _out(m, grade), gs_out, float(grade_pct), float(wind_kmh),
                             _out(m, peak), _out(m, launch), _out(m, n100, True))


__all__ = ["PerformanceSpec", "PerformanceResult", "GearTopSpeed", "parse_performance",
           "performance_summary", "top_speed", "acceleration_time_s", "gradeability_pct",
           "SEARCH_LIMIT_MS", "TOP_SPEED_INTERVALS", "ACCEL_STEP_KMH"]
