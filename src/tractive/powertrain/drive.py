"""Driveline data shared by the energy models and the performance model.

* :class:`Gearing` — gear ratios, final drive, tyre radius and driveline
  efficiency; maps vehicle speed to shaft speed and wheel force to shaft torque.
* :class:`FullLoadCurve` — an engine's maximum torque over engine speed, given
  as a table of torque or of power (linear interpolation in the quantity given).
* :class:`MotorEnvelope` — an electric machine's peak envelope: constant
  torque up to the base speed, constant power above it, optionally a speed
  limit.

Kinematics (rigid tyre, no slip): shaft speed ω = v · i / r and wheel force
F = T · i · η / r for a shaft torque T driving through total ratio i and
efficiency η (Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 2,
"Power-limited acceleration").

References
----------
.. [1] T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE, 1992, ch. 2.
.. [2] L. Guzzella, A. Sciarretta, *Vehicle Propulsion Systems*, 3rd ed.,
   Springer 2013, §4.1 (electric motors: constant-torque and constant-power
   regions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ..limits import MAX_SHAFT_SPEED_RPM
from ..spec import Section

RPM_RADS = 2.0 * math.pi / 60.0
"""One revolution per minute in rad/s (exact)."""


def rads_to_rpm(speed_rads):
    """Shaft speed [rad/s] → [rpm]."""
    return np.asarray(speed_rads, float) / RPM_RADS


@dataclass(frozen=True)
class Gearing:
    """Gear ratios, final drive, tyre radius and driveline efficiency.

    Attributes
    ----------
    gear_ratios : tuple of float
        Gearbox ratios, first gear first [-] (one entry for a single reduction).
    final_drive_ratio : float
        Final drive (axle) ratio [-]; 1 when ``gear_ratios`` are overall ratios.
    tyre_radius_m : float
        Dynamic rolling radius of the driven tyres [m].
    efficiency : float
        Mechanical efficiency from the engine or motor shaft to the wheels [-].
    """

    gear_ratios: tuple
    final_drive_ratio: float
    tyre_radius_m: float
    efficiency: float

    @property
    def n_gears(self) -> int:
        return len(self.gear_ratios)

    @property
    def overall_ratios(self) -> np.ndarray:
        """Total ratio shaft-to-wheel of every gear [-]."""
        return np.asarray(self.gear_ratios, float) * self.final_drive_ratio

    def to_dict(self) -> dict:
        return {"gear_ratios": list(self.gear_ratios), "final_drive_ratio": self.final_drive_ratio,
                "tyre_radius_m": self.tyre_radius_m, "driveline_efficiency": self.efficiency}


@dataclass(frozen=True)
class FullLoadCurve:
    """Maximum engine torque over engine speed.

    Attributes
    ----------
    speed_rpm : (K,) array
        Strictly increasing engine speeds [rpm].
    values : (K,) array
        Torque [N m] (``quantity == "torque"``) or power [W] (``"power"``).
    quantity : str
        ``"torque"`` or ``"power"``: the quantity interpolated linearly.
    """

    speed_rpm: np.ndarray
    values: np.ndarray
    quantity: str

    @property
    def min_speed_rads(self) -> float:
        return float(self.speed_rpm[0]) * RPM_RADS

    @property
    def max_speed_rads(self) -> float:
        return float(self.speed_rpm[-1]) * RPM_RADS

    def max_torque_nm(self, speed_rads):
        """Full-load torque [N m] at engine speed [rad/s]; 0 outside the table."""
        w = np.asarray(speed_rads, float)
        n = w / RPM_RADS
        inside = (n >= self.speed_rpm[0] - 1e-9) & (n <= self.speed_rpm[-1] + 1e-9)
        if self.quantity == "torque":
            t = np.interp(n, self.speed_rpm, self.values)
        else:
            p = np.interp(n, self.speed_rpm, self.values)
            t = p / np.maximum(w, 1e-12)
        return np.where(inside, t, 0.0)

    def max_power_w(self):
        """Peak power [W] and the speed where it occurs [rpm] (on a fine grid)."""
        n = np.linspace(self.speed_rpm[0], self.speed_rpm[-1], 4001)
        p = self.max_torque_nm(n * RPM_RADS) * n * RPM_RADS
        k = int(np.argmax(p))
        return float(p[k]), float(n[k])

    def peak_torque(self):
        """Peak torque [N m] and its speed [rpm] (on a fine grid)."""
        n = np.linspace(self.speed_rpm[0], self.speed_rpm[-1], 4001)
        t = self.max_torque_nm(n * RPM_RADS)
        k = int(np.argmax(t))
        return float(t[k]), float(n[k])

    def to_dict(self) -> dict:
        out = {"speed_rpm": self.speed_rpm.tolist()}
        if self.quantity == "torque":
            out["torque_nm"] = self.values.tolist()
        else:
            out["power_kw"] = (self.values / 1000.0).tolist()
        p, n = self.max_power_w()
        out["peak_power_kw"] = p / 1000.0
        out["peak_power_speed_rpm"] = n
        return out


@dataclass(frozen=True)
class MotorEnvelope:
    """Peak envelope of an electric machine [2].

    T_max(ω) = T_peak for ω ≤ ω_base and P_peak / ω above it, where
    ω_base = P_peak / T_peak; zero above the speed limit (if any).

    Attributes
    ----------
    peak_power_w : float
        Peak shaft power [W].
    peak_torque_nm : float
        Peak shaft torque [N m].
    max_speed_rpm : float or None
        Speed limit [rpm]; None for no limit.
    """

    peak_power_w: float
    peak_torque_nm: float
    max_speed_rpm: float | None = None
    #: the two of peak_power_kw, peak_torque_nm, base_speed_rpm the file gives (a change
    #: to one of them holds the other fixed, as the file states them)
    given: tuple = field(default=("peak_power_kw", "peak_torque_nm"), compare=False)

    def key_value(self, key: str):
        """A vehicle-file key of the envelope [its unit]; None when the file does not give it."""
        values = {"peak_power_kw": self.peak_power_w / 1000.0,
                  "peak_torque_nm": self.peak_torque_nm, "base_speed_rpm": self.base_speed_rpm,
                  "max_speed_rpm": self.max_speed_rpm}
        return values[key] if key in self.given or key == "max_speed_rpm" else None

    def with_key(self, key: str, value: float) -> "MotorEnvelope":
        """The envelope with one key of the file changed; the other given key is held."""
        if key == "max_speed_rpm":
            return replace(self, max_speed_rpm=float(value))
        keys = {k: self.key_value(k) for k in self.given}
        keys[key] = float(value)
        p, t, nb = (keys.get(k) for k in ("peak_power_kw", "peak_torque_nm", "base_speed_rpm"))
        if p is None:
            p = t * nb * RPM_RADS / 1000.0
        elif t is None:
            t = p * 1000.0 / (nb * RPM_RADS)
        return MotorEnvelope(p * 1000.0, t, self.max_speed_rpm, self.given)

    def check_changed(self):
        """(key, message) of a rule between values that a change breaks, else None."""
        if self.max_speed_rpm is not None and self.max_speed_rpm < self.base_speed_rpm:
            return ("max_speed_rpm", f"is below the base speed {self.base_speed_rpm:.0f} rpm "
                    "(peak power / peak torque)")
        return None

    @property
    def base_speed_rads(self) -> float:
        return self.peak_power_w / self.peak_torque_nm

    @property
    def base_speed_rpm(self) -> float:
        return self.base_speed_rads / RPM_RADS

    @property
    def max_speed_rads(self) -> float:
        return math.inf if self.max_speed_rpm is None else self.max_speed_rpm * RPM_RADS

    def max_torque_nm(self, speed_rads):
        """Peak torque [N m] available at shaft speed [rad/s] (either direction)."""
        w = np.abs(np.asarray(speed_rads, float))
        t = np.minimum(self.peak_torque_nm, self.peak_power_w / np.maximum(w, 1e-12))
        return np.where(w <= self.max_speed_rads * (1 + 1e-12), t, 0.0)

    def to_dict(self) -> dict:
        return {"peak_power_kw": self.peak_power_w / 1000.0, "peak_torque_nm": self.peak_torque_nm,
                "base_speed_rpm": self.base_speed_rpm, "max_speed_rpm": self.max_speed_rpm}


# ---------------------------------------------------------------------------
# parsers
# ---------------------------------------------------------------------------

def parse_full_load(sec: Section) -> FullLoadCurve:
    """Read ``{speed_rpm: [...], torque_nm: [...]}`` or ``{speed_rpm, power_kw}``."""
    speed = sec.numbers("speed_rpm", min_length=2, min=0.0, increasing=True, unit="rpm")
    form = sec.only_one_of(("torque_nm",), ("power_kw",), what="full-load quantity "
                           "(torque_nm or power_kw)")
    if form is None:
        raise sec.error("give torque_nm or power_kw, one value per speed_rpm value")
    key = ("torque_nm", "power_kw")[form]
    values = sec.numbers(key, min_length=2, min=0.0, unit=("N m", "kW")[form])
    if len(values) != len(speed):
        raise sec.error(f"needs one value per speed_rpm value ({len(speed)}), got "
                        f"{len(values)}", key)
    if not np.any(values > 0):
        raise sec.error("must contain a positive value", key)
    if speed[0] <= 0:
        raise sec.error("engine speeds must be positive (the lowest is the lowest speed the "
                        "engine pulls at)", "speed_rpm")
    sec.finish()
    if form == 0:
        return FullLoadCurve(speed, values, "torque")
    return FullLoadCurve(speed, values * 1000.0, "power")


def parse_motor(sec: Section) -> MotorEnvelope:
    """Read ``{peak_power_kw, peak_torque_nm, base_speed_rpm, max_speed_rpm}``:
    exactly two of the first three, the speed limit optional."""
    given = [k for k in ("peak_power_kw", "peak_torque_nm", "base_speed_rpm") if sec.has(k)]
    if len(given) != 2:
        raise sec.error("give exactly two of peak_power_kw, peak_torque_nm and base_speed_rpm "
                        f"(base speed = peak power / peak torque); got {len(given)}")
    p = sec.number("peak_power_kw", required=False, **MOTOR_LIMITS["peak_power_kw"])
    t = sec.number("peak_torque_nm", required=False, **MOTOR_LIMITS["peak_torque_nm"])
    nb = sec.number("base_speed_rpm", required=False, **MOTOR_LIMITS["base_speed_rpm"])
    nmax = sec.number("max_speed_rpm", required=False, **MOTOR_LIMITS["max_speed_rpm"])
    sec.finish()
    if p is None:
        p = t * nb * RPM_RADS / 1000.0
    elif t is None:
        t = p * 1000.0 / (nb * RPM_RADS)
    env = MotorEnvelope(p * 1000.0, t, nmax, tuple(given))
    if nmax is not None and nmax < env.base_speed_rpm:
        raise sec.error(f"is below the base speed {env.base_speed_rpm:.0f} rpm "
                        "(peak power / peak torque)", "max_speed_rpm")
    return env


#: ranges the parser accepts for the motor keys (shared with the study's change tables)
MOTOR_LIMITS = {"peak_power_kw": dict(min=0.0, min_inclusive=False, max=5000.0, unit="kW"),
                "peak_torque_nm": dict(min=0.0, min_inclusive=False, max=50000.0, unit="N m"),
                "base_speed_rpm": dict(min=0.0, min_inclusive=False, max=MAX_SHAFT_SPEED_RPM,
                                       unit="rpm"),
                "max_speed_rpm": dict(min=0.0, min_inclusive=False, max=MAX_SHAFT_SPEED_RPM,
                                      unit="rpm")}


def motor_fields(attr: str = "motor") -> dict:
    """Change-table entries ``motor.<key>`` for a model holding a :class:`MotorEnvelope`
    at attribute ``attr`` (see :class:`tractive.powertrain.base.ParamField`)."""
    from .base import ParamField

    def entry(key):
        def setter(obj, x):
            return replace(obj, **{attr: getattr(obj, attr).with_key(key, x)})

        def available(obj):
            motor = getattr(obj, attr)
            return motor is not None and (key == "max_speed_rpm" or key in motor.given)

        return ParamField((attr,), setter=setter, available=available,
                          from_model=lambda obj, motor: motor.key_value(key),
                          optional=key == "max_speed_rpm", **MOTOR_LIMITS[key])

    return {f"motor.{k}": entry(k) for k in MOTOR_LIMITS}


def parse_gear_ratios(sec: Section, key: str = "gear_ratios"):
    """A list of gear ratios, first gear first, strictly decreasing, each > 0."""
    ratios = sec.numbers(key, min_length=1, min=0.0, unit="")
    if np.any(ratios <= 0):
        raise sec.error("every ratio must be positive", key)
    if np.any(np.diff(ratios) >= 0):
        raise sec.error("ratios must fall from first gear to top gear", key)
    return tuple(float(r) for r in ratios)
