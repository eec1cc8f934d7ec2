"""Combustion powertrain: from wheel power to fuel, CO2 and tank range.

For every interval of a profile (wheel force F [N] at mean speed v [m/s]) and
for every gear g at once (a leading gear axis), the engine speed is
ω_g = v·i_g·i_fd / r. The engine's brake torque is the wheel side plus the
accessories, which take P_acc [W] from the crankshaft whenever the engine runs:

* pulling (F > 0): T_g = F·r / (i_g·i_fd·η_t) + P_acc/ω. In first gear below
  the lowest pulling speed the clutch slips: the engine holds that speed and
  passes the same torque (a launch). A higher gear below it lugs the engine;
* overrun (F ≤ 0, clutch engaged): the vehicle drives the engine,
  T_g = F·r·η_t / (i_g·i_fd) + P_acc/ω;
* clutch open (standstill, or not pulling below idle speed): idle speed,
  torque P_acc/ω_idle.

The gear used is chosen by the shift rule:

* ``speeds``: upshift at fixed vehicle speeds (gear = number of upshift
  speeds at or below v, plus one); while pulling, a gear that would lug the
  engine is replaced by the highest gear that does not (first gear slipping
  when none does);
* ``efficient``: the gear with the lowest fuel rate among those that keep the
  engine at or above the lowest pulling speed while pulling (idle otherwise),
  below the rev limit and (with a full-load curve) can deliver the torque;
  when no gear can, the gear that comes closest.

Fuel rate, two engine models:

* **Willans line**: the brake mean effective pressure is a linear function of
  the fuel mean effective pressure, p_me = e·p_mf − p_me0; in power form
  P_e = e·ṁ_f·H_l − P_0 with P_0 = p_me0·V_d·ω/(4π) for a four-stroke engine
  (or a constant friction power), so ṁ_f = (P_e + P_0) / (e·H_l), zero for
  P_e ≤ −P_0 (the engine motored).
* **BSFC map**: brake-specific fuel consumption b [g/kWh] over engine speed
  and torque, turned into a fuel-rate table ṁ = b·T·ω on the map's grid and
  interpolated bilinearly (fuel rate, unlike b, stays finite and nearly linear
  in torque). Below the lowest mapped torque the fuel rate is extended
  linearly in torque (the Willans line at that speed, from the two lowest
  rows) to zero torque and on below it, clipped at zero fuel; above the
  highest torque the top row's b is used.

Overrun with fuel cut-off: the engine model at the (negative) overrun torque,
so no fuel where the braking power at the crankshaft covers friction and
accessories, and the Willans-line fuel where it does not; without cut-off at
least the zero-load rate with the accessories, ṁ(ω, P_acc/ω). Clutch open:
the idle fuel rate (a given idle rate plus the accessories' cost at idle from
the engine model), or nothing at standstill with ``engine_off_at_rest`` (the
engine then charges the standstill accessory energy back while it runs).

References
----------
.. [1] L. Guzzella, A. Sciarretta, *Vehicle Propulsion Systems*, 3rd ed.,
   Springer 2013, §3.2 (quasi-static IC engine models; the Willans
   approximation p_me = e·p_mf − p_me0) and ch. 2 (backward simulation).
.. [2] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill
   1988, §2.7 (mean effective pressure: P = p_me·V_d·N / n_R, n_R = 2 for a
   four-stroke engine) and §2.9 (specific fuel consumption).
.. [3] 40 CFR 600.210-12 and UK / US gallon definitions (NIST SP 811;
   Weights and Measures Act 1985) for mpg.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..metrics import l_per_100km_to_mpg
from ..plain import plain_number
from ..spec import Section
from ..units import KWH_J, UK_GALLON_L, US_GALLON_L, kmh_to_ms, ms_to_kmh
from ._common import STANDSTILL_MS, col, range_from, safe_divide, sustained_seconds
from .base import ParamField
from .drive import (RPM_RADS, FullLoadCurve, Gearing, parse_full_load, parse_gear_ratios,
                    rads_to_rpm)
from .fuels import Fuel, get_fuel
from .maps import SpeedTorqueMap, bilinear, parse_speed_torque_map

#: default lowest engine speed while pulling in gear, as a multiple of idle speed [-]
#: (common practice: drivers and shift programs keep clear of lugging)
MIN_PULLING_SPEED_IDLE_FACTOR = 1.5
#: default accessory power at the crankshaft [W] (common practice: about 0.25 kW of
#: electrical load through an alternator of about 60 % efficiency, no air conditioning)
DEFAULT_ACCESSORY_POWER_W = 400.0


# ---------------------------------------------------------------------------
# engine models
# ---------------------------------------------------------------------------

def willans_friction_power_w(friction_mep_pa, displacement_m3, speed_rads):
    """Friction (loss) power of a four-stroke engine [W] = p_me0·V_d·ω/(4π) [2].

    Parameters
    ----------
    friction_mep_pa : float or array
        Friction mean effective pressure p_me0 [Pa].
    displacement_m3 : float or array
        Swept volume V_d [m³].
    speed_rads : array
        Engine speed ω [rad/s].
    """
    return (np.asarray(friction_mep_pa, float) * np.asarray(displacement_m3, float)
            * np.asarray(speed_rads, float) / (4.0 * math.pi))


def willans_fuel_rate_kg_s(power_w, friction_power_w, marginal_efficiency, lhv_j_per_kg):
    """Fuel mass rate on the Willans line [kg/s] = (P_e + P_0) / (e·H_l) [1].

    Parameters
    ----------
    power_w : array
        Brake power P_e [W] (≥ −P_0; clipped at zero fuel below).
    friction_power_w : array
        Loss power P_0 [W].
    marginal_efficiency : float or array
        Slope e of brake power over fuel power [-].
    lhv_j_per_kg : float
        Lower heating value H_l [J/kg].
    """
    fuel_power = (np.asarray(power_w, float) + np.asarray(friction_power_w, float)) / \
        np.asarray(marginal_efficiency, float)
    return np.maximum(fuel_power, 0.0) / lhv_j_per_kg


@dataclass(frozen=True)
class WillansEngine:
    """Willans-line engine (see :func:`willans_fuel_rate_kg_s`).

    Attributes
    ----------
    marginal_efficiency : float
        e [-].
    lhv_j_per_kg : float
        Lower heating value of the fuel [J/kg].
    friction_mep_pa, displacement_m3 : float or None
        p_me0 [Pa] and V_d [m³] (friction power grows with speed).
    friction_power_w : float or None
        Constant loss power P_0 [W] instead.
    """

    marginal_efficiency: object
    lhv_j_per_kg: float
    friction_mep_pa: object = None
    displacement_m3: float | None = None
    friction_power_w: object = None

    model = "willans"

    def friction_power(self, speed_rads):
        if self.friction_power_w is not None:
            return col(self.friction_power_w) * np.ones_like(np.asarray(speed_rads, float))
        return willans_friction_power_w(col(self.friction_mep_pa), self.displacement_m3,
                                        speed_rads)

    def fuel_rate_kg_s(self, speed_rads, torque_nm):
        """Fuel rate [kg/s] at engine speed [rad/s] and brake torque [N m].

        A negative torque (the engine motored by the vehicle) follows the same
        line, ṁ = (T·ω + P_0) / (e·H_l), down to zero fuel at T·ω = −P_0.
        """
        w = np.asarray(speed_rads, float)
        p = np.asarray(torque_nm, float) * w
        return willans_fuel_rate_kg_s(p, self.friction_power(w), col(self.marginal_efficiency),
                                      self.lhv_j_per_kg)

    def to_dict(self) -> dict:
        out = {"model": self.model, "marginal_efficiency": plain_number(self.marginal_efficiency)}
        if self.friction_power_w is not None:
            out["friction_power_kw"] = plain_number(np.asarray(self.friction_power_w) / 1000.0)
        else:
            out["friction_mep_kpa"] = plain_number(np.asarray(self.friction_mep_pa) / 1000.0)
            out["displacement_l"] = self.displacement_m3 * 1000.0
        return out


@dataclass(frozen=True)
class BsfcEngine:
    """Engine described by a brake-specific fuel consumption map.

    Attributes
    ----------
    bsfc : SpeedTorqueMap
        b [g/kWh] over speed [rpm] and torque [N m] (as given).
    torque_grid_nm : (K+1,) array
        The map's torques with 0 N m prepended.
    fuel_rate_grid_kg_s : (K+1, S) array
        Fuel rate [kg/s] on that grid (row 0 extended to zero torque).
    """

    bsfc: SpeedTorqueMap
    torque_grid_nm: np.ndarray
    fuel_rate_grid_kg_s: np.ndarray

    model = "bsfc_map"

    @classmethod
    def from_map(cls, bsfc: SpeedTorqueMap) -> "BsfcEngine":
        w = bsfc.speed_rpm * RPM_RADS
        t = bsfc.torque_nm
        rate = bsfc.values * (t[:, None] * w[None, :]) / (KWH_J * 1000.0)  # g/kWh·W → kg/s
        slope = (rate[1] - rate[0]) / (t[1] - t[0])
        zero_row = np.maximum(rate[0] - slope * t[0], 0.0)
        return cls(bsfc, np.concatenate([[0.0], t]), np.vstack([zero_row, rate]))

    def fuel_rate_kg_s(self, speed_rads, torque_nm):
        """Fuel rate [kg/s] at engine speed [rad/s] and brake torque [N m].

        Speeds outside the map are held at its edge; torque above the top row
        uses the top row's specific consumption. Below zero torque (the engine
        motored by the vehicle) the line through the zero-torque row and the
        lowest mapped row is continued, clipped at zero fuel.
        """
        n = rads_to_rpm(speed_rads)
        t = np.asarray(torque_nm, float)
        t_top = self.torque_grid_nm[-1]
        base = bilinear(self.bsfc.speed_rpm, self.torque_grid_nm, self.fuel_rate_grid_kg_s, n,
                        np.clip(t, 0.0, t_top))
        grid = self.fuel_rate_grid_kg_s
        slope = (grid[1] - grid[0]) / self.torque_grid_nm[1]          # kg/s per N m, (S,)
        below = base + np.interp(n, self.bsfc.speed_rpm, slope) * np.minimum(t, 0.0)
        return np.where(t > t_top, base * t / t_top, np.maximum(below, 0.0))

    def to_dict(self) -> dict:
        out = {"model": self.model}
        out.update(self.bsfc.to_dict())
        return out


# ---------------------------------------------------------------------------
# result
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class CombustionResult:
    """Fuel, CO2 and tank range of a combustion vehicle on one profile.

    Values are floats, or arrays of shape (N,) for a vehicle axis. Volume
    results are None for a fuel sold by mass (CNG). ``accessory_energy_kwh``
    is the work the accessories took from the crankshaft [kWh] (accessory
    power × profile duration; with the engine stopped at rest the engine
    charges the standstill share back while it runs).
    """

    profile: str
    fuel: Fuel
    distance_km: float
    duration_s: float
    fuel_kg: object
    idle_fuel_kg: object
    tank_l: float | None
    tank_kg: float | None
    positive_wheel_energy_kwh: object
    engine_limit_exceeded_s: object
    accessory_energy_kwh: object = None

    kind = "combustion"

    @property
    def fuel_l(self):
        if not self.fuel.liquid:
            return None
        return np.asarray(self.fuel_kg) / self.fuel.density_kg_per_l

    @property
    def fuel_l_per_100km(self):
        fl = self.fuel_l
        return None if fl is None else safe_divide(fl * 100.0, self.distance_km)

    @property
    def fuel_kg_per_100km(self):
        return safe_divide(np.asarray(self.fuel_kg) * 100.0, self.distance_km)

    @property
    def mpg_us(self):
        """Miles per US gallon (None for CNG)."""
        fl = self.fuel_l
        if fl is None:
            return None
        return l_per_100km_to_mpg(self.fuel_l_per_100km, US_GALLON_L)

    @property
    def mpg_uk(self):
        """Miles per imperial gallon (None for CNG)."""
        fl = self.fuel_l
        if fl is None:
            return None
        return l_per_100km_to_mpg(self.fuel_l_per_100km, UK_GALLON_L)

    @property
    def co2_kg(self):
        return np.asarray(self.fuel_kg) * self.fuel.co2_kg_per_kg

    @property
    def co2_g_per_km(self):
        return safe_divide(self.co2_kg * 1000.0, self.distance_km)

    @property
    def fuel_energy_mj(self):
        return np.asarray(self.fuel_kg) * self.fuel.lhv_mj_per_kg

    @property
    def tank_to_wheel_efficiency(self):
        """Positive wheel energy / fuel energy (lower heating value) [-]."""
        return safe_divide(np.asarray(self.positive_wheel_energy_kwh) * (KWH_J / 1e6),
                           self.fuel_energy_mj)

    @property
    def store_used(self):
        """Fuel drawn from the tank, in the tank's unit (L, or kg for CNG)."""
        return self.fuel_kg if self.tank_l is None else self.fuel_l

    @property
    def store_size(self):
        return self.tank_kg if self.tank_l is None else self.tank_l

    @property
    def range_km(self):
        """Tank range [km] = tank / fuel per km."""
        return range_from(self.store_size, safe_divide(self.store_used, self.distance_km))

    def to_dict(self) -> dict:
        return {
            "powertrain": self.kind,
            "fuel": self.fuel.name,
            "fuel_l": plain_number(self.fuel_l),
            "fuel_l_per_100km": plain_number(self.fuel_l_per_100km),
            "fuel_kg": plain_number(self.fuel_kg),
            "fuel_kg_per_100km": plain_number(self.fuel_kg_per_100km),
            "fuel_energy_mj": plain_number(self.fuel_energy_mj),
            "idle_fuel_kg": plain_number(self.idle_fuel_kg),
            "mpg_us": plain_number(self.mpg_us),
            "mpg_uk": plain_number(self.mpg_uk),
            "co2_kg": plain_number(self.co2_kg),
            "co2_g_per_km": plain_number(self.co2_g_per_km),
            "range_km": plain_number(self.range_km),
            "tank_to_wheel_efficiency": plain_number(self.tank_to_wheel_efficiency),
            "engine_limit_exceeded_s": plain_number(self.engine_limit_exceeded_s),
            "accessory_energy_kwh": plain_number(self.accessory_energy_kwh),
        }


