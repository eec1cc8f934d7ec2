"""Performance: top speed, acceleration times and gradeability.

Wheel force available in gear g at speed v [m/s]:

* engine: F = T_fl(ω)·i_g·i_fd·η / r with ω = v·i_g·i_fd / r between the
  lowest speed of the full-load curve and the rev limit; in first gear below
  the launch speed the clutch slips and the engine holds the launch speed
  (F = T_fl(ω_launch)·i_1·i_fd·η / r);
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
  meets the road load, found on a grid and refined by bisection; the binding
  limit is ``power`` (force curve meets road load), ``traction``,
  ``rev_limit`` (engine), ``motor_speed_limit``, or ``governor`` (a set speed
  limit below the others).
* Acceleration time: the forward integration of m_inertial·dv/dt = F(v) − R(v)
  in the best gear, written as t = ∫ m_inertial / (F − R) dv over speed
  (trapezoidal rule on 20 000 intervals). Each gear change costs the shift
  time, during which the drive is open: the vehicle slows by
  Δv = R·t_shift / m_inertial and must regain Δv in the new gear.
* Gradeability at a speed: the largest grade tan θ at which the best gear
  still meets the road load (bisection in θ).

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
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .powertrain.drive import (RPM_RADS, FullLoadCurve, Gearing, MotorEnvelope, parse_full_load,
                               parse_gear_ratios, parse_motor)
from .roadload import PhysicalRoadLoad
from .spec import Section
from .units import KMH_MS, STANDARD_GRAVITY_MS2

#: top-speed search ends here when nothing else limits the speed [m/s]
SEARCH_LIMIT_MS = 1000.0
#: default speed for the gradeability figure [km/h]
DEFAULT_GRADEABILITY_SPEED_KMH = 10.0
_BISECTIONS = 80
_ACCEL_INTERVALS = 20000


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
    """Read a ``performance`` block (keys documented in the README)."""
    share = sec.number("driven_axle_load_share", min=0.0, min_inclusive=False, max=1.0)
    mu = sec.number("tyre_road_friction", min=0.05, max=3.0)
    axle = sec.string("driven_axle", required=False, choices=("front", "rear", "all"))
    h = sec.number("cg_height_m", required=False, min=0.05, max=3.0, unit="m")
    wb = sec.number("wheelbase_m", required=False, min=0.5, max=10.0, unit="m")
    if (h is None) != (wb is None):
        missing = "wheelbase_m" if wb is None else "cg_height_m"
        raise sec.error("load transfer needs both cg_height_m and wheelbase_m", missing)
    if h is not None and axle is None:
        raise sec.error("missing required key with cg_height_m (front, rear or all)",
                        "driven_axle")
    df_share = sec.number("downforce_driven_share", required=False, min=0.0, max=1.0)
    shift = sec.number("shift_time_s", required=False, min=0.0, max=5.0, unit="s")
    gov = sec.number("governor_kmh", required=False, min=0.0, min_inclusive=False, max=600.0,
                     unit="km/h")
    gspeed = sec.number("gradeability_speed_kmh", required=False,
                        default=DEFAULT_GRADEABILITY_SPEED_KMH, min=0.0, max=300.0,
                        unit="km/h")
    launch = sec.number("launch_speed_rpm", required=False, min=100.0, max=25000.0,
                        unit="rpm")
    src = sec.only_one_of(("full_load",), ("motor",), what="drive source")
    full_load = parse_full_load(sec.section("full_load")) if src == 0 else None
    motor = parse_motor(sec.section("motor")) if src == 1 else None
    ratios = parse_gear_ratios(sec) if sec.has("gear_ratios") else None
    final = sec.number("final_drive_ratio", required=False, min=0.0, min_inclusive=False,
                       max=20.0)
    radius = sec.number("tyre_radius_m", required=False, min=0.1, max=1.5, unit="m")
    eff = sec.number("driveline_efficiency", required=False, min=0.5, max=1.0)
    rev = sec.number("rev_limit_rpm", required=False, min=500.0, max=100000.0, unit="rpm")
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


# ---------------------------------------------------------------------------
# resolved model
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class _Model:
    gearing: Gearing
    full_load: FullLoadCurve | None
    motor: MotorEnvelope | None
    max_speed_rads: float
    min_speed_rads: float
    launch_rads: float
    limit_name: str
    spec: PerformanceSpec
    mass_kg: float
    inertial_mass_kg: float
    f0: float
    f1: float
    f2_aero: float
    f2_rolling: float
    downforce_per_v2: float          # ½ρ·ClA [N/(m/s)²]

    # -- forces ---------------------------------------------------------------
    def drive_force_n(self, speed_ms, ratio, first):
        """Wheel force from the engine or motor [N] (no traction limit)."""
        v = np.asarray(speed_ms, float)
        w = v * ratio / self.gearing.tyre_radius_m
        k = ratio * self.gearing.efficiency / self.gearing.tyre_radius_m
        if self.motor is not None:
            return self.motor.max_torque_nm(w) * k
        fl = self.full_load
        inside = (w >= self.min_speed_rads * (1 - 1e-12)) & (w <= self.max_speed_rads * (1 + 1e-12))
        t = np.where(inside, fl.max_torque_nm(np.minimum(w, fl.max_speed_rads)), 0.0)
        t_launch = float(fl.max_torque_nm(self.launch_rads))
        slip = first & (w < self.launch_rads)
        t = np.where(slip, np.maximum(t, t_launch), t)
        return t * k

    def road_load_n(self, speed_ms, theta, wind_ms):
        """Road load [N] at grade angle θ [rad] and head wind [m/s] (see module doc)."""
        v = np.asarray(speed_ms, float)
        va = v + wind_ms
        return (np.cos(theta) * (self.f0 + self.f1 * v) + self.f2_rolling * va * va
                + self.f2_aero * va * np.abs(va)
                + self.mass_kg * STANDARD_GRAVITY_MS2 * np.sin(theta))

    def traction_limit_n(self, speed_ms, theta, wind_ms, road_n):
        """Largest force the driven tyres transmit [N] (closed form, see module doc)."""
        sp = self.spec
        mu = sp.tyre_road_friction
        va = np.asarray(speed_ms, float) + wind_ms
        df_share = sp.driven_axle_load_share if sp.downforce_driven_share is None \
            else sp.downforce_driven_share
        static = (sp.driven_axle_load_share * self.mass_kg * STANDARD_GRAVITY_MS2 * np.cos(theta)
                  + df_share * self.downforce_per_v2 * va * va)
        if sp.cg_height_m is None or sp.driven_axle == "all":
            return mu * static
        sigma = 1.0 if sp.driven_axle == "rear" else -1.0
        hl = sp.cg_height_m / sp.wheelbase_m
        kk = self.mass_kg / self.inertial_mass_kg
        weight_sin = self.mass_kg * STANDARD_GRAVITY_MS2 * np.sin(theta)
        num = mu * (static + sigma * hl * (weight_sin - kk * road_n))
        den = 1.0 - mu * sigma * hl * kk
        return np.maximum(num / den, 0.0)

    def available(self, speed_ms, theta, wind_ms):
        """(drive force, traction limit, road load) with a leading gear axis (G, ...)."""
        v = np.asarray(speed_ms, float)
        g = self.gearing.n_gears
        ratios = self.gearing.overall_ratios.reshape((g,) + (1,) * v.ndim)
        first = (np.arange(g) == 0).reshape((g,) + (1,) * v.ndim)
        drive = self.drive_force_n(v, ratios, first)
        road = self.road_load_n(v, theta, wind_ms)
        trac = self.traction_limit_n(v, theta, wind_ms, road)
        return drive, np.broadcast_to(trac, drive.shape), road

    def gear_speed_span_ms(self):
        """Lowest and highest speed [m/s] of each gear (G,), (G,)."""
        ratios = self.gearing.overall_ratios
        r = self.gearing.tyre_radius_m
        hi = np.minimum(self.max_speed_rads * r / ratios, SEARCH_LIMIT_MS)
        lo = self.min_speed_rads * r / ratios
        lo[0] = 0.0
        return lo, hi


def _model(vehicle) -> _Model:
    spec = vehicle.performance
    src = vehicle.source or None
    if spec is None:
        raise InputError("the vehicle has no performance block; give at least "
                         "driven_axle_load_share and tyre_road_friction", file=src,
                         field="performance")

    def err(msg, key=None):
        field = "performance" if key is None else f"performance.{key}"
        return InputError(msg, file=spec.file or src, field=field, line=spec.line)

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
    # gearing: performance values override the powertrain's
    base = None
    if pt is not None:
        base = pt.gearing() if pt.kind == "electric" else pt.gearing
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
    gearing = Gearing(tuple(ratios), float(final), float(radius), float(eff))
    if gearing.n_gears > 1 and spec.shift_time_s is None:
        raise err("missing required key with more than one gear", "shift_time_s")
    if motor is not None:
        max_w = motor.max_speed_rads
        min_w = 0.0
        launch = 0.0
        limit = "motor_speed_limit"
    else:
        rev = spec.rev_limit_rpm
        if rev is None and pt is not None and pt.kind == "combustion" and \
                full_load is pt.full_load:
            rev = pt.rev_limit_rpm
        if rev is None:
            rev = float(full_load.speed_rpm[-1])
        if rev > full_load.speed_rpm[-1] + 1e-9:
            raise err(f"rev limit {rev:g} rpm is above the last full-load speed "
                      f"{full_load.speed_rpm[-1]:g} rpm", "rev_limit_rpm")
        max_w = rev * RPM_RADS
        min_w = full_load.min_speed_rads
        if spec.launch_speed_rpm is not None:
            launch_rpm = spec.launch_speed_rpm
            if not (full_load.speed_rpm[0] <= launch_rpm <= rev):
                raise err(f"must lie within the full-load curve ({full_load.speed_rpm[0]:g} "
                          f"to {rev:g} rpm)", "launch_speed_rpm")
        else:
            launch_rpm = full_load.peak_torque()[1]
        launch = launch_rpm * RPM_RADS
        limit = "rev_limit"
    rl = vehicle.resistance()
    f0, f1 = float(np.asarray(rl.f0_n)), float(np.asarray(rl.f1_n_per_ms))
    f2a, f2r = float(np.asarray(rl.f2_aero_n_per_ms2)), float(np.asarray(rl.f2_rolling_n_per_ms2))
    df = 0.0
    if isinstance(vehicle.road_load, PhysicalRoadLoad):
        df = 0.5 * vehicle.road_load.air_density_kg_m3 * vehicle.road_load.cla_m2
    return _Model(gearing, full_load, motor, max_w, min_w, launch, limit, spec,
                  float(vehicle.mass_kg), float(vehicle.inertial_mass_kg), f0, f1, f2a, f2r, df)


# ---------------------------------------------------------------------------
# results
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class GearTopSpeed:
    """Top speed in one gear."""

    gear: int
    ratio: float
    overall_ratio: float
    top_speed_kmh: float | None
    limit: str
    max_speed_kmh: float | None

    def to_dict(self) -> dict:
        return {"gear": self.gear, "ratio": self.ratio, "overall_ratio": self.overall_ratio,
                "top_speed_kmh": self.top_speed_kmh, "top_speed_limit": self.limit,
                "speed_at_limit_kmh": self.max_speed_kmh}


@dataclass(frozen=True)
class PerformanceResult:
    """Top speed, acceleration and gradeability of a vehicle.

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
    """

    vehicle: str
    top_speed_kmh: float | None
    top_speed_limit: str
    top_speed_gear: int | None
    accel_0_100_kmh_s: float | None
    accel_80_120_kmh_s: float | None
    gears: tuple
    gradeability_pct: float | None
    gradeability_speed_kmh: float
    grade_pct: float
    wind_kmh: float
    peak_wheel_power_kw: float
    launch_traction_limited: bool
    shifts_0_100: int | None = None

    def to_dict(self) -> dict:
        return {"vehicle": self.vehicle, "grade_pct": self.grade_pct,
                "wind_kmh": self.wind_kmh, "top_speed_kmh": self.top_speed_kmh,
                "top_speed_limit": self.top_speed_limit, "top_speed_gear": self.top_speed_gear,
                "accel_0_100_kmh_s": self.accel_0_100_kmh_s,
                "accel_80_120_kmh_s": self.accel_80_120_kmh_s,
                "shifts_0_100": self.shifts_0_100,
                "gradeability_pct": self.gradeability_pct,
                "gradeability_speed_kmh": self.gradeability_speed_kmh,
                "peak_wheel_power_kw": self.peak_wheel_power_kw,
                "launch_traction_limited": self.launch_traction_limited,
                "gears": [g.to_dict() for g in self.gears]}


# ---------------------------------------------------------------------------
# calculations
# ---------------------------------------------------------------------------

def _conditions(grade_pct, wind_kmh):
    for name, val in (("grade_pct", grade_pct), ("wind_kmh", wind_kmh)):
        if not np.isfinite(val):
            raise InputError("must be a finite number", field=name)
    if abs(grade_pct) > 200:
        raise InputError(f"must be within ±200 %, got {grade_pct:g}", field="grade_pct")
    return math.atan(grade_pct / 100.0), wind_kmh * KMH_MS


def _gear_top_speeds(m: _Model, theta, wind):
    """Top speed [m/s] (NaN if none) and limit per gear, vectorized over gears."""
    lo, hi = m.gear_speed_span_ms()
    g = m.gearing.n_gears
    frac = np.linspace(0.0, 1.0, 4001)
    v = lo[:, None] + (hi - lo)[:, None] * frac[None, :]          # (G, K)
    ratios = m.gearing.overall_ratios[:, None]
    first = (np.arange(g) == 0)[:, None]

    def excess(speed):
        drive = m.drive_force_n(speed, ratios, first)
        road = m.road_load_n(speed, theta, wind)
        trac = m.traction_limit_n(speed, theta, wind, road)
        return np.minimum(drive, trac) - road, drive, trac

    e, _, _ = excess(v)
    ok = e >= 0
    any_ok = ok.any(axis=1)
    last = np.where(any_ok, ok.shape[1] - 1 - np.argmax(ok[:, ::-1], axis=1), 0)
    at_top = any_ok & (last == ok.shape[1] - 1)
    k = np.minimum(last, ok.shape[1] - 2)
    a = v[np.arange(g), k]
    b = v[np.arange(g), k + 1]
    for _ in range(_BISECTIONS):          # bisection: iterations, not time steps
        mid = 0.5 * (a + b)
        em, _, _ = excess(mid[:, None])
        good = em[:, 0] >= 0
        a = np.where(good, mid, a)
        b = np.where(good, b, mid)
    top = np.where(at_top, hi, a)
    top = np.where(any_ok, top, np.nan)
    _, drive, trac = excess(top[:, None])
    limits = []
    for i in range(g):                    # labels for G gears
        if not any_ok[i]:
            limits.append("cannot_move")
        elif at_top[i]:
            limits.append("search_limit" if hi[i] >= SEARCH_LIMIT_MS else m.limit_name)
        elif trac[i, 0] < drive[i, 0]:
            limits.append("traction")
        else:
            limits.append("power")
    return top, limits, hi


def top_speed(vehicle, *, grade_pct=0.0, wind_kmh=0.0):
    """Top speed [km/h], its limit and gear, and the per-gear table.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block (and drive data there or in the powertrain).
    grade_pct : float
        Road grade [%] (rise/run × 100; negative downhill).
    wind_kmh : float
        Head wind [km/h] (negative for a tail wind).

    Returns
    -------
    (top_speed_kmh or None, limit, gear or None, tuple of GearTopSpeed)
    """
    m = _model(vehicle)
    theta, wind = _conditions(grade_pct, wind_kmh)
    return _top_speed(m, theta, wind)


def _top_speed(m: _Model, theta, wind):
    top, limits, hi = _gear_top_speeds(m, theta, wind)
    gears = tuple(GearTopSpeed(i + 1, m.gearing.gear_ratios[i], float(m.gearing.overall_ratios[i]),
                               None if np.isnan(top[i]) else float(top[i] / KMH_MS), limits[i],
                               None if hi[i] >= SEARCH_LIMIT_MS else float(hi[i] / KMH_MS))
                  for i in range(m.gearing.n_gears))
    if np.all(np.isnan(top)):
        return None, "cannot_move", None, gears
    best = int(np.nanargmax(top))
    v_kmh = float(top[best] / KMH_MS)
    limit = limits[best]
    gov = m.spec.governor_kmh
    if gov is not None and gov < v_kmh:
        v_kmh, limit = float(gov), "governor"
    return v_kmh, limit, best + 1, gears


def _best_force(m: _Model, v, theta, wind):
    drive, trac, road = m.available(v, theta, wind)
    f = np.minimum(drive, trac)
    gear = np.argmax(f, axis=0)
    return np.take_along_axis(f, gear[None], axis=0)[0], gear, road


def acceleration_time_s(vehicle, from_kmh, to_kmh, *, grade_pct=0.0, wind_kmh=0.0):
    """Time [s] to accelerate from ``from_kmh`` to ``to_kmh`` [km/h] at full load.

    Returns ``(time_s or None, number of gear changes)``; None when the
    vehicle cannot reach ``to_kmh`` (or the governor stops it first).
    """
    m = _model(vehicle)
    theta, wind = _conditions(grade_pct, wind_kmh)
    return _accel(m, from_kmh, to_kmh, theta, wind)


def _accel(m: _Model, from_kmh, to_kmh, theta, wind):
    if not (0 <= from_kmh < to_kmh):
        raise InputError("needs 0 ≤ start speed < end speed", field="speeds")
    if m.spec.governor_kmh is not None and to_kmh > m.spec.governor_kmh:
        return None, None
    v = np.linspace(from_kmh * KMH_MS, to_kmh * KMH_MS, _ACCEL_INTERVALS + 1)
    f, gear, road = _best_force(m, v, theta, wind)
    net = f - road
    if np.any(net <= 0):
        return None, None
    inv = m.inertial_mass_kg / net
    t = float(np.sum(0.5 * (inv[1:] + inv[:-1]) * np.diff(v)))
    shifts = np.flatnonzero(gear[1:] != gear[:-1]) + 1
    t_shift = m.spec.shift_time_s or 0.0
    if shifts.size and t_shift > 0:
        # drive open for t_shift: speed lost, then regained in the new gear
        dv = road[shifts] * t_shift / m.inertial_mass_kg
        t += float(np.sum(t_shift + dv * m.inertial_mass_kg / net[shifts]))
    return t, int(shifts.size)


def gradeability_pct(vehicle, speed_kmh, *, wind_kmh=0.0):
    """Steepest grade [%] the vehicle holds at ``speed_kmh`` [km/h] in its best gear.

    Negative when it cannot hold the speed even on a level road.
    """
    m = _model(vehicle)
    _, wind = _conditions(0.0, wind_kmh)
    return _gradeability(m, speed_kmh * KMH_MS, wind)


def _gradeability(m: _Model, v_ms, wind):
    lo, hi = -math.pi / 4, math.atan(3.0)
    v = np.array([v_ms])

    def excess(theta):
        f, _, road = _best_force(m, v, theta, wind)
        return float(f[0] - road[0])

    if excess(lo) < 0:
        return None
    if excess(hi) >= 0:
        return 300.0
    a, b = lo, hi
    for _ in range(_BISECTIONS):          # bisection iterations
        mid = 0.5 * (a + b)
        if excess(mid) >= 0:
            a = mid
        else:
            b = mid
    return 100.0 * math.tan(a)


def performance_summary(vehicle, *, grade_pct=0.0, wind_kmh=0.0,
                        gradeability_speed_kmh=None) -> PerformanceResult:
    """Top speed (per gear, with the binding limit), 0-100 and 80-120 km/h times,
    and gradeability, at a grade and a head or tail wind.

    Parameters
    ----------
    vehicle : Vehicle
        With a ``performance`` block.
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
    gs = m.spec.gradeability_speed_kmh if gradeability_speed_kmh is None \
        else float(gradeability_speed_kmh)
    grade = _gradeability(m, gs * KMH_MS, wind)
    # peak wheel power over the whole speed range
    vmax = min(float(np.max(m.gear_speed_span_ms()[1])), SEARCH_LIMIT_MS)
    vv = np.linspace(0.0, vmax, 4001)
    drive, trac, road = m.available(vv, theta, wind)
    peak = float(np.max(drive * vv) / 1000.0)
    launch = bool(trac[0, 0] < drive[0, 0])
    return PerformanceResult(vehicle.name, v_top, limit, gear, t100, t80, gears, grade, gs,
                             float(grade_pct), float(wind_kmh), peak, launch, n100)


__all__ = ["PerformanceSpec", "PerformanceResult", "GearTopSpeed", "parse_performance",
           "performance_summary", "top_speed", "acceleration_time_s", "gradeability_pct"]
