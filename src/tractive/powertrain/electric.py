"""Battery-electric powertrain: from wheel power to battery and wall energy.

Per interval of a profile (wheel force F [N] at mean speed v [m/s], wheel
power P = F·v, duration Δt) the battery supplies or receives

* traction (P > 0): P_bat = P / η_drive with a constant battery-to-wheel
  efficiency, or P_bat = P / (η_gear · η_motor(n, T)) with a motor-plus-inverter
  efficiency map looked up bilinearly at motor speed n = v·i/r and motor torque
  T = F·r / (i·η_gear) (i: reduction ratio, r: tyre radius);
* braking (P < 0): of the braking power −P, the share s the driven axle can
  take (``recoverable_share``), faded linearly to zero below the fade speed
  v_f (factor min(1, v/v_f)), is turned into battery power with the
  regeneration efficiency η_regen (or η_gear · η_motor from the map, the map
  read at the generating torque), then capped at the charging power limit;
* auxiliaries: a constant power, or a power interpolated over ambient
  temperature (heating at low, cooling at high temperature), drawn from the
  battery during the whole profile, standing still included.

Battery energy = Σ P_bat,traction Δt − Σ P_regen Δt + P_aux · Σ Δt.
Wall energy = battery energy / η_charge. Range = usable energy / battery
energy per km.

This is the backward-facing (demand-driven, "quasi-static") method: the profile
is followed exactly and the powertrain is asked what the demand costs.

References
----------
.. [1] L. Guzzella, A. Sciarretta, *Vehicle Propulsion Systems*, 3rd ed.,
   Springer 2013, ch. 2 (quasi-static backward simulation) and §4.1
   (electric motors, efficiency maps).
.. [2] M. Ehsani, Y. Gao, S. Longo, K. Ebrahimi, *Modern Electric, Hybrid
   Electric, and Fuel Cell Vehicles*, 3rd ed., CRC Press 2018, ch. 14
   (regenerative braking: front/rear braking force distribution and the
   share recoverable by the driven axle).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..spec import Section
from ..units import KMH_MS, KWH_J
from ..plain import plain_number
from ._common import STANDSTILL_MS, col, range_from, safe_divide, sustained_seconds
from .base import ParamField
from .drive import MotorEnvelope, motor_fields, parse_motor, rads_to_rpm
from .maps import SpeedTorqueMap, parse_speed_torque_map


@dataclass(frozen=True)
class Regeneration:
    """Regenerative braking parameters.

    Attributes
    ----------
    efficiency : float or None
        Wheel-to-battery efficiency of regeneration [-]; None to read the
        motor map at the generating torque (times the gear efficiency).
    max_power_w : float
        Largest charging power into the battery [W] (``inf`` for no limit).
    fade_below_ms : float
        Below this speed [m/s] regeneration fades linearly to zero at standstill.
    recoverable_share : float
        Share of the braking power the driven axle can recover [-] (the rest
        goes to the friction brakes).
    """

    efficiency: float | None
    max_power_w: float
    fade_below_ms: float
    recoverable_share: float

    def to_dict(self) -> dict:
        return {"efficiency": self.efficiency,
                "max_power_kw": None if not np.isfinite(self.max_power_w)
                else self.max_power_w / 1000.0,
                "fade_below_kmh": self.fade_below_ms / KMH_MS,
                "recoverable_share": self.recoverable_share}


@dataclass(frozen=True)
class ElectricResult:
    """Battery and wall energy of an electric vehicle on one profile.

    Values are floats, or arrays of shape (N,) for a vehicle axis.

    Attributes
    ----------
    profile : str
    distance_km : float
    duration_s : float
    traction_energy_kwh : battery energy spent on traction [kWh]
    regenerated_energy_kwh : energy returned to the battery by braking [kWh]
    auxiliary_energy_kwh : battery energy of the auxiliaries [kWh]
    battery_energy_kwh : net battery energy [kWh] (traction − regenerated + auxiliary)
    wall_energy_kwh : energy from the wall to recharge it [kWh] (None without a
        charging efficiency)
    usable_battery_kwh : usable battery energy [kWh]
    auxiliary_power_kw : auxiliary power drawn over the whole profile [kW]
    motor_limit_exceeded_s : time the profile asks more than the motor's peak
        envelope [s] (None when no motor is given)
    """

    profile: str
    distance_km: float
    duration_s: float
    traction_energy_kwh: object
    regenerated_energy_kwh: object
    auxiliary_energy_kwh: object
    battery_energy_kwh: object
    wall_energy_kwh: object
    usable_battery_kwh: object
    auxiliary_power_kw: object
    motor_limit_exceeded_s: object = None

    kind = "electric"

    @property
    def battery_wh_per_km(self):
        """Battery energy per distance [Wh/km] (NaN for a profile without distance)."""
        return safe_divide(np.asarray(self.battery_energy_kwh) * 1000.0, self.distance_km)

    @property
    def wall_wh_per_km(self):
        if self.wall_energy_kwh is None:
            return None
        return safe_divide(np.asarray(self.wall_energy_kwh) * 1000.0, self.distance_km)

    @property
    def range_km(self):
        """Usable battery energy / battery energy per km [km] (inf if none is used)."""
        return range_from(self.usable_battery_kwh,
                          safe_divide(self.battery_energy_kwh, self.distance_km))

    # for mixing profiles (see tractive.powertrain.mix)
    @property
    def store_used(self):
        """Battery energy [kWh] (the quantity drawn from the energy store)."""
        return self.battery_energy_kwh

    @property
    def store_size(self):
        return self.usable_battery_kwh

    def to_dict(self) -> dict:
        return {
            "powertrain": self.kind,
            "battery_energy_kwh": plain_number(self.battery_energy_kwh),
            "battery_wh_per_km": plain_number(self.battery_wh_per_km),
            "range_km": plain_number(self.range_km),
            "traction_battery_energy_kwh": plain_number(self.traction_energy_kwh),
            "regenerated_energy_kwh": plain_number(self.regenerated_energy_kwh),
            "auxiliary_energy_kwh": plain_number(self.auxiliary_energy_kwh),
            "auxiliary_power_kw": plain_number(self.auxiliary_power_kw),
            "wall_energy_kwh": plain_number(self.wall_energy_kwh),
            "wall_wh_per_km": plain_number(self.wall_wh_per_km),
            "usable_battery_kwh": plain_number(self.usable_battery_kwh),
            "motor_limit_exceeded_s": plain_number(self.motor_limit_exceeded_s),
        }


@dataclass(frozen=True)
class ElectricPowertrain:
    """A battery-electric powertrain (see module docstring for the model).

    Attributes
    ----------
    battery_usable_kwh : float
        Usable battery energy [kWh].
    drive_efficiency : float or None
        Constant battery-to-wheel efficiency in traction [-]; None with a map.
    efficiency_map : SpeedTorqueMap or None
        Motor-plus-inverter efficiency [-] over motor speed [rpm] and torque [N m].
    gear_ratio : float or None
        Motor revolutions per wheel revolution [-].
    gear_efficiency : float or None
        Mechanical efficiency motor shaft to wheels [-].
    tyre_radius_m : float or None
        Dynamic rolling radius [m].
    motor : MotorEnvelope or None
        Peak envelope (limits and performance).
    regen : Regeneration or None
        None for no regenerative braking.
    auxiliary_power_w : float or None
        Constant auxiliary power [W].
    auxiliary_temperature_c, auxiliary_power_table_w : arrays or None
        Auxiliary power [W] over ambient temperature [°C] (linear, held at the ends).
    ambient_temperature_c : float or None
        Ambient temperature [°C] for the auxiliary table.
    charger_efficiency : float or None
        Wall-to-battery charging efficiency [-].
    """

    battery_usable_kwh: object
    drive_efficiency: object = None
    efficiency_map: SpeedTorqueMap | None = None
    gear_ratio: float | None = None
    gear_efficiency: object = None
    tyre_radius_m: float | None = None
    motor: MotorEnvelope | None = None
    regen: Regeneration | None = None
    auxiliary_power_w: object = None
    auxiliary_temperature_c: np.ndarray | None = None
    auxiliary_power_table_w: np.ndarray | None = None
    ambient_temperature_c: float | None = None
    charger_efficiency: object = None

    kind = "electric"

    #: vehicle-file keys a study may change (see :class:`tractive.powertrain.base.ParamField`)
    CHANGEABLE: ClassVar[dict] = {
        "battery_usable_kwh": ParamField(("battery_usable_kwh",), "kWh", min=0.0,
                                         min_inclusive=False, max=5000.0,
                                         uncertain=(1e-9, math.inf)),
        "drive_efficiency": ParamField(("drive_efficiency",), min=0.0, min_inclusive=False,
                                       max=1.0, uncertain=(1e-6, 1.0)),
        "gear_ratio": ParamField(("gear_ratio",), min=0.0, min_inclusive=False, max=50.0),
        "tyre_radius_m": ParamField(("tyre_radius_m",), "m", min=0.1, max=1.5),
        "gear_efficiency": ParamField(("gear_efficiency",), min=0.5, max=1.0,
                                      uncertain=(1e-6, 1.0)),
        "auxiliary_power_kw": ParamField(("auxiliary_power_w",), "kW", scale=1000.0, min=0.0,
                                         max=100.0, uncertain=(0.0, math.inf)),
        "ambient_temperature_c": ParamField(("ambient_temperature_c",), "°C", min=-60.0,
                                            max=60.0),
        "charger_efficiency": ParamField(("charger_efficiency",), min=0.0, min_inclusive=False,
                                         max=1.0, uncertain=(1e-6, 1.0), optional=True),
        "regen.efficiency": ParamField(("regen", "efficiency"), min=0.0, max=1.0,
                                       uncertain=(0.0, 1.0)),
        "regen.max_power_kw": ParamField(("regen", "max_power_w"), "kW", scale=1000.0,
                                         min=0.0, max=5000.0, optional=True),
        "regen.fade_below_kmh": ParamField(("regen", "fade_below_ms"), "km/h", scale=KMH_MS,
                                           min=0.0, max=60.0),
        "regen.recoverable_share": ParamField(("regen", "recoverable_share"), min=0.0,
                                              max=1.0, uncertain=(0.0, 1.0)),
        **motor_fields(),
    }

    def check_changed(self):
        """(key, message) of a rule between values that a change breaks, else None."""
        if self.motor is not None:
            bad = self.motor.check_changed()
            if bad:
                return ("motor." + bad[0], bad[1])
        return None

    # -- pieces of the model ------------------------------------------------
    def auxiliary_power(self, ambient_temperature_c=None):
        """Auxiliary power [W] at ambient temperature [°C] (constant or from the table)."""
        if self.auxiliary_power_table_w is None:
            return np.asarray(self.auxiliary_power_w, float)
        t = self.ambient_temperature_c if ambient_temperature_c is None else ambient_temperature_c
        return np.interp(np.asarray(t, float), self.auxiliary_temperature_c,
                         self.auxiliary_power_table_w)

    def battery_power_w(self, force_n, speed_ms) -> dict:
        """Battery power per interval, without auxiliaries.

        Parameters
        ----------
        force_n : array (T,) or (N, T)
            Wheel force [N] (negative when braking).
        speed_ms : array (T,)
            Mean speed [m/s].

        Returns
        -------
        dict with ``traction_w`` (≥ 0, drawn), ``regen_w`` (≥ 0, returned),
        ``braking_w`` (≥ 0, braking power at the wheels) and ``over_limit``
        (bool: the demand exceeds the motor envelope).
        """
        f = np.asarray(force_n, float)
        v = np.asarray(speed_ms, float)
        f, v = np.broadcast_arrays(f, v)
        p = f * v
        pull = np.maximum(p, 0.0)
        braking = np.maximum(-p, 0.0)
        over = np.zeros(p.shape, bool)
        motor_w = None
        if self.gear_ratio is not None and self.tyre_radius_m is not None:
            motor_w = v * self.gear_ratio / self.tyre_radius_m
        if self.efficiency_map is None:
            traction = pull / col(self.drive_efficiency)
        else:
            eta_g = col(self.gear_efficiency)
            torque = np.maximum(f, 0.0) * self.tyre_radius_m / (self.gear_ratio * eta_g)
            eta_m = self.efficiency_map(rads_to_rpm(motor_w), torque)
            traction = pull / (eta_g * eta_m)
        if self.motor is not None and motor_w is not None:
            t_need = np.maximum(f, 0.0) * self.tyre_radius_m / self.gear_ratio
            if self.gear_efficiency is not None:
                t_need = t_need / col(self.gear_efficiency)
            t_max = self.motor.max_torque_nm(motor_w)
            over = (p > 0) & (t_need > t_max * (1 + 1e-9))
        regen = np.zeros(p.shape)
        if self.regen is not None:
            rg = self.regen
            vf = col(rg.fade_below_ms)
            with np.errstate(divide="ignore", invalid="ignore"):
                fade = np.where(vf > 0, np.clip(v / np.where(vf > 0, vf, 1.0), 0.0, 1.0),
                                np.where(v > STANDSTILL_MS, 1.0, 0.0))
            recoverable = col(rg.recoverable_share) * fade * braking
            if self.motor is not None and motor_w is not None:
                # the motor cannot absorb more than its peak envelope
                eg = 1.0 if self.gear_efficiency is None else col(self.gear_efficiency)
                cap = self.motor.max_torque_nm(motor_w) * motor_w / eg
                recoverable = np.minimum(recoverable, cap)
            if rg.efficiency is not None:
                regen = col(rg.efficiency) * recoverable
            else:
                eta_g = col(self.gear_efficiency)
                torque = recoverable * eta_g / np.maximum(motor_w, 1e-12)
                eta_m = self.efficiency_map(rads_to_rpm(motor_w), torque)
                regen = recoverable * eta_g * eta_m
            regen = np.minimum(regen, col(rg.max_power_w))
        return {"traction_w": traction, "regen_w": regen, "braking_w": braking,
                "over_limit": over}

    # -- energy on a profile ------------------------------------------------
    def consume(self, vehicle, demand, profile=None, *, ambient_temperature_c=None
                ) -> ElectricResult:
        """Battery and wall energy on one profile.

        Parameters
        ----------
        vehicle : Vehicle
            Unused beyond the demand (kept for a uniform interface).
        demand : WheelDemand
            Wheel force per interval, shape (T-1,) or (N, T-1).
        profile : Profile, optional
            Only its name is used.
        ambient_temperature_c : float, optional
            Overrides ``ambient_temperature_c`` for the auxiliary table [°C].
        """
        iv = demand.intervals
        dt = np.asarray(iv.dt_s, float)
        parts = self.battery_power_w(demand.force_n, iv.speed_ms)
        traction_j = np.sum(parts["traction_w"] * dt, axis=-1)
        regen_j = np.sum(parts["regen_w"] * dt, axis=-1)
        duration = float(np.sum(dt))
        p_aux = self.auxiliary_power(ambient_temperature_c)
        aux_j = p_aux * duration * np.ones_like(traction_j)
        battery_j = traction_j - regen_j + aux_j
        wall = None
        if self.charger_efficiency is not None:
            wall = battery_j / KWH_J / np.asarray(self.charger_efficiency, float)
        over_s = None
        if self.motor is not None and self.gear_ratio is not None:
            over_s = sustained_seconds(parts["over_limit"], dt)
        name = getattr(profile, "name", None) or demand.profile
        return ElectricResult(
            profile=name, distance_km=demand.distance_m / 1000.0, duration_s=duration,
            traction_energy_kwh=traction_j / KWH_J, regenerated_energy_kwh=regen_j / KWH_J,
            auxiliary_energy_kwh=aux_j / KWH_J, battery_energy_kwh=battery_j / KWH_J,
            wall_energy_kwh=wall, usable_battery_kwh=np.asarray(self.battery_usable_kwh, float),
            auxiliary_power_kw=p_aux / 1000.0, motor_limit_exceeded_s=over_s)

    def steady(self, vehicle, speed_ms, *, ambient_temperature_c=None) -> dict:
        """Consumption at constant speeds on a level road, no wind.

        Parameters
        ----------
        vehicle : Vehicle
        speed_ms : (S,) array
            Speeds [m/s], all > 0.

        Returns
        -------
        dict of (S,) arrays: ``store_per_km`` [kWh/km at the battery],
        ``battery_wh_per_km``, ``wall_wh_per_km`` (or None), ``range_km``,
        ``feasible`` (within the motor envelope), ``power_kw`` (battery).
        """
        v = np.asarray(speed_ms, float)
        force = vehicle.resistance().force_n(v)
        parts = self.battery_power_w(force, v)
        p_bat = parts["traction_w"] - parts["regen_w"] + self.auxiliary_power(
            ambient_temperature_c)
        kwh_per_km = p_bat / v / KWH_J * 1000.0
        out = {"store_per_km": kwh_per_km, "battery_wh_per_km": kwh_per_km * 1000.0,
               "wall_wh_per_km": None, "range_km": range_from(self.battery_usable_kwh,
                                                              kwh_per_km),
               "feasible": ~parts["over_limit"], "power_kw": p_bat / 1000.0}
        if self.motor is not None and self.gear_ratio is not None:
            over_speed = v * self.gear_ratio / self.tyre_radius_m > self.motor.max_speed_rads
            out["feasible"] = out["feasible"] & ~over_speed
        if self.charger_efficiency is not None:
            out["wall_wh_per_km"] = out["battery_wh_per_km"] / self.charger_efficiency
        return out

    def to_dict(self) -> dict:
        out = {"kind": self.kind, "battery_usable_kwh": plain_number(self.battery_usable_kwh),
               "drive_efficiency": plain_number(self.drive_efficiency),
               "efficiency_map": None if self.efficiency_map is None
               else self.efficiency_map.to_dict(),
               "gear_ratio": self.gear_ratio, "gear_efficiency": plain_number(self.gear_efficiency),
               "tyre_radius_m": self.tyre_radius_m,
               "motor": None if self.motor is None else self.motor.to_dict(),
               "regen": None if self.regen is None else self.regen.to_dict(),
               "charger_efficiency": plain_number(self.charger_efficiency)}
        if self.auxiliary_power_table_w is None:
            out["auxiliary_power_kw"] = plain_number(np.asarray(self.auxiliary_power_w) / 1000.0)
        else:
            out["auxiliary_power_by_temperature"] = {
                "temperature_c": self.auxiliary_temperature_c.tolist(),
                "power_kw": (self.auxiliary_power_table_w / 1000.0).tolist()}
            out["ambient_temperature_c"] = self.ambient_temperature_c
        return out


# ---------------------------------------------------------------------------
# parser
# ---------------------------------------------------------------------------

def parse_electric(sec: Section) -> ElectricPowertrain:
    """Read a ``powertrain`` block with ``kind: electric`` (keys in the docs)."""
    usable = _number(sec, "battery_usable_kwh")
    form = sec.only_one_of(("drive_efficiency",), ("efficiency_map",),
                           what="drive efficiency (drive_efficiency or efficiency_map)")
    if form is None:
        raise sec.error("give drive_efficiency (constant, battery to wheel) or efficiency_map "
                        "(motor plus inverter over speed and torque)")
    drive_eff = None
    emap = None
    if form == 0:
        drive_eff = _number(sec, "drive_efficiency")
    else:
        emap = parse_speed_torque_map(sec.section("efficiency_map"), "efficiency", unit="",
                                      value_min=0.0, value_min_inclusive=False, value_max=1.0,
                                      torque_min=0.0)
    motor = parse_motor(sec.section("motor")) if sec.has("motor") else None
    needs_gearing = emap is not None or motor is not None
    why = "an efficiency_map" if emap is not None else "a motor"
    if needs_gearing:
        for k in ("gear_ratio", "tyre_radius_m"):
            if not sec.has(k):
                raise sec.error(f"missing required key (needed with {why} to turn wheel "
                                "speed and force into motor speed and torque)", k)
    ratio = _number(sec, "gear_ratio", required=False)
    radius = _number(sec, "tyre_radius_m", required=False)
    if emap is not None and not sec.has("gear_efficiency"):
        raise sec.error("missing required key (needed with an efficiency_map: the map covers "
                        "motor and inverter only)", "gear_efficiency")
    gear_eff = _number(sec, "gear_efficiency", required=False)
    regen = None
    if sec.has("regen"):
        regen = _parse_regen(sec.section("regen"), with_map=emap is not None)
    aux_form = sec.only_one_of(("auxiliary_power_kw",), ("auxiliary_power_by_temperature",),
                               what="auxiliary load")
    if aux_form is None:
        raise sec.error("give auxiliary_power_kw (0 for none) or "
                        "auxiliary_power_by_temperature with ambient_temperature_c")
    aux_w = None
    aux_t = aux_p = None
    ambient = None
    if aux_form == 0:
        aux_w = 1000.0 * sec.number("auxiliary_power_kw", min=0.0, max=100.0, unit="kW")
        if sec.has("ambient_temperature_c"):
            raise sec.error("is only used with auxiliary_power_by_temperature",
                            "ambient_temperature_c")
    else:
        tsec = sec.section("auxiliary_power_by_temperature")
        aux_t = tsec.numbers("temperature_c", min_length=2, min=-60.0, max=60.0,
                             increasing=True, unit="°C")
        aux_p = 1000.0 * tsec.numbers("power_kw", min_length=2, min=0.0, max=100.0, unit="kW")
        if len(aux_p) != len(aux_t):
            raise tsec.error(f"needs one value per temperature_c value ({len(aux_t)}), got "
                             f"{len(aux_p)}", "power_kw")
        tsec.finish()
        ambient = sec.number("ambient_temperature_c", min=-60.0, max=60.0, unit="°C")
    charger = _number(sec, "charger_efficiency", required=False)
    sec.finish(allowed_extra=("kind",))
    return ElectricPowertrain(
        battery_usable_kwh=usable, drive_efficiency=drive_eff, efficiency_map=emap,
        gear_ratio=ratio, gear_efficiency=gear_eff, tyre_radius_m=radius, motor=motor,
        regen=regen, auxiliary_power_w=aux_w, auxiliary_temperature_c=aux_t,
        auxiliary_power_table_w=aux_p, ambient_temperature_c=ambient,
        charger_efficiency=charger)


def _number(sec: Section, key: str, *, required: bool = True, table_key: str | None = None):
    """A number read with the range of its entry in :attr:`ElectricPowertrain.CHANGEABLE`."""
    fld = ElectricPowertrain.CHANGEABLE[table_key or key]
    return sec.number(key, required=required, min=fld.min, max=fld.max,
                      min_inclusive=fld.min_inclusive, unit=fld.unit)


def _parse_regen(sec: Section, *, with_map: bool) -> Regeneration:
    if with_map:
        eff = sec.number("efficiency", required=False, min=0.0, max=1.0)
    else:
        if not sec.has("efficiency"):
            raise sec.error("missing required key (wheel-to-battery efficiency of "
                            "regeneration; only optional with an efficiency_map)", "efficiency")
        eff = sec.number("efficiency", min=0.0, max=1.0)
    pmax = sec.number("max_power_kw", required=False, min=0.0, max=5000.0, unit="kW")
    fade = sec.number("fade_below_kmh", min=0.0, max=60.0, unit="km/h")
    share = sec.number("recoverable_share", min=0.0, max=1.0)
    sec.finish()
    return Regeneration(eff, np.inf if pmax is None else pmax * 1000.0, fade * KMH_MS, share)