# ---------------------------------------------------------------------------
# powertrain
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class CombustionPowertrain:
    """A combustion engine with a stepped gearbox (see module docstring).

    Attributes
    ----------
    fuel : Fuel
    engine : WillansEngine or BsfcEngine
    gearing : Gearing
        Ratios, final drive, tyre radius, transmission efficiency.
    idle_speed_rpm : float
        Idle speed [rpm].
    rev_limit_rpm : float
        Highest engine speed [rpm].
    shift_rule : str
        ``"efficient"`` or ``"speeds"``.
    upshift_speeds_ms : tuple
        Upshift speeds [m/s] from gear k to k+1 (``"speeds"`` rule).
    fuel_cutoff : bool
        Fuel cut-off on overrun.
    engine_off_at_rest : bool
        Engine stops at standstill (stop-start).
    idle_fuel_kg_s : float or None
        Idle fuel rate [kg/s] without accessory load; None to take it from the
        engine model at idle speed and zero torque.
    full_load : FullLoadCurve or None
        Full-load torque (gear feasibility, performance).
    tank_l, tank_kg : float or None
        Tank size [L] (liquid fuels) or [kg] (CNG).
    min_pulling_speed_rpm : float, (N,) array or None
        Lowest engine speed while the engine pulls in gear [rpm]; None for
        :data:`MIN_PULLING_SPEED_IDLE_FACTOR` × idle speed.
    accessory_power_w : float or (N,) array
        Mechanical power the accessories take from the crankshaft while the
        engine runs [W].
    """

    fuel: Fuel
    engine: object
    gearing: Gearing
    idle_speed_rpm: float
    rev_limit_rpm: float
    shift_rule: str = "efficient"
    upshift_speeds_ms: tuple = ()
    fuel_cutoff: bool = True
    engine_off_at_rest: bool = False
    idle_fuel_kg_s: float | None = None
    full_load: FullLoadCurve | None = None
    tank_l: float | None = None
    tank_kg: float | None = None
    min_pulling_speed_rpm: object = None
    accessory_power_w: object = DEFAULT_ACCESSORY_POWER_W

    kind = "combustion"

    #: vehicle-file keys a study may change (see :class:`tractive.powertrain.base.ParamField`)
    CHANGEABLE: ClassVar[dict] = {
        "tank_l": ParamField(("tank_l",), "L", min=0.0, min_inclusive=False, max=5000.0),
        "tank_kg": ParamField(("tank_kg",), "kg", min=0.0, min_inclusive=False, max=5000.0),
        "final_drive_ratio": ParamField(("gearing", "final_drive_ratio"), min=0.0,
                                        min_inclusive=False, max=20.0),
        "tyre_radius_m": ParamField(("gearing", "tyre_radius_m"), "m", min=0.1, max=1.5),
        "transmission_efficiency": ParamField(("gearing", "efficiency"), min=0.5, max=1.0,
                                              uncertain=(1e-6, 1.0)),
        "idle_speed_rpm": ParamField(("idle_speed_rpm",), "rpm", min=200.0, max=3000.0),
        "rev_limit_rpm": ParamField(("rev_limit_rpm",), "rpm", min=500.0, max=25000.0),
        "min_pulling_speed_rpm": ParamField(("min_pulling_speed_rpm",), "rpm", min=0.0,
                                            optional=True),
        "accessory_power_kw": ParamField(("accessory_power_w",), "kW", scale=1000.0, min=0.0,
                                         max=50.0),
        "idle_fuel_l_per_h": ParamField(
            ("idle_fuel_kg_s",), "L/h", min=0.0, max=50.0, uncertain=(0.0, math.inf),
            available=lambda pt: pt.fuel.liquid,
            to_model=lambda pt, x: x * pt.fuel.density_kg_per_l / 3600.0,
            from_model=lambda pt, v: v * 3600.0 / pt.fuel.density_kg_per_l),
        "idle_fuel_kg_per_h": ParamField(("idle_fuel_kg_s",), "kg/h", divisor=3600.0, min=0.0,
                                         max=50.0, uncertain=(0.0, math.inf)),
        "willans.marginal_efficiency": ParamField(
            ("engine", "marginal_efficiency"), min=0.05, max=0.7, uncertain=(1e-6, 1.0),
            available=lambda pt: pt.engine.model == "willans"),
        "willans.friction_mep_kpa": ParamField(
            ("engine", "friction_mep_pa"), "kPa", scale=1000.0, min=0.0, max=1000.0,
            uncertain=(0.0, math.inf), available=lambda pt: pt.engine.model == "willans"),
        "willans.friction_power_kw": ParamField(
            ("engine", "friction_power_w"), "kW", scale=1000.0, min=0.0, max=500.0,
            uncertain=(0.0, math.inf), available=lambda pt: pt.engine.model == "willans"),
        "willans.displacement_l": ParamField(
            ("engine", "displacement_m3"), "L", divisor=1000.0, min=0.0, min_inclusive=False,
            max=40.0, available=lambda pt: pt.engine.model == "willans"),
    }

    def check_changed(self):
        """(key, message) of a rule between values that a change breaks, else None
        (the parser's rules between idle speed, rev limit, pulling floor and full load)."""
        idle, rev = self.idle_speed_rpm, self.rev_limit_rpm
        if rev <= idle:
            return ("rev_limit_rpm", f"must be above idle_speed_rpm ({idle:g})")
        if self.full_load is not None and self.full_load.speed_rpm[0] > idle + 1e-9:
            return ("full_load", f"full_load must start at or below idle_speed_rpm ({idle:g} "
                    f"rpm); it starts at {self.full_load.speed_rpm[0]:g} rpm")
        pull = self.min_pulling_speed_rpm
        if pull is not None and np.ndim(pull) == 0:
            if pull < idle:
                return ("min_pulling_speed_rpm", f"must be at least idle_speed_rpm "
                        f"({idle:g} rpm), got {pull:g}")
            if pull >= rev:
                return ("min_pulling_speed_rpm", f"must be below rev_limit_rpm ({rev:g} rpm), "
                        f"got {pull:g}")
        return None

    @property
    def pulling_speed_floor_rpm(self):
        """Lowest engine speed while pulling in gear [rpm] (default resolved)."""
        if self.min_pulling_speed_rpm is not None:
            return np.asarray(self.min_pulling_speed_rpm, float)
        return np.asarray(min(MIN_PULLING_SPEED_IDLE_FACTOR * self.idle_speed_rpm,
                              self.rev_limit_rpm), float)

    def idle_fuel_rate_kg_s(self, accessory_power_w=None):
        """Fuel rate at idle with the clutch open [kg/s], accessories included.

        With a given idle fuel rate the accessories add what the engine model
        says they cost at idle speed, ṁ(ω_idle, P_acc/ω_idle) − ṁ(ω_idle, 0).

        Parameters
        ----------
        accessory_power_w : float or array, optional
            Accessory power [W], already shaped to broadcast with the result
            (``(N, 1)`` per vehicle); default ``self.accessory_power_w``.
        """
        w_idle = self.idle_speed_rpm * RPM_RADS
        p_acc = (col(self.accessory_power_w) if accessory_power_w is None
                 else np.asarray(accessory_power_w, float))
        with_acc = self.engine.fuel_rate_kg_s(w_idle, p_acc / w_idle)
        if self.idle_fuel_kg_s is None:
            return with_acc
        return col(self.idle_fuel_kg_s) + with_acc - self.engine.fuel_rate_kg_s(w_idle, 0.0)

    def operation(self, force_n, speed_ms, *, accessory_scale=1.0) -> dict:
        """Gear, engine speed and torque, and fuel rate per interval.

        With the ``speeds`` shift rule the gear follows from the speed, the
        demand sign and the pulling floor alone, so the engine is evaluated in
        that one gear; the ``efficient`` rule compares the fuel rate of every
        gear, so every gear is evaluated (a leading gear axis).

        Parameters
        ----------
        force_n : array (T,) or (N, T)
            Wheel force [N].
        speed_ms : array (T,)
            Mean speed [m/s].
        accessory_scale : float, optional
            Factor on the accessory power while the engine runs [-] (used to
            recharge, while running, what the accessories drew with the engine
            stopped).

        Returns
        -------
        dict of arrays shaped like the broadcast of the inputs: ``gear``
        (1-based, 0 at standstill), ``engine_speed_rads``, ``engine_torque_nm``
        (brake torque, accessories included), ``fuel_kg_s``, ``idle`` (clutch
        open), ``over_limit`` (demand beyond the engine's full load or rev limit).
        """
        f, v = self._operating_shape(force_n, speed_ms, accessory_scale)
        w_pull_min = col(self.pulling_speed_floor_rpm) * RPM_RADS
        p_acc = col(self.accessory_power_w) * col(accessory_scale)
        moving = v > STANDSTILL_MS
        pulling = moving & (f > 0)
        idle_rate = self.idle_fuel_rate_kg_s(p_acc)
        ratios = self.gearing.overall_ratios
        if self.shift_rule == "speeds":
            # the gear depends on the speed, the floor and the demand sign only: the
            # speed and floor without the vehicle axis of the force give the same gears
            g = self._speed_rule_gear(np.asarray(speed_ms, float), pulling, w_pull_min)
            sel = self._in_gear(f, v, ratios[g], g == 0, pulling, p_acc, idle_rate,
                                w_pull_min)
        else:
            gear_axis = (len(ratios),) + (1,) * f.ndim
            first = (np.arange(len(ratios)) == 0).reshape(gear_axis)
            st = self._in_gear(f, v, ratios.reshape(gear_axis), first, pulling, p_acc,
                               idle_rate, w_pull_min, choose=True)
            # ties (e.g. fuel cut-off in every gear) go to the lowest engine speed
            cost = np.where(st["feasible"], st["fuel"], 1.0e6 + st["penalty"]) \
                + 1e-15 * st["w_eng"]
            g = np.broadcast_to(np.argmin(cost, axis=0), f.shape)
            sel = {k: np.take_along_axis(np.broadcast_to(st[k], st["w_gear"].shape), g[None],
                                         axis=0)[0]
                   for k in ("fuel", "w_eng", "t_eng", "slip_over", "over")}
        w_idle = self.idle_speed_rpm * RPM_RADS
        off = self.engine_off_at_rest
        return {"gear": np.where(moving, g + 1, 0),
                "engine_speed_rads": np.where(moving, sel["w_eng"], 0.0 if off else w_idle),
                "engine_torque_nm": np.where(moving, sel["t_eng"],
                                             0.0 if off else p_acc / w_idle),
                "fuel_kg_s": np.where(moving, sel["fuel"], 0.0 if off else idle_rate),
                "idle": ~moving | (sel["slip_over"] & ~pulling),
                "over_limit": moving & sel["over"]}

    def _operating_shape(self, force_n, speed_ms, accessory_scale):
        """Force [N] and speed [m/s] broadcast together and with per-vehicle parameters."""
        f, v = np.broadcast_arrays(np.asarray(force_n, float), np.asarray(speed_ms, float))
        # parameters given per vehicle (N,) add a vehicle axis even to a plain demand
        params = [self.gearing.efficiency, self.idle_fuel_kg_s, self.min_pulling_speed_rpm,
                  self.accessory_power_w, accessory_scale,
                  getattr(self.engine, "marginal_efficiency", None),
                  getattr(self.engine, "friction_mep_pa", None),
                  getattr(self.engine, "friction_power_w", None)]
        pshape = np.broadcast_shapes(*(np.shape(col(x)) for x in params if x is not None))
        if pshape:
            shape = np.broadcast_shapes(f.shape, pshape)
            f, v = np.broadcast_to(f, shape), np.broadcast_to(v, shape)
        return f, v

    def _speed_rule_gear(self, v, pulling, w_pull_min):
        """0-based gear of the ``speeds`` rule: upshift speeds, and while pulling never
        below the pulling floor (the highest gear that keeps the engine at or above it;
        first gear slips the clutch when none does). ``v`` [m/s] may lack the vehicle
        axis of ``pulling``; the result has the shape of ``pulling``."""
        gr = self.gearing
        g = np.searchsorted(np.asarray(self.upshift_speeds_ms, float), v, side="right")
        g = np.minimum(g, gr.n_gears - 1)
        floor = w_pull_min * (1 - 1e-12)
        n_ok = np.zeros(np.broadcast_shapes(np.shape(v), np.shape(floor)), dtype=np.intp)
        for ratio in gr.overall_ratios:        # a few gears: one comparison each
            n_ok += v * ratio / gr.tyre_radius_m >= floor
        return np.where(pulling, np.minimum(g, np.maximum(n_ok - 1, 0)), g)

    def _in_gear(self, f, v, ratio, first, pulling, p_acc, idle_rate, w_pull_min, *,
                 choose=False) -> dict:
        """Engine state in gear(s) of overall ratio ``ratio`` (a gear axis or one per step).

        Returns ``w_gear`` (engine speed the gear gives) [rad/s], ``w_eng``
        [rad/s] and ``t_eng`` [N m] (clutch slip and idle applied), ``fuel``
        [kg/s], ``slip_over`` (clutch open, not pulling), ``over`` (beyond the
        rev limit or full load); with ``choose`` also ``feasible`` and
        ``penalty`` for the ``efficient`` rule.
        """
        gr = self.gearing
        eta = col(gr.efficiency)
        r = gr.tyre_radius_m
        w_gear = v * ratio / r
        w_idle = self.idle_speed_rpm * RPM_RADS
        w_max = self.rev_limit_rpm * RPM_RADS
        # pulling: first gear slips the clutch below the lowest pulling speed (the engine
        # holds that speed); a higher gear below it lugs (not feasible) and slips only
        # below idle. Not pulling: the clutch opens below idle and the engine idles.
        w_pull = np.where(first, np.maximum(w_gear, w_pull_min), np.maximum(w_gear, w_idle))
        w_over = np.maximum(w_gear, w_idle)
        slip_over = w_gear < w_idle
        w_eng = np.where(pulling, w_pull, w_over)
        t_wheel = f * r / ratio
        t_acc_over = p_acc / w_over
        t_pull = np.maximum(t_wheel, 0.0) / eta + p_acc / w_pull
        t_over = np.minimum(t_wheel, 0.0) * eta + t_acc_over   # motored: wheel power × η
        # overrun in gear: with cut-off, fuel only where the overrun power does not cover
        # friction and accessories (the engine line continued below zero torque, clipped at
        # zero); without cut-off at least the zero-load rate with the accessories
        t_fuel = np.where(pulling, t_pull, t_over if self.fuel_cutoff else t_acc_over)
        fuel = np.where(~pulling & slip_over, idle_rate, self.engine.fuel_rate_kg_s(w_eng, t_fuel))
        t_idle = p_acc / w_idle                           # clutch open: accessories only
        t_eng = np.where(pulling, t_pull, np.where(slip_over, t_idle, t_over))
        rev_ok = w_gear <= w_max * (1 + 1e-12)
        torque_ok = True
        if self.full_load is not None:
            t_max = self.full_load.max_torque_nm(w_eng)
            torque_ok = ~pulling | (t_pull <= t_max * (1 + 1e-9))
        out = {"w_gear": w_gear, "w_eng": w_eng, "t_eng": t_eng, "fuel": fuel,
               "slip_over": slip_over, "over": ~(rev_ok & torque_ok)}
        if choose:
            excess = 0.0
            if self.full_load is not None:
                excess = np.where(pulling, np.maximum(t_pull / np.maximum(t_max, 1e-9) - 1,
                                                      0.0), 0.0)
            # lowest engine speed in gear: the pulling floor while pulling, idle otherwise
            w_floor = np.where(pulling, w_pull_min, w_idle)
            low_ok = first | (w_gear >= w_floor * (1 - 1e-12))
            out["feasible"] = rev_ok & low_ok & torque_ok
            out["penalty"] = (np.maximum(w_gear / w_max - 1.0, 0.0)
                              + np.where(first, 0.0, np.maximum(1.0 - w_gear / w_floor, 0.0))
                              + excess)
        return out

    def consume(self, vehicle, demand, profile=None, *, ambient_temperature_c=None
                ) -> CombustionResult:
        """Fuel, CO2 and tank range on one profile (demand of shape (T-1,) or (N, T-1)).

        ``ambient_temperature_c`` [°C] is accepted for the common
        :class:`~tractive.powertrain.base.Powertrain` interface; this model has no
        temperature-dependent load and ignores it.
        """
        iv = demand.intervals
        dt = np.asarray(iv.dt_s, float)
        duration = float(np.sum(dt))
        running_s = duration
        if self.engine_off_at_rest:
            # with the engine stopped the accessories run from the battery; the engine
            # charges that energy back while it runs (charging losses not modelled)
            running_s = float(np.sum(np.where(np.asarray(iv.speed_ms) > STANDSTILL_MS, dt,
                                              0.0)))
        scale = duration / running_s if running_s > 0 else 1.0
        op = self.operation(demand.force_n, iv.speed_ms, accessory_scale=scale)
        fuel_kg = np.sum(op["fuel_kg_s"] * dt, axis=-1)
        acc_kwh = np.asarray(self.accessory_power_w, float) * (
            duration if running_s > 0 else 0.0) / KWH_J
        idle_kg = np.sum(np.where(op["idle"], op["fuel_kg_s"], 0.0) * dt, axis=-1)
        over_s = sustained_seconds(op["over_limit"], dt)
        name = getattr(profile, "name", None) or demand.profile
        return CombustionResult(
            profile=name, fuel=self.fuel, distance_km=demand.distance_m / 1000.0,
            duration_s=duration, fuel_kg=fuel_kg, idle_fuel_kg=idle_kg,
            tank_l=self.tank_l, tank_kg=self.tank_kg,
            positive_wheel_energy_kwh=np.asarray(demand.positive_energy_j) / KWH_J,
            engine_limit_exceeded_s=over_s, accessory_energy_kwh=acc_kwh)

    def steady(self, vehicle, speed_ms, *, ambient_temperature_c=None) -> dict:
        """Consumption at constant speeds on a level road, no wind.

        Returns a dict of (S,) arrays: ``store_per_km`` (L/km, or kg/km for CNG),
        ``fuel_l_per_100km`` (None for CNG), ``fuel_kg_per_100km``, ``range_km``,
        ``gear``, ``engine_speed_rpm``, ``feasible``.
        """
        v = np.asarray(speed_ms, float)
        force = vehicle.resistance().force_n(v)
        op = self.operation(force, v)
        kg_per_km = op["fuel_kg_s"] / v * 1000.0
        out = {"fuel_kg_per_100km": kg_per_km * 100.0, "gear": op["gear"],
               "engine_speed_rpm": rads_to_rpm(op["engine_speed_rads"]),
               "feasible": ~op["over_limit"], "fuel_l_per_100km": None,
               "co2_g_per_km": kg_per_km * self.fuel.co2_kg_per_kg * 1000.0}
        if self.tank_l is not None:
            l_per_km = kg_per_km / self.fuel.density_kg_per_l
            out["fuel_l_per_100km"] = l_per_km * 100.0
            out["store_per_km"] = l_per_km
            out["range_km"] = range_from(self.tank_l, l_per_km)
        else:
            if self.fuel.liquid:
                out["fuel_l_per_100km"] = kg_per_km / self.fuel.density_kg_per_l * 100.0
            out["store_per_km"] = kg_per_km
            out["range_km"] = range_from(self.tank_kg, kg_per_km)
        return out

    def to_dict(self) -> dict:
        out = {"kind": self.kind, "fuel": self.fuel.name, "tank_l": self.tank_l,
               "tank_kg": self.tank_kg, "engine": self.engine.to_dict(),
               "idle_speed_rpm": self.idle_speed_rpm, "rev_limit_rpm": self.rev_limit_rpm,
               "shift_rule": self.shift_rule,
               "upshift_speeds_kmh": [float(ms_to_kmh(s)) for s in self.upshift_speeds_ms]
               or None,
               "fuel_cutoff": self.fuel_cutoff, "engine_off_at_rest": self.engine_off_at_rest,
               "idle_fuel_kg_per_h": plain_number(np.squeeze(self.idle_fuel_rate_kg_s()) * 3600.0),
               "min_pulling_speed_rpm": plain_number(self.pulling_speed_floor_rpm),
               "accessory_power_kw": plain_number(np.asarray(self.accessory_power_w, float) / 1000.0),
               "full_load": None if self.full_load is None else self.full_load.to_dict()}
        out.update(self.gearing.to_dict())
        out["transmission_efficiency"] = out.pop("driveline_efficiency")
        return out


# ---------------------------------------------------------------------------
# parser
# ---------------------------------------------------------------------------

def parse_combustion(sec: Section) -> CombustionPowertrain:
    """Read a ``powertrain`` block with ``kind: combustion`` (keys in the docs).

    The ranges of the keys a study may change are those of
    :attr:`CombustionPowertrain.CHANGEABLE`.
    """
    fuel = get_fuel(sec.string("fuel"), where=lambda m: sec.error(m, "fuel"))
    tank_form = sec.only_one_of(("tank_l",), ("tank_kg",), what="tank size")
    if tank_form is None:
        raise sec.error("give tank_l (liquid fuels) or tank_kg (CNG)")
    tank_l = tank_kg = None
    if tank_form == 0:
        if not fuel.liquid:
            raise sec.error(f"{fuel.name} is stored by mass: give tank_kg", "tank_l")
        tank_l = _number(sec, "tank_l")
    else:
        tank_kg = _number(sec, "tank_kg")
    ratios = parse_gear_ratios(sec)
    gearing = Gearing(ratios, _number(sec, "final_drive_ratio"), _number(sec, "tyre_radius_m"),
                      _number(sec, "transmission_efficiency"))
    idle, rev, pull_min, full_load = _parse_engine_speeds(sec)
    acc_w = 1000.0 * _number(sec, "accessory_power_kw", required=False,
                             default=DEFAULT_ACCESSORY_POWER_W / 1000.0)
    rule, upshift = _parse_shift_rule(sec, ratios)
    cutoff = sec.boolean("fuel_cutoff", default=True)
    off_at_rest = sec.boolean("engine_off_at_rest", default=False)
    engine = _parse_engine_model(sec, fuel)
    idle_kg_s = _parse_idle_fuel(sec, fuel, engine)
    sec.finish(allowed_extra=("kind",))
    return CombustionPowertrain(
        fuel=fuel, engine=engine, gearing=gearing, idle_speed_rpm=idle, rev_limit_rpm=rev,
        shift_rule=rule, upshift_speeds_ms=upshift, fuel_cutoff=cutoff,
        engine_off_at_rest=off_at_rest, idle_fuel_kg_s=idle_kg_s, full_load=full_load,
        tank_l=tank_l, tank_kg=tank_kg, min_pulling_speed_rpm=pull_min,
        accessory_power_w=acc_w)


def _number(sec: Section, key: str, prefix: str = "", **kw):
    """A number read with the range of its entry in :attr:`CombustionPowertrain.CHANGEABLE`
    (``prefix``: the entry of a nested block, e.g. ``willans.``)."""
    fld = CombustionPowertrain.CHANGEABLE[prefix + key]
    return sec.number(key, min=fld.min, max=fld.max, min_inclusive=fld.min_inclusive,
                      unit=fld.unit, **kw)


def _parse_engine_speeds(sec: Section) -> tuple:
    """Idle speed, rev limit, given pulling floor (None for the default) [rpm] and the
    full-load curve, with the rules between them."""
    idle = _number(sec, "idle_speed_rpm")
    full_load = parse_full_load(sec.section("full_load")) if sec.has("full_load") else None
    if full_load is None and not sec.has("rev_limit_rpm"):
        raise sec.error("missing required key (or give full_load, whose last speed is then "
                        "the rev limit)", "rev_limit_rpm")
    default_limit = None if full_load is None else float(full_load.speed_rpm[-1])
    rev = _number(sec, "rev_limit_rpm", required=False, default=default_limit)
    if rev <= idle:
        raise sec.error(f"must be above idle_speed_rpm ({idle:g})", "rev_limit_rpm")
    if full_load is not None and full_load.speed_rpm[0] > idle + 1e-9:
        raise sec.error(f"full_load must start at or below idle_speed_rpm ({idle:g} rpm); "
                        f"it starts at {full_load.speed_rpm[0]:g} rpm", "full_load")
    if not sec.has("min_pulling_speed_rpm"):
        return idle, rev, None, full_load      # default: see pulling_speed_floor_rpm
    pull_min = _number(sec, "min_pulling_speed_rpm")
    if pull_min < idle:
        raise sec.error(f"must be at least idle_speed_rpm ({idle:g} rpm), got {pull_min:g}",
                        "min_pulling_speed_rpm")
    if pull_min >= rev:
        raise sec.error(f"must be below rev_limit_rpm ({rev:g} rpm), got {pull_min:g}",
                        "min_pulling_speed_rpm")
    return idle, rev, pull_min, full_load


def _parse_shift_rule(sec: Section, ratios) -> tuple:
    """Shift rule and upshift speeds [m/s] (empty unless the ``speeds`` rule)."""
    rule = sec.string("shift_rule", required=False, choices=("efficient", "speeds"),
                      default="speeds" if sec.has("upshift_speeds_kmh") else "efficient")
    upshift = ()
    if rule == "speeds":
        if not sec.has("upshift_speeds_kmh") and len(ratios) > 1:
            raise sec.error("missing required key for shift_rule: speeds", "upshift_speeds_kmh")
        if len(ratios) > 1:
            up = sec.numbers("upshift_speeds_kmh", min=0.0, increasing=True, unit="km/h")
            if len(up) != len(ratios) - 1:
                raise sec.error(f"needs one speed per upshift ({len(ratios) - 1} for "
                                f"{len(ratios)} gears), got {len(up)}", "upshift_speeds_kmh")
            # the same km/h factor as every speed trace (units.kmh_to_ms), so that a
            # trace at exactly an upshift speed reaches it
            upshift = tuple(float(kmh_to_ms(u)) for u in up)
    elif sec.has("upshift_speeds_kmh"):
        raise sec.error("is only used with shift_rule: speeds", "upshift_speeds_kmh")
    return rule, upshift


def _parse_engine_model(sec: Section, fuel: Fuel):
    """The ``willans`` or ``bsfc_map`` engine model."""
    model = sec.only_one_of(("willans",), ("bsfc_map",), what="engine model")
    if model is None:
        raise sec.error("give an engine model: willans (marginal efficiency and friction) or "
                        "bsfc_map (brake-specific fuel consumption over speed and torque)")
    if model == 0:
        return _parse_willans(sec.section("willans"), fuel)
    msec = sec.section("bsfc_map")
    bmap = parse_speed_torque_map(msec, "bsfc_g_per_kwh", unit="g/kWh", value_min=100.0,
                                  value_max=5000.0, torque_min=0.0)
    if bmap.torque_nm[0] <= 0:
        raise msec.error("the lowest torque must be above 0 N m (specific consumption is "
                         "not defined at zero torque; the model extends the fuel rate "
                         "there)", "torque_nm")
    return BsfcEngine.from_map(bmap)


def _parse_idle_fuel(sec: Section, fuel: Fuel, engine) -> float | None:
    """Given idle fuel rate [kg/s], or None to take it from the engine model."""
    idle_form = sec.only_one_of(("idle_fuel_l_per_h",), ("idle_fuel_kg_per_h",),
                                what="idle fuel rate")
    idle_kg_s = None
    if idle_form == 0:
        if not fuel.liquid:
            raise sec.error(f"{fuel.name} is measured by mass: give idle_fuel_kg_per_h",
                            "idle_fuel_l_per_h")
        idle_kg_s = _number(sec, "idle_fuel_l_per_h") * fuel.density_kg_per_l / 3600.0
    elif idle_form == 1:
        idle_kg_s = _number(sec, "idle_fuel_kg_per_h") / 3600.0
    if idle_kg_s is None and engine.model == "willans" and engine.friction_power_w is not None:
        raise sec.error("missing: with a constant willans.friction_power_kw give "
                        "idle_fuel_l_per_h or idle_fuel_kg_per_h (friction at idle differs "
                        "from friction while driving)", "idle_fuel_l_per_h")
    return idle_kg_s


def _parse_willans(sec: Section, fuel: Fuel) -> WillansEngine:
    """Read a ``willans`` block (marginal efficiency and one friction form)."""
    e = _number(sec, "marginal_efficiency", "willans.")
    form = sec.only_one_of(("friction_power_kw",), ("friction_mep_kpa", "displacement_l"),
                           what="friction form")
    if form is None:
        raise sec.error("give friction_power_kw, or friction_mep_kpa with displacement_l")
    if form == 0:
        p0 = _number(sec, "friction_power_kw", "willans.") * 1000.0
        sec.finish()
        return WillansEngine(e, fuel.lhv_j_per_kg, friction_power_w=p0)
    pme0 = _number(sec, "friction_mep_kpa", "willans.") * 1000.0
    vd = _number(sec, "displacement_l", "willans.") / 1000.0
    sec.finish()
    return WillansEngine(e, fuel.lhv_j_per_kg, friction_mep_pa=pme0, displacement_m3=vd)


__all__ = ["CombustionPowertrain", "CombustionResult", "WillansEngine", "BsfcEngine",
           "willans_fuel_rate_kg_s", "willans_friction_power_w", "parse_combustion"]
